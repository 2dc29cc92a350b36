import { describe, expect, it } from "vitest";
import { parseScenario } from "../../../app/engine/scenario";
import { balkingSensitivity, scaleOutsideCost } from "../../../app/engine/sensitivity";
import { solveScenario } from "../../../app/engine/solve-scenario";
import { threeSiteScenario } from "./outlook-support";

/**
 * One practice, one M/M/1 site next door, a sharp private-care cost o: patients join until the
 * wait equals o (an individually optimal joining rule in the spirit of Naor 1969, "The regulation
 * of queue size by levying tolls", Econometrica 37(1):15–24, with the wait as the only cost).
 * M/M/1: Wq(x) = x/(μ(μ − x)) = o ⇔ x = oμ²/(1 + oμ); balked = d − x when that is below d.
 */
function mm1Joining(mu: number, outside: number, demand: number): number {
  return Math.max(0, demand - (outside * mu * mu) / (1 + outside * mu));
}

describe("balking sensitivity, re-solved (M/M/1 joining equilibrium)", () => {
  const scenario = parseScenario({
    schema: "equilibra/scenario@1",
    kmPerWeek: 15,
    serviceLines: [{ id: "ortho" }],
    sources: [{ id: "S1", lat: 0, lon: 0, demand: { ortho: 12 }, outsideCost: 1, outsideSpread: 0 }],
    providers: [{ id: "P1", lat: 0, lon: 0, sector: "public", lines: { ortho: { teams: 1, ratePerTeam: 10 } } }],
  });

  it("against the private cost: d − oμ²/(1 + oμ) at each factor of o", () => {
    const curve = balkingSensitivity(scenario, { privateCostFactors: [0.5, 1, 2], capacityFactors: [1] }).privateCost;
    expect(curve.map((point) => point.factor)).toEqual([0.5, 1, 2]);
    // 1e-6: the equilibrium solver stops at a relative gap of 1e-10 on costs of order 10.
    expect(curve[0].balkedPerWeek.choice).toBeCloseTo(mm1Joining(10, 0.5, 12), 6);
    expect(curve[1].balkedPerWeek.choice).toBeCloseTo(mm1Joining(10, 1, 12), 6); // 12 − 100/11 = 2.909091
    expect(curve[2].balkedPerWeek.choice).toBeCloseTo(mm1Joining(10, 2, 12), 6); // 12 − 200/21 = 2.476190
    expect(mm1Joining(10, 1, 12)).toBeCloseTo(2.909091, 6);
  });

  it("against capacity: a factor 1.2 gives μ = 12 (one team, rate scaled), so 12 − 144/13 balk", () => {
    const curve = balkingSensitivity(scenario, { privateCostFactors: [1], capacityFactors: [1, 1.2] }).capacity;
    expect(curve[0].balkedPerWeek.choice).toBeCloseTo(mm1Joining(10, 1, 12), 6);
    expect(curve[1].balkedPerWeek.choice).toBeCloseTo(mm1Joining(12, 1, 12), 6);
  });
});

describe("balking sensitivity on several practices and sites", () => {
  const scenario = threeSiteScenario();
  const sensitivity = balkingSensitivity(scenario, { rules: ["choice", "optimum"] });

  it("passes through the run's own balking at factor 1", () => {
    const result = solveScenario(scenario, { rules: ["choice", "optimum"], periods: false });
    const balked = (rule: "choice" | "optimum") => Object.values(result.lines).reduce((total, line) => total + line.rules[rule]!.balkedPerWeek, 0);
    const atOne = sensitivity.privateCost.find((point) => point.factor === 1)!;
    expect(atOne.balkedPerWeek.choice).toBeCloseTo(balked("choice"), 6);
    expect(atOne.balkedPerWeek.optimum).toBeCloseTo(balked("optimum"), 6);
    expect(sensitivity.capacity[0].balkedPerWeek.choice).toBeCloseTo(balked("choice"), 6);
  });

  it("balking falls as private care gets dearer and as capacity grows", () => {
    const falling = (values: number[]) => values.every((value, index) => index === 0 || value <= values[index - 1] + 1e-9);
    expect(falling(sensitivity.privateCost.map((point) => point.balkedPerWeek.choice as number))).toBe(true);
    expect(falling(sensitivity.capacity.map((point) => point.balkedPerWeek.choice as number))).toBe(true);
    const first = sensitivity.privateCost[0].balkedPerWeek.choice as number;
    const last = sensitivity.privateCost.at(-1)!.balkedPerWeek.choice as number;
    expect(first).toBeGreaterThan(last);
  });

  it("scales every outside cost and keeps 'no outside option' as none", () => {
    const withNone = parseScenario({ ...scenario, sources: [...scenario.sources, { id: "S4", lat: 0, lon: 0, demand: { ortho: 1 }, outsideCost: { ortho: null } }] });
    const scaled = scaleOutsideCost(withNone, 2);
    expect(scaled.sources[0].outsideCost).toBe(40);
    expect(scaled.sources[3].outsideCost).toEqual({ ortho: null });
    expect(withNone.sources[0].outsideCost).toBe(20);
  });

  it("rejects a factor that is not positive, naming the list and position", () => {
    expect(() => balkingSensitivity(scenario, { capacityFactors: [1, 0] })).toThrow("capacityFactors[1] must be a factor > 0, got 0");
  });
});
