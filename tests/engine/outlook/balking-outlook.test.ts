import { describe, expect, it } from "vitest";
import { balkingOutlook } from "../../../app/engine/balking-outlook";
import { solveScenario } from "../../../app/engine/solve-scenario";
import { threeSiteScenario } from "./outlook-support";

describe("balking outlook: the run's figures regrouped", () => {
  const scenario = threeSiteScenario();
  const result = solveScenario(scenario);

  it("total balking per rule equals the result's balked per week summed over lines", () => {
    for (const rule of ["choice", "optimum", "nearest"] as const) {
      const outlook = balkingOutlook(scenario, result, { rule });
      const expected = Object.values(result.lines).reduce((total, line) => total + line.rules[rule]!.balkedPerWeek, 0);
      expect(outlook.totalBalkedPerWeek).toBeCloseTo(expected, 12);
      expect(outlook.byPracticeAndLine).toHaveLength(3 * 2);
    }
  });

  it("by deprivation decile on one line it repeats the engine's equity table", () => {
    const outlook = balkingOutlook(scenario, result, { rule: "choice", lines: ["ortho"] });
    const equity = result.lines.ortho.rules.choice!.equity.byDeprivationDecile;
    expect(outlook.byDecile.map((row) => row.decile)).toEqual(equity.map((row) => row.decile));
    outlook.byDecile.forEach((row, index) => {
      expect(row.balkedPerWeek).toBeCloseTo(equity[index].balkedPerWeek, 12);
      expect(row.demandPerWeek).toBeCloseTo(equity[index].demandPerWeek, 12);
      expect(row.meanKm ?? NaN).toBeCloseTo(equity[index].meanKm ?? NaN, 9);
    });
  });

  it("ranks practices by mean km and by share balked, largest first", () => {
    const outlook = balkingOutlook(scenario, result, { rule: "nearest", top: 2 });
    expect(outlook.furthest).toHaveLength(2);
    expect((outlook.furthest[0].meanKm as number) >= (outlook.furthest[1].meanKm as number)).toBe(true);
    const allKm = outlook.practices.map((practice) => practice.meanKm as number);
    expect(outlook.furthest[0].meanKm).toBe(Math.max(...allKm));
    for (const practice of outlook.mostBalking) expect(practice.balkedPerWeek).toBeGreaterThan(0);
  });

  it("names a period that is not in the result", () => {
    expect(() => balkingOutlook(scenario, result, { periodId: "jan" })).toThrow('periodId: no period "jan" in this result');
  });
});
