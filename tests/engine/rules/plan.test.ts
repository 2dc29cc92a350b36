import { describe, expect, it } from "vitest";
import { allocationTotalCost } from "~/engine/allocation-cost";
import { solveChoice } from "~/engine/equilibrium";
import { solveCapacityShare, solveNearest } from "~/engine/fixed-rules";
import { solveOptimum } from "~/engine/optimum";
import { planBounds, solvePlan, withJourneyLimit } from "~/engine/plan";
import { chordExcess, siteCost, solvePlanLp, sourceBalkingCost } from "~/engine/plan-lp";
import type { LineProblem } from "~/engine/problem";
import { ScenarioInputError } from "~/engine/problem";
import { createSiteWaitModel } from "~/engine/site-wait";
import { lineProblem, mmcSite, randomGenerator, randomProblem } from "./rules-support";

/** The LP, the dual method's direct multipliers (the product's), and its toll iteration (the fallback). */
const methods = ["lp", "dual", "dual-iterate"] as const;
type Method = (typeof methods)[number];
function methodOptions(method: Method): { method: "lp" | "dual"; multipliers?: "direct" | "iterate" } {
  return method === "dual-iterate" ? { method: "dual", multipliers: "iterate" } : { method };
}

function optimumCost(problem: LineProblem): { cost: number; inflow: Float64Array } {
  const result = solveOptimum(problem);
  expect(result.diagnostics.converged).toBe(true);
  const inflow = new Float64Array(problem.m);
  for (let i = 0; i < problem.n; i++) for (let j = 0; j < problem.m; j++) inflow[j] += result.allocation.flow[i * problem.m + j];
  return { cost: allocationTotalCost(problem, result.allocation, result.siteWait), inflow };
}

describe("plan on one M/M/1 site (Edelson & Hildebrand 1975, adapted)", () => {
  // Edelson & Hildebrand (1975) "Congestion tolls for Poisson queuing processes", Econometrica
  // 43(1):81–92, in our units (CHECKS.md): μ = 8/wk, demand 10/wk, sharp outside cost 1 wk.
  // The optimum serves μ(1 − 1/√(1 + oμ)) = 16/3 at wait 1/4, total cost 6. The bounded cases are
  // [derived]: the cost x·W(x) + (10 − x)·1 with W(x) = x/(8(8 − x)) is convex with its minimum at
  // 16/3, so a bound on the far side of 16/3 binds exactly.
  const problem = lineProblem({ demand: [10], outsideCost: [1], km: [[0]], kmPerWeek: 15, sites: [mmcSite(1, 8)] });
  const cases = [
    { name: "no constraints", spec: {}, options: {}, inflow: 16 / 3, cost: 6 },
    // x = 4: W = 4/(8·4) = 1/8, cost 4/8 + 6 = 6.5.
    { name: "maxWeekly 4", spec: { maxWeekly: [4] }, options: {}, inflow: 4, cost: 6.5 },
    // x = 6: W = 6/(8·2) = 3/8, cost 6·3/8 + 4 = 6.25.
    { name: "minWeekly 6", spec: { minWeekly: [6] }, options: {}, inflow: 6, cost: 6.25 },
    // Utilisation ceiling 0.5 with no urgent work: x ≤ 0.5·8 = 4, as maxWeekly 4.
    { name: "utilisation ceiling 0.5", spec: {}, options: { maxUtilisation: 0.5 }, inflow: 4, cost: 6.5 },
  ];
  for (const method of methods) {
    for (const { name, spec, options, inflow, cost } of cases) {
      it(`${method}: ${name} → inflow ${inflow.toFixed(4)}, total cost ${cost}`, () => {
        const result = solvePlan({ ...problem, ...floatSpec(spec) }, { ...options, ...methodOptions(method) });
        expect(result.status).toBe("solved");
        expect(result.method).toBe(methodOptions(method).method);
        // Tolerances: the LP's certified gap is 1e-7 (cost); its inflow sits within a refined
        // segment of the flat minimum (1e-3). The dual method is exact to the inner solve (1e-6 / 1e-9).
        expect(result.totalCost).toBeGreaterThanOrEqual(cost - 1e-9);
        expect(result.totalCost).toBeLessThanOrEqual(cost * (1 + 2e-7));
        expect(result.siteInflow[0]).toBeCloseTo(inflow, method === "lp" ? 3 : 6);
        expect(result.diagnostics.relativeGap).toBeLessThan(1e-7);
      });
    }
  }

  it("the utilisation ceiling counts urgent work: u·fullCapacity − urgent", () => {
    // Cobham (1954) "Priority assignment in waiting line problems", JORSA 2(1):70–76: for M/M/1
    // with urgent inflow 1 ahead of routine x (μ = 8), the routine wait is
    // W(x) = ((1 + x)/64) / ((7/8)(1 − (1 + x)/8)) = (1 + x)/(7(7 − x)).
    // Ceiling 0.5: (1 + x)/8 ≤ 0.5 ⇒ x ≤ 3, where W = 1/7 and the marginal cost
    // W + x·W' = 1/7 + 3·8/(7·16) = 5/14 < 1, so the plan wants more and the ceiling binds.
    // Total cost 3/7 + 7·1 [derived].
    const site = createSiteWaitModel({ teams: 1, ratePerTeam: 8 }, 1);
    const urgentProblem = lineProblem({ demand: [10], outsideCost: [1], km: [[0]], kmPerWeek: 15, sites: [site] });
    const options = { maxUtilisation: 0.5, urgentInflow: new Float64Array([1]), fullCapacity: new Float64Array([8]) };
    expect(planBounds(urgentProblem, options).upper[0]).toBe(3);
    for (const method of methods) {
      const result = solvePlan(urgentProblem, { ...options, ...methodOptions(method) });
      expect(result.status).toBe("solved");
      expect(result.siteInflow[0]).toBeCloseTo(3, 6);
      expect(result.siteWait[0]).toBeCloseTo(1 / 7, 6);
      expect(result.totalCost).toBeCloseTo(3 / 7 + 7, 6);
    }
  });
});

function floatSpec(spec: { minWeekly?: number[]; maxWeekly?: number[] }): Partial<LineProblem> {
  return {
    ...(spec.minWeekly ? { minWeekly: Float64Array.from(spec.minWeekly) } : {}),
    ...(spec.maxWeekly ? { maxWeekly: Float64Array.from(spec.maxWeekly) } : {}),
  };
}

describe("plan on the two-practice, two-site instance (CHECKS.md)", () => {
  // [derived] to high precision from the model in PRODUCT.md (CHECKS.md): demand (2.0, 1.5)/wk;
  // M/M/2 and M/M/3 with μ = 1; travel [[0.1, 0.5], [0.6, 0.2]] weeks; sharp outside cost 2.
  // Optimum total 2.762658210195 with 0.526796628787/wk of practice 1 to private care.
  const problem = lineProblem({
    demand: [2.0, 1.5],
    outsideCost: [2, 2],
    km: [
      [1, 5],
      [6, 2],
    ],
    kmPerWeek: 10,
    sites: [mmcSite(2, 1), mmcSite(3, 1)],
  });

  for (const method of methods) {
    it(`${method}: with no constraints the plan is the optimum`, () => {
      const result = solvePlan(problem, methodOptions(method));
      expect(result.status).toBe("solved");
      expect(result.totalCost).toBeGreaterThanOrEqual(2.762658210195 - 1e-10);
      expect(result.totalCost).toBeLessThanOrEqual(2.762658210195 * (1 + 1e-7));
      expect(result.allocation.balked[0]).toBeCloseTo(0.526796628787, method === "lp" ? 3 : 7);
    });

    it(`${method}: a 5.5 km journey limit removes practice 2's 6 km option`, () => {
      const result = solvePlan(problem, { ...methodOptions(method), maxKm: 5.5 });
      expect(result.status).toBe("solved");
      expect(result.allocation.flow[2]).toBe(0);
      expect(result.totalCost).toBeGreaterThanOrEqual(2.762658210195 - 1e-10);
    });
  }
});

describe("plan: infeasible constraints are named, not thrown", () => {
  const base = {
    demand: [2, 1.5],
    outsideCost: [3, Infinity],
    km: [
      [4, 30],
      [20, 8],
    ],
    kmPerWeek: 15,
    sites: [mmcSite(2, 2), mmcSite(2, 2)],
  };

  it("a source left with no site within the journey limit and no outside option", () => {
    const result = solvePlan(lineProblem(base), { maxKm: 5 });
    expect(result.status).toBe("infeasible");
    expect(result.infeasibilities).toEqual([
      'Source "S2" has no site within the 5 km journey limit and no outside option (1.50 referrals/week).',
    ]);
    expect(result.diagnostics.converged).toBe(false);
    expect(Number.isNaN(result.totalCost)).toBe(true);
  });

  it("a minimum volume above the demand that may reach the site", () => {
    const result = solvePlan(lineProblem({ ...base, minWeekly: [NaN, 1.8] }), { maxKm: 25 });
    expect(result.infeasibilities).toEqual([
      'Site "P2": minimum volume 1.80/week exceeds the 1.50/week of demand from sources that may use it within the 25 km journey limit.',
    ]);
  });

  it("a minimum above the maximum or the utilisation ceiling", () => {
    const result = solvePlan(lineProblem({ ...base, minWeekly: [2.5, NaN], maxWeekly: [3, NaN] }), { maxUtilisation: 0.5 });
    expect(result.infeasibilities).toEqual([
      'Site "P1": minimum volume 2.50/week is above its maximum of 2.00/week (maxWeekly or utilisation ceiling).',
    ]);
  });

  it("minimum volumes adding up to more than the demand", () => {
    const result = solvePlan(lineProblem({ ...base, minWeekly: [1.9, 1.7] }));
    expect(result.infeasibilities).toEqual(["The minimum volumes add up to 3.60/week, more than the line's demand of 3.50/week."]);
  });

  for (const method of methods) {
    it(`${method}: a joint infeasibility the pre-checks cannot see is still reported`, () => {
      // Two practices with no outside option may only use P1 (1.5 + 1.5 = 3/wk) but P1 takes at
      // most 2/wk; each practice alone would fit, and P2 has room for the line as a whole.
      const joint = lineProblem({
        demand: [1.5, 1.5],
        outsideCost: [Infinity, Infinity],
        km: [
          [2, NaN],
          [3, NaN],
        ],
        kmPerWeek: 15,
        sites: [mmcSite(2, 2), mmcSite(3, 2)],
        maxWeekly: [2, NaN],
      });
      const result = solvePlan(joint, methodOptions(method));
      expect(result.status).toBe("infeasible");
      expect(result.infeasibilities[0]).toMatch(/"P1"/);
    });
  }

  it("invalid plan options are input errors naming the field", () => {
    expect(() => solvePlan(lineProblem(base), { maxUtilisation: 1.5 })).toThrow(ScenarioInputError);
    expect(() => solvePlan(lineProblem(base), { maxUtilisation: 1.5, maxKm: 0 })).toThrow(
      "plan.maxUtilisation: must be a number in (0, 1], got 1.5\nplan.maxKm: must be a number of km greater than 0, got 0",
    );
  });
});

/** A random instance with bounds that bind: max below, min above the optimum's inflows. */
function constrainedInstance(seed: number, spread: boolean) {
  const problem = randomProblem(seed, 8, 4, { spread });
  const { inflow } = optimumCost(problem);
  const random = randomGenerator(seed + 1000);
  const maxWeekly = new Float64Array(problem.m).fill(NaN);
  const minWeekly = new Float64Array(problem.m).fill(NaN);
  maxWeekly[0] = inflow[0] * (0.6 + 0.3 * random());
  minWeekly[1] = Math.min(inflow[1] * (1.1 + 0.3 * random()), 0.55 * problem.sites[1].capacity);
  return { problem: { ...problem, maxWeekly, minWeekly }, options: { maxKm: 25 + 10 * random(), maxUtilisation: 0.6 } };
}

describe("plan properties on random instances", () => {
  for (const seed of [1, 2, 3, 4, 5, 6]) {
    const spread = seed % 2 === 0;
    it(`seed ${seed}: the LP and the dual method agree within the piecewise-linear error, and respect the constraints`, () => {
      const { problem, options } = constrainedInstance(seed, spread);
      const dual = solvePlan(problem, { ...options, method: "dual" });
      expect(dual.status).toBe("solved");
      // The direct multipliers and the toll iteration find the same plan (both exact to the inner gap).
      expect(dual.diagnostics.warnings.join(" ")).not.toMatch(/direct multipliers/);
      const iterated = solvePlan(problem, { ...options, method: "dual", multipliers: "iterate" });
      expect(iterated.status).toBe("solved");
      expect(dual.totalCost).toBeCloseTo(iterated.totalCost, 8);
      for (let j = 0; j < problem.m; j++) {
        expect(dual.siteInflow[j]).toBeCloseTo(iterated.siteInflow[j], 6);
        expect(dual.siteToll?.[j]).toBeCloseTo(iterated.siteToll?.[j] ?? NaN, 4);
      }
      const limited = withJourneyLimit(problem, options.maxKm);
      const bounds = planBounds(limited, options);
      const lp = solvePlanLp(limited, bounds);
      expect(lp.converged).toBe(true);

      // Constraints: bounds within 1e-9·capacity (dual) and exactly (LP), journeys, conservation.
      for (const result of [dual, { siteInflow: lp.siteInflow, allocation: { flow: lp.flow, balked: lp.balked } }]) {
        for (let j = 0; j < problem.m; j++) {
          const slack = 1e-8 * Math.max(1, problem.sites[j].capacity);
          expect(result.siteInflow[j]).toBeLessThanOrEqual(bounds.upper[j] + slack);
          expect(result.siteInflow[j]).toBeGreaterThanOrEqual(bounds.lower[j] - slack);
        }
        for (let i = 0; i < problem.n; i++) {
          let served = 0;
          for (let j = 0; j < problem.m; j++) {
            const flow = result.allocation.flow[i * problem.m + j];
            if (problem.km[i * problem.m + j] > options.maxKm) expect(flow).toBe(0);
            served += flow;
          }
          // 1e-7: the simplex's own feasibility tolerance is about 1e-9 per row.
          expect(served + result.allocation.balked[i]).toBeCloseTo(problem.demand[i], 7);
        }
      }

      // Agreement. With P the LP's chord interpolant (≥ the true cost C), x_lp minimising P and
      // x_dual the exact constrained optimum: C(x_lp) ≤ P(x_lp) ≤ P(x_dual) = C(x_dual) + (P − C)(x_dual),
      // and C(x_lp) ≥ C(x_dual) as x_dual is optimal (Dantzig 1963, separable programming, from memory).
      let excess = 0;
      for (let j = 0; j < problem.m; j++) {
        excess += chordExcess(lp.siteBreakpoints[j], (x) => siteCost(limited, j, x), Math.min(dual.siteInflow[j], lp.siteBreakpoints[j].at(-1) ?? 0));
      }
      for (let i = 0; i < problem.n; i++) {
        const grid = lp.balkBreakpoints[i];
        if (grid) excess += chordExcess(grid, (b) => sourceBalkingCost(limited, i, b), dual.allocation.balked[i]);
      }
      const scale = dual.totalCost;
      expect(lp.totalCost - dual.totalCost).toBeGreaterThanOrEqual(-1e-8 * scale);
      expect(lp.totalCost - dual.totalCost).toBeLessThanOrEqual(excess + 1e-9 * scale);
      // And both sit within the LP's certified gap of each other.
      expect(Math.abs(lp.totalCost - dual.totalCost)).toBeLessThanOrEqual(lp.relativeGap * lp.totalCost + 1e-8 * scale);
    });

    it(`seed ${seed}: plan ≥ optimum, and plan = optimum when its constraints are slack`, () => {
      const { problem, options } = constrainedInstance(seed, spread);
      const free = { ...problem, maxWeekly: new Float64Array(problem.m).fill(NaN), minWeekly: new Float64Array(problem.m).fill(NaN) };
      const optimum = optimumCost(free);
      for (const method of methods) {
        const bound = solvePlan(problem, { ...options, ...methodOptions(method) });
        expect(bound.totalCost).toBeGreaterThanOrEqual(optimum.cost * (1 - 1e-9));
        // Slack: volumes 0.5× and 2× the optimum's, no ceiling, journeys of any length.
        const slack = {
          ...free,
          minWeekly: Float64Array.from(optimum.inflow, (x) => 0.5 * x),
          maxWeekly: Float64Array.from(optimum.inflow, (x) => 2 * x),
        };
        const plan = solvePlan(slack, { ...methodOptions(method), maxKm: 1e6 });
        expect(plan.status).toBe("solved");
        expect(plan.totalCost).toBeGreaterThanOrEqual(optimum.cost * (1 - 1e-9));
        expect(plan.totalCost).toBeLessThanOrEqual(optimum.cost * (1 + 2e-7));
        if (method !== "lp") {
          expect(Array.from(plan.siteToll ?? [])).toEqual(new Array(problem.m).fill(0));
          for (let j = 0; j < problem.m; j++) expect(plan.siteInflow[j]).toBeCloseTo(optimum.inflow[j], 6);
        }
      }
    });

    it(`seed ${seed}: every rule costs at least the optimum (Wardrop's second principle)`, () => {
      // Wardrop (1952) Proc. Inst. Civil Engineers 1(3):325–378 (from memory): the optimum minimises
      // total cost over all allocations; choice, nearest and capacity share are allocations.
      const problem = randomProblem(seed + 50, 10, 4, { spread });
      const optimum = optimumCost(problem);
      const choice = solveChoice(problem);
      expect(allocationTotalCost(problem, choice.allocation, choice.siteWait)).toBeGreaterThanOrEqual(optimum.cost * (1 - 1e-9));
      expect(solveNearest(problem).totalCost).toBeGreaterThanOrEqual(optimum.cost * (1 - 1e-9));
      expect(solveCapacityShare(problem).totalCost).toBeGreaterThanOrEqual(optimum.cost * (1 - 1e-9));
    });
  }

  it("an LP stopped by its size cap hands over to the dual method with a warning, never a NaN gap", () => {
    // The same plan twice: once by the dual method, once by an LP allowed too few variables to
    // certify its gap. The second must say so and answer with the dual method's allocation.
    const problem = randomProblem(21, 8, 3, { spread: true });
    const dual = solvePlan(problem, { method: "dual", maxUtilisation: 0.8 });
    const capped = solvePlan(problem, { method: "lp", maxUtilisation: 0.8, lpRefinementLimit: 60 });
    expect(dual.status).toBe("solved");
    expect(capped.method).toBe("dual");
    expect(capped.status).toBe("solved");
    expect(Number.isFinite(capped.diagnostics.relativeGap)).toBe(true);
    expect(capped.diagnostics.warnings[0]).toMatch(/LP method stopped early \(plan LP: refinement stopped at \d+ variables \(limit 60\)\.\); the dual method answered instead/);
    expect(capped.totalCost).toBe(dual.totalCost);
  });

  it("the dual method from warm-start tolls (the last answer's) reaches the same plan in fewer toll updates", () => {
    const problem = randomProblem(22, 12, 4, { spread: true });
    const cold = solvePlan(problem, { method: "dual", multipliers: "iterate", maxUtilisation: 0.3 });
    expect(cold.status).toBe("solved");
    expect(cold.siteToll?.some((toll) => toll > 0)).toBe(true);
    const warm = solvePlan(problem, { method: "dual", multipliers: "iterate", maxUtilisation: 0.3, warmStartTolls: cold.siteToll ?? undefined });
    expect(warm.status).toBe("solved");
    expect(warm.diagnostics.iterations).toBeLessThan(cold.diagnostics.iterations);
    expect(warm.totalCost).toBeCloseTo(cold.totalCost, 8);
    for (let j = 0; j < problem.m; j++) expect(warm.siteInflow[j]).toBeCloseTo(cold.siteInflow[j], 6);
  });

  it("auto uses the LP for a small plan and the dual method for a larger one", () => {
    expect(solvePlan(randomProblem(21, 4, 2, { spread: true })).method).toBe("lp");
    const larger = solvePlan(randomProblem(21, 40, 7, { spread: true }), { maxUtilisation: 0.8 });
    expect(larger.method).toBe("dual");
    expect(larger.status).toBe("solved");
  });

  it("nearest with one site equals choice (the only public option is the same), spread outside options", () => {
    // With a single site, choice and nearest offer each patient the same two options — the
    // site or the outside option — so the Wardrop equilibrium (Wardrop 1952, from memory) and
    // the fixed rule's balking equilibrium coincide; CHECKS.md's 64/9 is the sharp special case.
    for (const seed of [7, 8, 9]) {
      const base = randomProblem(seed, 6, 1, { spread: true });
      const choice = solveChoice(base);
      const nearest = solveNearest(base);
      let inflow = 0;
      for (let i = 0; i < base.n; i++) inflow += choice.allocation.flow[i];
      expect(nearest.siteInflow[0]).toBeCloseTo(inflow, 7);
      for (let i = 0; i < base.n; i++) expect(nearest.allocation.balked[i]).toBeCloseTo(choice.allocation.balked[i], 7);
    }
  });
});
