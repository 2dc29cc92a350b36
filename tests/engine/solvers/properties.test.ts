/**
 * Properties of the solvers on seeded random instances (the same instances every run):
 * Wardrop's conditions on `choice` and, with marginal costs, on `optimum` (Wardrop 1952, Proc.
 * Inst. Civil Engineers 1(3):325–378 — from memory); price of anarchy ≥ 1; the bounds of Haviv &
 * Roughgarden (2007) and Roughgarden (2003); logit → Wardrop as θ grows (Sheffi 1985, Urban
 * Transportation Networks — from memory); waits rise with demand; the maximum-entropy split.
 */
import { describe, expect, it } from "vitest";
import { allocationTotalCost, maxEntropySplit, relativeGap } from "../../../app/engine/allocation-cost";
import { solveChoice } from "../../../app/engine/equilibrium";
import { solveLogit } from "../../../app/engine/logit";
import { solveOptimum } from "../../../app/engine/optimum";
import { balkingShare } from "../../../app/engine/outside-option";
import { type LineProblem, NoSteadyStateError } from "../../../app/engine/problem";
import { LARGE, generateRegion } from "../../bench/generate";
import { lineProblem, loadsOf, mmc, seeded } from "./support/line-problem";

function randomInstance(seed: number, n = 12, m = 5): LineProblem {
  const random = seeded(seed);
  const sites = Array.from({ length: m }, () => mmc(1 + Math.floor(random() * 5), 1 + 4 * random()));
  const capacity = sites.reduce((sum, site) => sum + site.capacity, 0);
  const raw = Array.from({ length: n }, () => 0.2 + random());
  const scale = (0.95 * capacity) / raw.reduce((a, b) => a + b, 0);
  const travel = Array.from({ length: n }, () => Array.from({ length: m }, () => 2 * random()));
  const outsideCost: number[] = [];
  const outsideSpread: number[] = [];
  for (let i = 0; i < n; i++) {
    const kind = random();
    outsideCost.push(kind < 0.3 ? Infinity : 0.5 + 3 * random());
    outsideSpread.push(kind < 0.6 ? 0 : 0.2 + 0.6 * random());
  }
  // Demand up to 95% of capacity; with some captive demand the instance still has a steady state.
  return lineProblem({ demand: raw.map((d) => d * scale), travel, sites, outsideCost, outsideSpread });
}

/** Cost of option j for source i given site costs c. */
function optionCost(problem: LineProblem, siteCost: ArrayLike<number>, i: number, j: number): number {
  return siteCost[j] + problem.travelCost[i * problem.m + j];
}

/**
 * Wardrop's conditions with balking: every used site costs the source's minimum (within tol);
 * the balking share is F(min) for a spread outside option, and for a sharp one patients stay
 * only if min ≤ o and balk only if min ≥ o.
 */
function expectWardrop(problem: LineProblem, flow: Float64Array, balked: Float64Array, siteCost: ArrayLike<number>, tolerance: number): void {
  const { n, m } = problem;
  for (let i = 0; i < n; i++) {
    let cheapest = Infinity;
    for (let j = 0; j < m; j++) cheapest = Math.min(cheapest, optionCost(problem, siteCost, i, j));
    const d = problem.demand[i];
    for (let j = 0; j < m; j++) {
      if (flow[i * m + j] > 1e-9 * d) expect(optionCost(problem, siteCost, i, j) - cheapest).toBeLessThanOrEqual(tolerance);
    }
    const o = problem.outsideCost[i];
    const spread = problem.outsideSpread[i];
    if (!Number.isFinite(o)) expect(balked[i]).toBeLessThanOrEqual(1e-9 * d);
    else if (spread > 0) expect(balked[i] / d).toBeCloseTo(balkingShare(cheapest, o, spread), 7);
    else {
      if (balked[i] > 1e-9 * d) expect(cheapest).toBeGreaterThanOrEqual(o - tolerance);
      if (balked[i] < d * (1 - 1e-9)) expect(cheapest).toBeLessThanOrEqual(o + tolerance);
    }
  }
}

const seeds = [1, 2, 3, 4, 5, 6, 7, 8];

describe("choice satisfies Wardrop's first principle with balking", () => {
  it.each(seeds)("random instance %i", (seed) => {
    const problem = randomInstance(seed);
    const choice = solveChoice(problem);
    expect(choice.diagnostics.converged).toBe(true);
    expect(choice.diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
    const loads = loadsOf(problem, choice.allocation.flow);
    // Reported waits are the waits of the reported loads.
    loads.forEach((x, j) => expect(choice.siteWait[j]).toBeCloseTo(problem.sites[j].wait(x), 10));
    expectWardrop(problem, choice.allocation.flow, choice.allocation.balked, choice.siteWait, 1e-8);
    // Demand is conserved: served + balked = demand.
    for (let i = 0; i < problem.n; i++) {
      let served = 0;
      for (let j = 0; j < problem.m; j++) served += choice.allocation.flow[i * problem.m + j];
      expect(served + choice.allocation.balked[i]).toBeCloseTo(problem.demand[i], 10);
    }
  });
});

describe("optimum satisfies Wardrop's second principle (marginal costs)", () => {
  it.each(seeds)("random instance %i", (seed) => {
    const problem = randomInstance(seed);
    const optimum = solveOptimum(problem);
    expect(optimum.diagnostics.converged).toBe(true);
    const loads = loadsOf(problem, optimum.allocation.flow);
    const marginal = loads.map((x, j) => problem.sites[j].wait(x) + x * problem.sites[j].waitSlope(x));
    expectWardrop(problem, optimum.allocation.flow, optimum.allocation.balked, marginal, 1e-8);
  });
});

describe("price of anarchy", () => {
  it.each(seeds)("is at least 1 on random instance %i", (seed) => {
    const problem = randomInstance(seed);
    const choice = solveChoice(problem);
    const optimum = solveOptimum(problem);
    const ratio = allocationTotalCost(problem, choice.allocation, choice.siteWait) / allocationTotalCost(problem, optimum.allocation, optimum.siteWait);
    expect(ratio).toBeGreaterThanOrEqual(1 - 1e-12);
  });

  it("is at most the number of servers used at the optimum (Haviv & Roughgarden 2007)", () => {
    // Haviv & Roughgarden (2007) "The price of anarchy in an exponential multi-server", Operations
    // Research Letters 35(4):421–426: heterogeneous M/M/1 servers in parallel, sojourn costs
    // (queue wait + 1/μ_j as a constant travel term), one stream of demand, no outside option.
    const random = seeded(99);
    for (let trial = 0; trial < 20; trial++) {
      const m = 2 + Math.floor(random() * 4);
      const rates = Array.from({ length: m }, () => 0.5 + 5 * random());
      const demand = (0.3 + 0.65 * random()) * rates.reduce((a, b) => a + b, 0);
      const problem = lineProblem({ demand: [demand], travel: [rates.map((mu) => 1 / mu)], sites: rates.map((mu) => mmc(1, mu)) });
      const choice = solveChoice(problem);
      const optimum = solveOptimum(problem);
      const ratio = allocationTotalCost(problem, choice.allocation, choice.siteWait) / allocationTotalCost(problem, optimum.allocation, optimum.siteWait);
      const used = Array.from(optimum.allocation.flow).filter((f) => f > 1e-9).length;
      expect(ratio).toBeGreaterThanOrEqual(1 - 1e-12);
      expect(ratio).toBeLessThanOrEqual(used + 1e-12);
    }
  });

  it("respects Roughgarden's M/M/1 bound ½(1 + √(u/(u − R))) on random instances", () => {
    // Roughgarden (2003) "The price of anarchy is independent of the network topology", J. Computer
    // and System Sciences 67(2):341–364: M/M/1 sojourn costs with capacities ≥ u, total rate ≤ R < u,
    // constant-cost alternatives allowed (here: travel costs and sharp outside options).
    // Bound 1.207107 at R/u = 0.5 and 2.081139 at R/u = 0.9.
    const bound = (ratio: number) => 0.5 * (1 + Math.sqrt(1 / (1 - ratio)));
    expect(bound(0.5)).toBeCloseTo(1.207107, 6);
    expect(bound(0.9)).toBeCloseTo(2.081139, 6);
    const random = seeded(2024);
    for (let trial = 0; trial < 20; trial++) {
      const u = 1 + 3 * random();
      const loadRatio = [0.5, 0.9][trial % 2];
      const m = 2 + Math.floor(random() * 3);
      const n = 1 + Math.floor(random() * 4);
      const rates = Array.from({ length: m }, () => u * (1 + 2 * random()));
      const shares = Array.from({ length: n }, () => 0.2 + random());
      const total = shares.reduce((a, b) => a + b, 0);
      const demand = shares.map((s) => (s / total) * loadRatio * u);
      const travel = demand.map(() => rates.map((mu) => 1 / mu + 0.5 * random()));
      const outsideCost = demand.map(() => (random() < 0.5 ? Infinity : 1 + 3 * random()));
      const problem = lineProblem({ demand, travel, sites: rates.map((mu) => mmc(1, mu)), outsideCost });
      const choice = solveChoice(problem);
      const optimum = solveOptimum(problem);
      const ratio = allocationTotalCost(problem, choice.allocation, choice.siteWait) / allocationTotalCost(problem, optimum.allocation, optimum.siteWait);
      expect(ratio).toBeLessThanOrEqual(bound(loadRatio) + 1e-12);
    }
  });
});

describe("logit approaches Wardrop as θ grows", () => {
  it("the Wardrop gap of the logit allocation shrinks roughly like 1/θ and loads converge", () => {
    const problem = randomInstance(3);
    const wardrop = loadsOf(problem, solveChoice(problem).allocation.flow);
    const gaps: number[] = [];
    const distances: number[] = [];
    // From θ = 100 on, the instance is in the asymptotic regime where only tied options keep shares.
    for (const theta of [100, 1000, 10000, 100000]) {
      const logit = solveLogit(problem, theta);
      expect(logit.diagnostics.converged).toBe(true);
      gaps.push(relativeGap(problem, logit.allocation, logit.siteWait).relativeGap);
      const loads = loadsOf(problem, logit.allocation.flow);
      distances.push(Math.max(...loads.map((x, j) => Math.abs(x - wardrop[j]))));
    }
    for (let k = 1; k < gaps.length; k++) {
      expect(gaps[k]).toBeLessThan(gaps[k - 1]);
      // Ten times θ: gap down by a factor between 3 and 30 ("roughly ∝ 1/θ").
      expect(gaps[k - 1] / gaps[k]).toBeGreaterThan(3);
      expect(gaps[k - 1] / gaps[k]).toBeLessThan(30);
      expect(distances[k]).toBeLessThan(distances[k - 1]);
    }
    expect(distances[distances.length - 1]).toBeLessThan(1e-2);
  });
});

describe("waits rise with demand", () => {
  // Site choice is a gross-substitutes system (raising one site's cost moves patients to the
  // others), so the equilibrium site costs are monotone in demand: scaling every practice's demand
  // up cannot lower any site's wait — under choice, logit and optimum alike.
  it.each([1, 2, 3, 4])("random instance %i, demand × 1.05", (seed) => {
    const base = randomInstance(seed);
    const more = { ...base, demand: base.demand.map((d) => d * 1.05) };
    for (const solve of [solveChoice, solveOptimum, (p: LineProblem) => solveLogit(p, 3)]) {
      const before = solve(base).siteWait;
      const after = solve(more).siteWait;
      before.forEach((w, j) => expect(after[j]).toBeGreaterThanOrEqual(w - 1e-9));
    }
  });
});

describe("maximum-entropy split among tied options", () => {
  it("matrix balancing gives the product form α_i·β_j (independence for a full support)", () => {
    // Sinkhorn (1964), Ann. Math. Statist. 35(2): with full support the max-entropy table with
    // margins r, c is r_i·c_j/T. Rows (2, 1), columns (1.5, 1.5) ⇒ [[1, 1], [0.5, 0.5]].
    const support = [Int32Array.from([0, 1]), Int32Array.from([0, 1])];
    const { flows, mismatch } = maxEntropySplit(Float64Array.from([2, 1]), Float64Array.from([1.5, 1.5]), support);
    expect(mismatch).toBeLessThan(1e-12);
    expect(Array.from(flows[0])).toEqual([expect.closeTo(1, 12), expect.closeTo(1, 12)]);
    expect(Array.from(flows[1])).toEqual([expect.closeTo(0.5, 12), expect.closeTo(0.5, 12)]);
  });

  it("choice splits tied practices in product form, the same every run", () => {
    // Two practices at the same place (identical travel) tied between two sites: the flows are
    // not unique, and the maximum-entropy split has f_11·f_22 = f_12·f_21 (each practice splits
    // in the sites' load proportions).
    const problem = lineProblem({
      demand: [1, 3],
      travel: [[0.2, 0.3], [0.2, 0.3]],
      sites: [mmc(2, 1.2), mmc(3, 1)],
    });
    const first = solveChoice(problem);
    const second = solveChoice(problem);
    const f = first.allocation.flow;
    expect(f[0] * f[3]).toBeCloseTo(f[1] * f[2], 10);
    expect(f[0] / (f[0] + f[1])).toBeCloseTo(f[2] / (f[2] + f[3]), 10);
    expect(Array.from(second.allocation.flow)).toEqual(Array.from(f));
    // And the two sites are genuinely tied.
    expect(first.siteWait[0] + 0.2).toBeCloseTo(first.siteWait[1] + 0.3, 10);
  });
});

describe("site tolls, diagnostics and bad states", () => {
  it("a site toll moves patients away but is not part of the waits", () => {
    const problem = randomInstance(5);
    const base = solveChoice(problem);
    const toll = new Float64Array(problem.m);
    toll[0] = 0.5;
    const tolled = solveChoice(problem, { siteToll: toll });
    expect(tolled.diagnostics.converged).toBe(true);
    const before = loadsOf(problem, base.allocation.flow);
    const after = loadsOf(problem, tolled.allocation.flow);
    expect(after[0]).toBeLessThan(before[0]);
    after.forEach((x, j) => expect(tolled.siteWait[j]).toBeCloseTo(problem.sites[j].wait(x), 10));
    // Wardrop holds with the toll added to the site's cost.
    const tolledCost = Array.from(tolled.siteWait, (w, j) => w + toll[j]);
    expectWardrop(problem, tolled.allocation.flow, tolled.allocation.balked, tolledCost, 1e-8);
  });

  it("reports an unconverged run instead of hiding it", () => {
    const problem = randomInstance(6);
    const result = solveChoice(problem, { maxIterations: 1 });
    expect(result.diagnostics.converged).toBe(false);
    expect(result.diagnostics.relativeGap).toBeGreaterThan(1e-10);
    expect(result.diagnostics.warnings.join(" ")).toMatch(/did not converge/);
  });

  it("throws NoSteadyStateError when captive demand exceeds all capacity", () => {
    const problem = lineProblem({ demand: [3, 2], travel: [[0, 1], [1, 0]], sites: [mmc(2, 1), mmc(2, 1)] });
    expect(() => solveChoice(problem)).toThrow(NoSteadyStateError);
    expect(() => solveOptimum(problem)).toThrow(/exceeds the capacity of sites P1, P2 \(4\.00\/week\) by 1\.00/);
  });
});

describe("convergence on generated regions of 500 practices × 40 sites", () => {
  // Seeds 5 and 13 once stopped at relative gaps of 1.4e-9 and 1.6e-9: a nearly empty site
  // with many teams has a wait so flat in its load that its cost cannot pin the inflow down
  // to 1e-11, and the exact finish mistook that for an unbalanced group. The finish now
  // allows each site the inflow that rounding of its cost leaves open.
  for (const seed of [1, 2, 3, 5, 8, 13, 21]) {
    it(`seed ${seed}: choice and optimum reach the default tolerance (1e-10)`, () => {
      const [problem] = generateRegion({ ...LARGE, seed });
      for (const solve of [solveChoice, solveOptimum]) {
        const { diagnostics } = solve(problem);
        expect(diagnostics.converged).toBe(true);
        expect(diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
      }
    });
  }
});

describe("regions with more sites than the dense Newton limit (1,500 practices × 160 sites)", () => {
  // Beyond 120 sites the Newton systems are solved block by block (sites that share no source are
  // uncoupled) or by conjugate gradients, and each evaluation reads per-source candidate lists;
  // the answer must still meet Wardrop's conditions (Wardrop 1952) at the default tolerance.
  const spec = { ...LARGE, name: "1500×160", sources: 1500, sites: 160, widthKm: 320, heightKm: 360, towns: 60 };
  for (const seed of [3, 7]) {
    it(`seed ${seed}: choice and optimum converge and meet the first and second principles`, () => {
      const [problem] = generateRegion({ ...spec, seed });
      const choice = solveChoice(problem);
      expect(choice.diagnostics.converged).toBe(true);
      expect(choice.diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
      expectWardrop(problem, choice.allocation.flow, choice.allocation.balked, choice.siteWait, 1e-8);
      const optimum = solveOptimum(problem);
      expect(optimum.diagnostics.converged).toBe(true);
      expect(optimum.diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
      const loads = loadsOf(problem, optimum.allocation.flow);
      const marginal = loads.map((x, j) => problem.sites[j].wait(x) + x * problem.sites[j].waitSlope(x));
      expectWardrop(problem, optimum.allocation.flow, optimum.allocation.balked, marginal, 1e-8);
    });
  }
});
