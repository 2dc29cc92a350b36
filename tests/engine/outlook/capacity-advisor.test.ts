import { describe, expect, it } from "vitest";
import { adviseCapacity, boundedCompositions } from "../../../app/engine/capacity-advisor";
import { addTeams } from "../../../app/engine/extra-teams";
import { parseScenario, type Scenario } from "../../../app/engine/scenario";
import { solveScenario } from "../../../app/engine/solve-scenario";
import { mmcQueueWaitBySum, threeSiteScenario } from "./outlook-support";

/** Total cost of a scenario under a rule over all lines, through the full scenario solver (a path independent of the advisor's). */
function scenarioCost(scenario: Scenario, rule: "choice" | "optimum"): number {
  const result = solveScenario(scenario, { rules: [rule], periods: false });
  return Object.values(result.lines).reduce((total, line) => total + (line.rules[rule]?.totalCost as number), 0);
}

/** Every joint placement of `total` teams over the (site, line) pairs within per-site limits, by brute force. */
function bruteForceBest(scenario: Scenario, total: number, limits: Record<string, number>, rule: "choice" | "optimum") {
  const pairs = scenario.providers.flatMap((provider) => Object.keys(provider.lines).map((lineId) => ({ siteId: provider.id, lineId })));
  let best = { cost: Infinity, placement: [] as number[] };
  const counts = new Array<number>(pairs.length).fill(0);
  const walk = (index: number, left: number) => {
    if (index === pairs.length) {
      if (left !== 0) return;
      const perSite = new Map<string, number>();
      pairs.forEach((pair, k) => perSite.set(pair.siteId, (perSite.get(pair.siteId) ?? 0) + counts[k]));
      for (const [siteId, used] of perSite) if (used > (limits[siteId] ?? Infinity)) return;
      let changed = scenario;
      pairs.forEach((pair, k) => {
        if (counts[k] > 0) changed = addTeams(changed, pair.siteId, pair.lineId, counts[k]).scenario;
      });
      const cost = scenarioCost(changed, rule);
      if (cost < best.cost) best = { cost, placement: counts.slice() };
      return;
    }
    for (let count = 0; count <= left; count++) {
      counts[index] = count;
      walk(index + 1, left - count);
    }
    counts[index] = 0;
  };
  walk(0, total);
  return best;
}

describe("capacity advisor: greedy and exact placement agree on small problems", () => {
  const scenario = threeSiteScenario();

  for (const { extraTeams, siteLimits } of [
    { extraTeams: 1, siteLimits: {} },
    { extraTeams: 2, siteLimits: {} },
    { extraTeams: 3, siteLimits: { A: 1 } },
  ]) {
    it(`${extraTeams} team(s), limits ${JSON.stringify(siteLimits)}: greedy = the integer program = brute force, under choice and under the optimum`, () => {
      const advice = adviseCapacity(scenario, { extraTeams, siteLimits });
      for (const ruleResult of advice.rules) {
        expect(ruleResult.exact.status).toBe("solved");
        if (ruleResult.exact.status !== "solved") continue;
        expect(ruleResult.exact.agreesWithGreedy).toBe(true);
        expect(ruleResult.exact.placement).toEqual(ruleResult.placement);
        // Brute force re-solves every joint placement through solveScenario: relative 1e-7 covers
        // the solvers' stopping tolerance (relative gap 1e-10) on costs of ~10–400.
        const brute = bruteForceBest(scenario, extraTeams, siteLimits, ruleResult.rule);
        expect(ruleResult.exact.totalCost).toBeCloseTo(brute.cost, 5);
        expect(ruleResult.totalCost).toBeCloseTo(brute.cost, 5);
        const used = new Map<string, number>();
        for (const step of ruleResult.steps) used.set(step.siteId, (used.get(step.siteId) ?? 0) + 1);
        for (const [siteId, limit] of Object.entries(siteLimits)) expect(used.get(siteId) ?? 0).toBeLessThanOrEqual(limit);
      }
    });
  }

  it("each step's gain is the fall in total cost, steps chain, and the first step is the best of the ranking", () => {
    const advice = adviseCapacity(scenario, { extraTeams: 3, rules: ["choice"] });
    const [choice] = advice.rules;
    expect(choice.steps).toHaveLength(3);
    expect(choice.steps[0].totalCostBefore).toBe(choice.baselineTotalCost);
    choice.steps.forEach((step, index) => {
      expect(step.gain).toBeCloseTo(step.totalCostBefore - step.totalCostAfter, 12);
      if (index > 0) expect(step.totalCostBefore).toBe(choice.steps[index - 1].totalCostAfter);
    });
    expect(choice.totalCost).toBe(choice.steps[2].totalCostAfter);
    expect(choice.firstStepRanking[0]).toMatchObject({ siteId: choice.steps[0].siteId, lineId: choice.steps[0].lineId });
    const gains = choice.firstStepRanking.map((candidate) => candidate.gain);
    expect(gains).toEqual([...gains].sort((a, b) => b - a));
    // The baseline is the scenario's own choice cost as the full solver reports it.
    expect(choice.baselineTotalCost).toBeCloseTo(scenarioCost(scenario, "choice"), 6);
  });

  it("skips the exact check beyond its budget of solves, and says why", () => {
    const advice = adviseCapacity(scenario, { extraTeams: 2, rules: ["optimum"], exactSolveBudget: 5 });
    expect(advice.rules[0].exact).toMatchObject({ status: "skipped", solvesNeeded: 10 + 6 });
    expect((advice.rules[0].exact as { reason: string }).reason).toMatch(/needs 16 line solves, more than the budget of 5/);
  });
});

describe("capacity advisor: a team goes where the M/M/c wait falls most", () => {
  it("two lines, one site each, one practice with no outside option and no travel: cost = λ·Wq(c, μ, λ) (Erlang C)", () => {
    // With nowhere else to go and a single site, every rule sends all λ there, so the line's
    // total cost is λ·Wq; an extra team on line k gains λ_k(Wq(c_k) − Wq(c_k + 1)).
    const scenario = parseScenario({
      schema: "equilibra/scenario@1",
      serviceLines: [{ id: "a" }, { id: "b" }],
      sources: [{ id: "S1", lat: 0, lon: 0, demand: { a: 4, b: 7 } }],
      providers: [{ id: "P1", lat: 0, lon: 0, sector: "public", lines: { a: { teams: 1, ratePerTeam: 5 }, b: { teams: 2, ratePerTeam: 4 } } }],
    });
    const gainA = 4 * (mmcQueueWaitBySum(1, 5, 4) - mmcQueueWaitBySum(2, 5, 4));
    const gainB = 7 * (mmcQueueWaitBySum(2, 4, 7) - mmcQueueWaitBySum(3, 4, 7));
    const advice = adviseCapacity(scenario, { extraTeams: 1 });
    for (const ruleResult of advice.rules) {
      expect(ruleResult.baselineTotalCost).toBeCloseTo(4 * mmcQueueWaitBySum(1, 5, 4) + 7 * mmcQueueWaitBySum(2, 4, 7), 8);
      const byLine = Object.fromEntries(ruleResult.firstStepRanking.map((candidate) => [candidate.lineId, candidate.gain]));
      expect(byLine.a).toBeCloseTo(gainA, 8);
      expect(byLine.b).toBeCloseTo(gainB, 8);
      expect(ruleResult.steps[0].lineId).toBe(gainB > gainA ? "b" : "a");
    }
    // The figures themselves: Wq(1, 5, 4) = 0.8 weeks (M/M/1: ρ/(μ − λ)).
    expect(mmcQueueWaitBySum(1, 5, 4)).toBeCloseTo(0.8, 12);
  });
});

describe("capacity advisor: extra teams and options", () => {
  it("a pathway site's extra team goes to its bottleneck stage", () => {
    const scenario = parseScenario({
      schema: "equilibra/scenario@1",
      serviceLines: [{ id: "ortho" }],
      sources: [{ id: "S1", lat: 0, lon: 0, demand: { ortho: 5 } }],
      providers: [
        {
          id: "P1",
          lat: 0,
          lon: 0,
          sector: "public",
          lines: { ortho: { stages: [{ id: "clinic", teams: 4, ratePerTeam: 2 }, { id: "theatre", teams: 3, ratePerTeam: 1.5 }], routing: [[0, 1], [0, 0]], entry: "clinic" } },
        },
      ],
    });
    // Capacity per visit: clinic 8, theatre 4.5 → 6 → 7.5: the theatre stays the bottleneck.
    const { scenario: changed, stages } = addTeams(scenario, "P1", "ortho", 2);
    expect(stages).toEqual(["theatre", "theatre"]);
    expect(changed.providers[0].lines.ortho.stages?.map((stage) => stage.teams)).toEqual([4, 5]);
    expect(scenario.providers[0].lines.ortho.stages?.map((stage) => stage.teams)).toEqual([4, 3]);
  });

  it("rejects impossible requests with the option and value named", () => {
    const scenario = threeSiteScenario();
    expect(() => adviseCapacity(scenario, { extraTeams: 0 })).toThrow("extraTeams must be a whole number ≥ 1, got 0");
    expect(() => adviseCapacity(scenario, { extraTeams: 1, lines: ["eyes"] })).toThrow('lines: unknown service line "eyes" (known: ortho, derm)');
    expect(() => adviseCapacity(scenario, { extraTeams: 1, siteLimits: { Z: 1 } })).toThrow('siteLimits: unknown site "Z"');
    expect(() => adviseCapacity(scenario, { extraTeams: 2, siteLimits: { A: 0, B: 1, C: 0 } })).toThrow(
      "siteLimits leave room for 1 extra teams on the chosen lines, fewer than the 2 to place",
    );
  });

  it("enumerates bounded compositions: C(n + m, m) vectors without caps", () => {
    expect(boundedCompositions(3, 2, [2, 2, 2])).toHaveLength(10);
    expect(boundedCompositions(2, 3, [1, 3])).toEqual([[0, 0], [0, 1], [0, 2], [0, 3], [1, 0], [1, 1], [1, 2]]);
  });
});
