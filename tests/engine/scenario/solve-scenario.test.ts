/**
 * The whole exchange format end to end: scenario JSON in, result JSON (equilibra/result@1) out,
 * checked against published and independently derived values.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { PLANNING_CAUTIONS } from "~/components/planning-cautions";
import { NoSteadyStateError } from "~/engine/problem";
import { parseScenario } from "~/engine/scenario";
import { mergeScenarioResults, RESULT_CAUTIONS, rulesToRun, solveScenario } from "~/engine/solve-scenario";

const fixture = (name: string) => JSON.parse(readFileSync(new URL(`./fixtures/${name}`, import.meta.url), "utf8"));
const solve = (json: unknown) => solveScenario(parseScenario(json));
/** Relative closeness for values given to 12–13 significant digits. */
const expectRelative = (actual: number | null | undefined, expected: number, tolerance: number) => {
  expect(actual).not.toBeNull();
  expect(Math.abs((actual as number) - expected) / Math.abs(expected)).toBeLessThan(tolerance);
};

describe("two practices, two sites (CHECKS.md) through the exchange format", () => {
  // CHECKS.md, "Two practices, two sites (our model)" [derived to high precision from the model
  // in PRODUCT.md]: demand (2.0, 1.5)/wk; M/M/2 and M/M/3 with μ = 1/wk per team; km
  // [[1,5],[6,2]] given as travelKm with κ = 10 km/week; sharp outside cost 2 weeks.
  // Tolerance 1e-9 relative: the solvers stop at a relative gap of 1e-10 and the published
  // values carry 12–13 digits.
  const result = solve(fixture("two-practices-two-sites.json"));
  const line = result.lines.ortho;
  const choice = line.rules.choice!;
  const optimum = line.rules.optimum!;

  it("reproduces the choice equilibrium: loads, waits, no balking, total cost", () => {
    expect(choice.converged).toBe(true);
    expectRelative(choice.totalCost, 3.229178528763, 1e-9);
    expectRelative(choice.providers[0].inflow, 1.396414356286, 1e-9);
    expectRelative(choice.providers[1].inflow, 2.103585643714, 1e-9);
    expectRelative(choice.providers[0].meanWaitWeeks, 0.951193865361, 1e-9);
    expectRelative(choice.providers[1].meanWaitWeeks, 0.551193865361, 1e-9);
    expect(choice.balkedPerWeek).toBeLessThan(1e-9);
  });

  it("reproduces the optimum and the price of anarchy", () => {
    expect(optimum.converged).toBe(true);
    expectRelative(optimum.totalCost, 2.762658210195, 1e-9);
    expectRelative(optimum.sources[0].balked, 0.526796628787, 1e-8);
    expect(optimum.sources[1].balked).toBeLessThan(1e-9);
    expectRelative(line.priceOfAnarchy, 1.168866462325, 1e-9);
    expectRelative(result.priceOfAnarchy, 1.168866462325, 1e-9);
  });

  it("runs the logit rule at the scenario's scale θ = 2", () => {
    const logit = line.rules.choiceLogit!;
    expect(logit.converged).toBe(true);
    expectRelative(logit.providers[0].inflow, 1.312737940226, 1e-8);
    expectRelative(logit.providers[1].inflow, 2.005242538496, 1e-8);
  });

  it("uses the uploaded km for travel (κ = 10: 1 km costs 0.1 week)", () => {
    // Practice 2 sends everyone to site 2, 2 km away: cost = wait 0.551193865361 + 0.2.
    expect(choice.sources[1].flows).toEqual({ ZZS2: 1.5 });
    expect(choice.sources[1].meanKm).toBe(2);
    expectRelative(choice.sources[1].meanCost, 0.751193865361, 1e-9);
  });
});

describe("a single M/M/1 site with a sharp outside option", () => {
  // Edelson & Hildebrand (1975) "Congestion tolls for Poisson queuing processes", Econometrica
  // 43(1):81–92, adapted to our units (CHECKS.md) [derived]: μ = 8/wk, demand 10/wk, o = 1 week,
  // 0 km. Choice: inflow oμ²/(1 + oμ) = 64/9, 26/9 balk, total cost 10. Optimum: inflow
  // μ(1 − 1/√(1 + oμ)) = 16/3, wait 0.25, total 6. Price of anarchy 5/3. Tolerance 1e-9.
  const result = solve(fixture("single-site-balking.json"));
  const rules = result.lines.derm.rules;

  it("matches the published choice and optimum", () => {
    expectRelative(rules.choice!.servedPerWeek, 64 / 9, 1e-9);
    expectRelative(rules.choice!.balkedPerWeek, 26 / 9, 1e-9);
    expectRelative(rules.choice!.totalCost, 10, 1e-9);
    expectRelative(rules.optimum!.servedPerWeek, 16 / 3, 1e-9);
    expectRelative(rules.optimum!.providers[0].meanWaitWeeks, 0.25, 1e-9);
    expectRelative(rules.optimum!.totalCost, 6, 1e-9);
    expectRelative(result.priceOfAnarchy, 5 / 3, 1e-9);
  });

  it("gives the fixed rules the choice answer when there is one site (patients still balk)", () => {
    expectRelative(rules.nearest!.servedPerWeek, 64 / 9, 1e-9);
    expectRelative(rules.capacityShare!.balkedPerWeek, 26 / 9, 1e-9);
  });
});

describe("priorities", () => {
  // Cobham (1954) "Priority assignment in waiting line problems", JORSA 2(1):70–76 (CHECKS.md):
  // M/M/2, μ = 1, urgent 0.5 and routine 1.0 per week → routine wait 12/7, urgent 3/7; their
  // λ-weighted mean 9/7 is the FCFS wait (conservation law). One practice refers 1.5/week with an
  // urgent share of 1/3 and no outside option, so every rule sends the routine 1.0 to the site.
  const json = {
    schema: "equilibra/scenario@1",
    serviceLines: [{ id: "gen" }],
    sources: [{ id: "ZZP001", lat: 55, lon: 3, demand: { gen: 1.5 }, urgentShare: { gen: 1 / 3 } }],
    providers: [{ id: "ZZS1", lat: 55.1, lon: 3, lines: { gen: { teams: 2, ratePerTeam: 1 } } }],
  };

  it("reports each class's wait at the site and routine patients facing the routine-class wait", () => {
    const rules = solve(json).lines.gen.rules;
    for (const rule of ["choice", "optimum", "nearest", "capacityShare"] as const) {
      const provider = rules[rule]!.providers[0];
      expect(provider.urgentInflow).toBeCloseTo(0.5, 12);
      expect(provider.routineInflow).toBeCloseTo(1, 9);
      expect(provider.inflow).toBeCloseTo(1.5, 9);
      expect(provider.routineWaitWeeks).toBeCloseTo(12 / 7, 8);
      expect(provider.urgentWaitWeeks).toBeCloseTo(3 / 7, 8);
      expect(provider.meanWaitWeeks).toBeCloseTo(9 / 7, 8);
      expect(rules[rule]!.routineMeanWaitWeeks).toBeCloseTo(12 / 7, 8);
      expect(rules[rule]!.servedPerWeek).toBeCloseTo(1.5, 9);
    }
  });

  it("sends urgent referrals to the nearest site even when another site waits less", () => {
    const twoSites = {
      ...json,
      sources: [{ id: "ZZP001", lat: 55, lon: 3, demand: { gen: 3 }, urgentShare: 0.2, outsideCost: 30 }],
      providers: [
        { id: "ZZS1", lat: 55.05, lon: 3, lines: { gen: { teams: 1, ratePerTeam: 1.2 } } },
        { id: "ZZS2", lat: 55.3, lon: 3, lines: { gen: { teams: 4, ratePerTeam: 2 } } },
      ],
    };
    const choice = solve(twoSites).lines.gen.rules.choice!;
    expect(choice.providers[0].urgentInflow).toBeCloseTo(0.6, 12);
    expect(choice.providers[1].urgentInflow).toBe(0);
    expect(choice.sources[0].urgentSiteId).toBe("ZZS1");
    // The routine patients trade wait against travel and mostly go to the bigger, farther site.
    expect(choice.providers[1].routineInflow).toBeGreaterThan(choice.providers[0].routineInflow);
  });
});

describe("pathways through the exchange format", () => {
  // Jackson (1957) Operations Research 5(4); Jackson (1963) Management Science 10(1) [mem];
  // values [derived] in CHECKS.md: external arrivals 4 at the first stage, routing
  // R = [[0,.5,.2],[.4,0,.3],[.1,0,0]], stations (c, μ) = (4, 2), (3, 3), (2, 1.5) →
  // λ = (800/153, 400/153, 280/153), ΣL = 6.133786. Our site wait is the total queue wait per
  // patient, (ΣL − Σ λ_s/μ_s)/4 = (6.133786 − 720/153)/4 = 0.3569765 (Little's law); the six
  // published digits of ΣL allow 2e-7 absolute.
  const json = {
    schema: "equilibra/scenario@1",
    serviceLines: [{ id: "ortho" }],
    sources: [{ id: "ZZP001", lat: 55, lon: 3, demand: { ortho: 4 } }],
    providers: [
      {
        id: "ZZS1",
        lat: 55,
        lon: 3.1,
        lines: {
          ortho: {
            stages: [
              { id: "clinic", teams: 4, ratePerTeam: 2 },
              { id: "scan", teams: 3, ratePerTeam: 3 },
              { id: "theatre", teams: 2, ratePerTeam: 1.5 },
            ],
            routing: [
              [0, 0.5, 0.2],
              [0.4, 0, 0.3],
              [0.1, 0, 0],
            ],
            entry: "clinic",
          },
        },
      },
    ],
  };

  it("gives the site the Jackson network's total queue wait", () => {
    const choice = solve(json).lines.ortho.rules.choice!;
    expect(choice.providers[0].routineInflow).toBeCloseTo(4, 9);
    expect(Math.abs(choice.providers[0].routineWaitWeeks! - (6.133786 - 720 / 153) / 4)).toBeLessThan(2e-7);
    // The busiest stage is the clinic: 800/153 per week on 4 × 2 (scan 0.29, theatre 0.61).
    expect(choice.providers[0].utilisation).toBeCloseTo(800 / 153 / 8, 12);
  });

  it("treats a one-stage pathway exactly as the plain site", () => {
    const plain = {
      ...json,
      sources: [{ id: "ZZP001", lat: 55, lon: 3, demand: { ortho: 5 }, outsideCost: 4, outsideSpread: 0.5 }],
      providers: [{ id: "ZZS1", lat: 55, lon: 3.1, lines: { ortho: { teams: 3, ratePerTeam: 2 } } }],
    };
    const staged = { ...plain, providers: [{ ...plain.providers[0], lines: { ortho: { stages: [{ id: "only", teams: 3, ratePerTeam: 2 }] } } }] };
    const a = solve(plain).lines.ortho.rules;
    const b = solve(staged).lines.ortho.rules;
    for (const rule of ["choice", "optimum"] as const) {
      expect(b[rule]!.totalCost).toBeCloseTo(a[rule]!.totalCost!, 10);
      expect(b[rule]!.providers[0].routineWaitWeeks).toBeCloseTo(a[rule]!.providers[0].routineWaitWeeks!, 10);
    }
  });
});

describe("periods (SIPP)", () => {
  it("a single period with factors 1 equals the stationary solve", () => {
    const json = { ...fixture("two-practices-two-sites.json"), periods: [{ id: "year", weeks: 52 }] };
    const result = solve(json);
    const period = result.periods![0];
    for (const rule of ["choice", "choiceLogit", "optimum", "nearest", "capacityShare"] as const) {
      const stationary = result.lines.ortho.rules[rule]!;
      const periodic = period.lines.ortho.rules[rule]!;
      expectRelative(periodic.totalCost, stationary.totalCost!, 1e-9);
      for (let j = 0; j < 2; j++) expect(periodic.providers[j].inflow).toBeCloseTo(stationary.providers[j].inflow, 9);
      for (let i = 0; i < 2; i++) {
        expect(periodic.sources[i].balked).toBeCloseTo(stationary.sources[i].balked, 9);
        for (const [site, flow] of Object.entries(stationary.sources[i].flows)) expect(periodic.sources[i].flows[site]).toBeCloseTo(flow, 8);
      }
    }
    expectRelative(period.priceOfAnarchy, result.priceOfAnarchy!, 1e-9);
  });

  it("solves each period at its own demand and capacity", () => {
    const json = {
      ...fixture("two-practices-two-sites.json"),
      periods: [
        { id: "busy", weeks: 26, demandFactor: 1.1 },
        { id: "leave", weeks: 26, teamsFactor: 0.9 },
      ],
    };
    const result = solve(json);
    const [busy, leave] = result.periods!;
    expect(busy.lines.ortho.demandPerWeek).toBeCloseTo(3.85, 12);
    expect(leave.lines.ortho.capacityPerWeek).toBeCloseTo(4.5, 12);
    // Less capacity, same demand: waits rise at both sites under choice.
    for (let j = 0; j < 2; j++) {
      expect(leave.lines.ortho.rules.choice!.providers[j].meanWaitWeeks!).toBeGreaterThan(result.lines.ortho.rules.choice!.providers[j].meanWaitWeeks!);
    }
  });

  it("reports a period with no steady state in that period's result, not hidden", () => {
    const result = solve(fixture("winter-without-steady-state.json"));
    const [summer, winter] = result.periods!;
    expect(summer.lines.ortho.rules.choice!.converged).toBe(true);
    expect(winter.lines.ortho.rules).toEqual({});
    expect(winter.lines.ortho.noSteadyState).toEqual([
      { lineId: "ortho", periodId: "winter", siteIds: ["ZZS1", "ZZS2"], demand: expect.closeTo(3.3, 12), capacity: expect.closeTo(2.8, 12), shortfall: expect.closeTo(0.5, 12) },
    ]);
    expect(result.warnings).toContain(
      'Period winter: Line ortho: No steady state for service line "ortho" in period "winter": demand without an outside option 3.30 referrals/week exceeds the capacity of sites ZZS1, ZZS2 (2.80/week) by 0.50 referrals/week.',
    );
  });
});

describe("results solved in parts (the command line's two threads)", () => {
  it("merge into exactly the result of solving every rule at once, periods and warnings included", () => {
    const scenario = parseScenario(JSON.parse(readFileSync("seed/demo-scenario.json", "utf8")));
    const whole = solveScenario(scenario);
    const rules = rulesToRun(scenario);
    expect(rules).toContain("plan");
    expect(whole.periods?.length).toBeGreaterThan(1);
    for (const taken of [["choice", "nearest", "plan"], ["optimum"], ["choice"]] as const) {
      const first = solveScenario(scenario, { rules: rules.filter((rule) => (taken as readonly string[]).includes(rule)) });
      const second = solveScenario(scenario, { rules: rules.filter((rule) => !(taken as readonly string[]).includes(rule)) });
      expect(mergeScenarioResults([first, second])).toEqual(whole);
      expect(mergeScenarioResults([second, first])).toEqual(whole);
    }
  });
});

describe("failures", () => {
  it("throws NoSteadyStateError naming the line, the sites and the shortfall", () => {
    expect(() => solve(fixture("no-steady-state.json"))).toThrow(NoSteadyStateError);
    expect(() => solve(fixture("no-steady-state.json"))).toThrow(
      'No steady state for service line "ortho": demand without an outside option 7.50 referrals/week exceeds the capacity of sites ZZS1, ZZS2 (7.00/week) by 0.50 referrals/week.',
    );
  });

  it("reports a fixed rule that overloads a site while choice is fine", () => {
    // Both practices' nearest site is ZZS1 (capacity 2); 2.5 captive referrals/week in all.
    const json = {
      schema: "equilibra/scenario@1",
      serviceLines: [{ id: "ortho" }],
      sources: [
        { id: "ZZP001", lat: 54.7, lon: 2.1, demand: { ortho: 1.5 } },
        { id: "ZZP002", lat: 54.71, lon: 2.1, demand: { ortho: 1.0 } },
      ],
      providers: [
        { id: "ZZS1", lat: 54.7, lon: 2.1, lines: { ortho: { teams: 2, ratePerTeam: 1 } } },
        { id: "ZZS2", lat: 54.9, lon: 2.1, lines: { ortho: { teams: 3, ratePerTeam: 1 } } },
      ],
    };
    const rules = solve(json).lines.ortho.rules;
    expect(rules.choice!.status).toBe("solved");
    expect(rules.nearest!.status).toBe("overloaded");
    expect(rules.nearest!.converged).toBe(false);
    expect(rules.nearest!.totalCost).toBeNull();
    expect(rules.nearest!.overloads).toEqual([{ siteId: "ZZS1", demand: 2.5, capacity: 2, shortfall: 0.5 }]);
  });

  it("reports an infeasible plan with its reasons and no allocation", () => {
    const json = fixture("two-practices-two-sites.json");
    json.providers[0].lines.ortho.minWeekly = 2.5; // above the site's capacity of 2
    json.plan = { maxKm: 10 };
    const plan = solve(json).lines.ortho.rules.plan!;
    expect(plan.status).toBe("infeasible");
    expect(plan.totalCost).toBeNull();
    expect(plan.providers).toEqual([]);
    expect(plan.infeasibilities).toEqual(['Site "ZZS1": minimum volume 2.50/week is not below its routine capacity of 2.00/week.']);
  });
});

describe("the result document", () => {
  const json = fixture("two-practices-two-sites.json");
  json.plan = { maxUtilisation: 0.68 };
  json.sources[0].urgentShare = { ortho: 0.1 };
  const result = solve(json);

  it("has every field of PRODUCT.md's result format, with numbers where numbers are due", () => {
    expect(result.schema).toBe("equilibra/result@1");
    expect(typeof result.priceOfAnarchy).toBe("number");
    const rules = result.lines.ortho.rules;
    expect(Object.keys(rules)).toEqual(["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"]);
    for (const rule of Object.values(rules)) {
      expect(rule).toMatchObject({
        converged: true,
        iterations: expect.any(Number),
        relativeGap: expect.any(Number),
        totalCost: expect.any(Number),
        servedPerWeek: expect.any(Number),
        balkedPerWeek: expect.any(Number),
        meanWaitWeeks: expect.any(Number),
        meanKm: expect.any(Number),
        shareWithinStandard: expect.any(Number),
      });
      expect(rule!.relativeGap!).toBeLessThan(1e-6);
      for (const provider of rule!.providers) {
        expect(provider).toMatchObject({ id: expect.any(String), inflow: expect.any(Number), utilisation: expect.any(Number), meanWaitWeeks: expect.any(Number), shareWithinStandard: expect.any(Number) });
      }
      for (const source of rule!.sources) {
        expect(source).toMatchObject({ id: expect.any(String), balked: expect.any(Number), meanWaitWeeks: expect.any(Number), meanKm: expect.any(Number), flows: expect.any(Object) });
        // Every referral is either served at some site or balks.
        const served = Object.values(source.flows).reduce((total, flow) => total + flow, 0);
        expect(served + source.balked).toBeCloseTo(source.demand, 9);
      }
    }
  });

  it("keeps the plan under its utilisation ceiling", () => {
    for (const provider of result.lines.ortho.rules.plan!.providers) expect(provider.utilisation!).toBeLessThanOrEqual(0.68 + 1e-6);
  });

  it("survives JSON: no NaN or Infinity anywhere", () => {
    expect(JSON.parse(JSON.stringify(result))).toEqual(result);
  });

  it("echoes the assumptions and carries the planning cautions", () => {
    expect(result.assumptions).toMatchObject({ kmPerWeek: 10, circuity: 1.3, choiceModel: { kind: "logit", scale: 2 }, utilisationWarning: 0.85, standardWeeks: { ortho: 18 } });
    expect(result.assumptions.travel).toBe("road km from the uploaded matrix for 4 practice–site pairs; great-circle km × 1.3 for the rest");
    expect(result.cautions).toEqual([...PLANNING_CAUTIONS]);
    expect([...RESULT_CAUTIONS]).toEqual([...PLANNING_CAUTIONS]);
  });

  it("reports equity across practices and by deprivation decile", () => {
    const choice = result.lines.ortho.rules.choice!;
    const costs = choice.sources.map((source) => source.meanCost!);
    expect(choice.equity.meanCostAcrossSources.range).toBeCloseTo(Math.max(...costs) - Math.min(...costs), 12);
    expect(choice.equity.byDeprivationDecile.map((row) => row.decile)).toEqual([2, 9]);
    expect(choice.equity.byDeprivationDecile[0].demandPerWeek).toBe(2);
  });

  it("flags sites at or above 85% utilisation", () => {
    const busy = { ...fixture("two-practices-two-sites.json") };
    busy.sources[1].demand.ortho = 2.5;
    busy.sources[0].outsideCost = null; // 4.5 captive referrals/week on 5 of capacity
    busy.sources[1].outsideCost = null;
    const choice = solve(busy).lines.ortho.rules.choice!;
    const flagged = choice.providers.filter((provider) => provider.utilisation! >= 0.85);
    expect(flagged.length).toBeGreaterThan(0);
    for (const provider of flagged) {
      expect(provider.warning).toMatch(/^utilisation \d+\.\d% is at or above 85%: waits rise steeply near capacity, the more so the fewer teams a site has$/);
    }
    expect(choice.warnings.length).toBe(flagged.length);
  });
});

describe("fixed rules' total cost in the result document", () => {
  it("reports capacityShare's own objective, in which each (practice, site) group balks separately", async () => {
    const { buildLineProblems } = await import("~/engine/build-problem");
    const { solveCapacityShare } = await import("~/engine/fixed-rules");
    const json = fixture("two-practices-two-sites.json");
    for (const source of json.sources) source.outsideSpread = 0.5;
    const scenario = parseScenario(json);
    const direct = solveCapacityShare(buildLineProblems(scenario)[0].problem);
    const reported = solveScenario(scenario).lines.ortho.rules.capacityShare!.totalCost;
    // Same model, same solver: only rounding separates them.
    expectRelative(reported, direct.totalCost, 1e-12);
  });
});
