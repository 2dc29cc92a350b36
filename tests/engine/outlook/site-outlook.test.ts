import { describe, expect, it } from "vitest";
import { parseScenario } from "../../../app/engine/scenario";
import { siteOutlook, summariseSiteOutlook } from "../../../app/engine/site-outlook";
import { solveScenario } from "../../../app/engine/solve-scenario";
import { erlangCBySum, shareWithinBySum, threeSiteScenario } from "./outlook-support";

/** One practice with no outside option and one site: every rule sends all 9 (then 10) referrals/week there. */
function sippScenario() {
  return parseScenario({
    schema: "equilibra/scenario@1",
    serviceLines: [{ id: "ortho", standardWeeks: 18 }],
    sources: [{ id: "S1", lat: 0, lon: 0, demand: { ortho: 9 } }],
    providers: [{ id: "P1", lat: 0, lon: 0.1, sector: "public", lines: { ortho: { teams: 14, ratePerTeam: 1 } } }],
    periods: [
      { id: "p1", label: "First", weeks: 26, demandFactor: 1 },
      { id: "p2", label: "Second", weeks: 26, demandFactor: 10 / 9 },
    ],
  });
}

describe("site outlook: teams needed period by period", () => {
  const scenario = sippScenario();
  const result = solveScenario(scenario);

  it("SIPP: λ = 9 then 10, μ = 1, P(wait) ≤ 0.7 → 10 then 11 teams (Green, Kolesar & Soares 2001, Operations Research 49(4):549–564)", () => {
    // P(wait) ≤ 0.7 is a share of at least 0.3 seen with no wait at all: a standard of 0 weeks.
    const outlook = siteOutlook(scenario, result, { standardWeeks: 0, targetShareWithin: 0.3 });
    for (const rule of ["choice", "optimum", "nearest", "capacityShare"]) {
      const rows = outlook.rows.filter((row) => row.rule === rule);
      expect(rows.map((row) => row.periodId)).toEqual(["p1", "p2"]);
      expect(rows.map((row) => row.inflow)).toEqual([expect.closeTo(9, 9), expect.closeTo(10, 9)]);
      expect(rows.map((row) => row.teamsNeeded)).toEqual([10, 11]);
      // The site has 14 teams: the figure is what is needed, not what is there.
      expect(rows.map((row) => row.teamsAvailable)).toEqual([14, 14]);
    }
    // The table values behind it: C(10, 9) = 0.6687 and C(11, 10) = 0.6821, each ≤ 0.7 (4 decimals as printed).
    expect(erlangCBySum(10, 9)).toBeCloseTo(0.6687, 4);
    expect(erlangCBySum(11, 10)).toBeCloseTo(0.6821, 4);
  });

  it("a stricter target: the smallest count whose share within the standard reaches it (M/M/c, Erlang C by its sum)", () => {
    // Standard 0.5 weeks, 90% within: check against P(Wq ≤ t) = 1 − C·e^{−(cμ−λ)t} computed independently.
    const outlook = siteOutlook(scenario, result, { standardWeeks: 0.5, targetShareWithin: 0.9 });
    for (const row of outlook.rows.filter((candidate) => candidate.rule === "choice")) {
      const lambda = row.inflow as number;
      const needed = row.teamsNeeded as number;
      expect(shareWithinBySum(needed, 1, lambda, 0.5)).toBeGreaterThanOrEqual(0.9);
      if (needed - 1 > lambda) expect(shareWithinBySum(needed - 1, 1, lambda, 0.5)).toBeLessThan(0.9);
    }
    expect(outlook.rows.filter((row) => row.rule === "choice").map((row) => row.teamsNeeded)).toEqual([12, 13]);
  });

  it("a period's teams factor shows as fewer teams on duty; a period with no steady state says so", () => {
    const withLeave = parseScenario({
      ...scenario,
      periods: [
        { id: "leave", weeks: 8, demandFactor: 1, teamsFactor: 0.75 },
        { id: "strike", weeks: 1, demandFactor: 1, teamsFactor: 0.5 },
      ],
    });
    const outlook = siteOutlook(withLeave, solveScenario(withLeave), { standardWeeks: 0, targetShareWithin: 0.3 });
    const leave = outlook.rows.filter((row) => row.periodId === "leave");
    expect(leave.every((row) => row.teamsAvailable === 10.5 && row.teamsNeeded === 10)).toBe(true);
    const strike = outlook.rows.filter((row) => row.periodId === "strike");
    expect(strike).toHaveLength(1);
    expect(strike[0].teamsAvailable).toBe(7);
    expect(strike[0].inflow).toBeNull();
    expect(strike[0].note).toMatch(/No steady state/);
  });

  it("rejects a target outside (0, 1) and a negative standard, naming the option", () => {
    expect(() => siteOutlook(scenario, result, { targetShareWithin: 1 })).toThrow("targetShareWithin must be a share in (0, 1), got 1");
    expect(() => siteOutlook(scenario, result, { standardWeeks: -1 })).toThrow("standardWeeks must be a number of weeks ≥ 0, got -1");
  });
});

describe("site outlook: figures are the run's own", () => {
  const scenario = threeSiteScenario();
  const result = solveScenario(scenario);

  it("every row repeats the result's inflow by priority, utilisation, waits and share for its site, line and rule", () => {
    const outlook = siteOutlook(scenario, result);
    expect(outlook.periods).toEqual([{ id: "year", label: "Whole year (one stationary solve)", weeks: null }]);
    // 3 sites on ortho + 2 on derm, each under every rule the result has.
    const rules = Object.keys(result.lines.ortho.rules);
    expect(outlook.rows).toHaveLength((3 + 2) * rules.length);
    for (const row of outlook.rows) {
      const provider = result.lines[row.lineId].rules[row.rule]!.providers.find((candidate) => candidate.id === row.siteId)!;
      expect(row.inflow).toBe(provider.inflow);
      expect(row.urgentInflow).toBe(provider.urgentInflow);
      expect(row.routineInflow).toBe(provider.routineInflow);
      expect(row.utilisation).toBe(provider.utilisation);
      expect(row.meanWaitWeeks).toBe(provider.meanWaitWeeks);
      expect(row.shareWithinStandard).toBe(provider.shareWithinStandard);
    }
  });

  it("keeps only the sites asked for (a provider manager's own)", () => {
    const outlook = siteOutlook(scenario, result, { siteIds: ["B"] });
    expect(new Set(outlook.rows.map((row) => row.siteId))).toEqual(new Set(["B"]));
    expect(new Set(outlook.rows.map((row) => row.lineId))).toEqual(new Set(["ortho", "derm"]));
  });
});

describe("site outlook: a pathway site", () => {
  it("adds teams stage by stage until the share reaches the target, and reports them per stage", () => {
    const scenario = parseScenario({
      schema: "equilibra/scenario@1",
      serviceLines: [{ id: "ortho", standardWeeks: 2 }],
      sources: [{ id: "S1", lat: 0, lon: 0, demand: { ortho: 6 } }],
      providers: [
        {
          id: "P1",
          lat: 0,
          lon: 0.1,
          sector: "public",
          lines: {
            ortho: {
              stages: [
                { id: "clinic", teams: 4, ratePerTeam: 2 },
                { id: "theatre", teams: 5, ratePerTeam: 1 },
              ],
              routing: [
                [0, 0.5],
                [0, 0],
              ],
              entry: "clinic",
            },
          },
        },
      ],
    });
    const outlook = siteOutlook(scenario, solveScenario(scenario, { rules: ["choice"] }), { targetShareWithin: 0.95 });
    const [row] = outlook.rows;
    expect(row.teamsAvailable).toBe(9);
    const byStage = row.teamsNeededByStage as Record<string, number>;
    // Each stage must at least be stable: clinic 6/2 = 3 → ≥ 4; theatre 6·0.5/1 = 3 → ≥ 4.
    expect(byStage.clinic).toBeGreaterThanOrEqual(4);
    expect(byStage.theatre).toBeGreaterThanOrEqual(4);
    expect(row.teamsNeeded).toBe(byStage.clinic + byStage.theatre);
    expect(row.note).toMatch(/Pathway/);
  });
});

describe("site outlook summary: the year at a glance", () => {
  it("weights each period's inflow by its weeks and flags periods short of teams", () => {
    const scenario = parseScenario({
      schema: "equilibra/scenario@1",
      serviceLines: [{ id: "ortho", standardWeeks: 18 }],
      sources: [{ id: "S1", lat: 0, lon: 0, demand: { ortho: 9 } }],
      providers: [{ id: "P1", lat: 0, lon: 0.1, sector: "public", lines: { ortho: { teams: 10, ratePerTeam: 1 } } }],
      periods: [
        { id: "summer", weeks: 39, demandFactor: 1 },
        { id: "winter", weeks: 13, demandFactor: 9.5 / 9 },
      ],
    });
    const outlook = siteOutlook(scenario, solveScenario(scenario, { rules: ["choice"] }), { standardWeeks: 0, targetShareWithin: 0.3 });
    const [summary] = summariseSiteOutlook(outlook.rows);
    // (9·39 + 9.5·13)/52 = 9.125 referrals/week.
    expect(summary.meanInflow).toBeCloseTo(9.125, 9);
    expect(summary.peakInflow).toBeCloseTo(9.5, 9);
    expect(summary.peakPeriod).toBe("winter");
    // 10 teams suffice for λ = 9 (C(10, 9) = 0.6687 ≤ 0.7) but not for λ = 9.5.
    let needed = 10;
    while (erlangCBySum(needed, 9.5) > 0.7) needed += 1;
    expect(needed).toBeGreaterThan(10);
    expect(summary.mostTeamsNeeded).toBe(needed);
    expect(summary.shortPeriods).toEqual(["winter"]);
  });
});
