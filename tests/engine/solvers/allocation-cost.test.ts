/**
 * The relative gap (Boyce, Ralevic-Dekic & Bar-Gera 2004, "Convergence of traffic assignment:
 * how much is enough?", J. Transportation Engineering 130(1)) for a source that has no allowed
 * site — every pair beyond a journey limit (travel cost Infinity). Its patients can only take the
 * outside option, at their own reservation cost, so the source adds nothing to the gap's excess;
 * 0·Infinity must not turn the gap into NaN. Hand-worked values, tolerance 1e-12.
 */
import { describe, expect, it } from "vitest";
import { allocationTotalCost, relativeGap } from "../../../app/engine/allocation-cost";
import { solveChoice } from "../../../app/engine/equilibrium";
import { solveOptimum } from "../../../app/engine/optimum";
import { balkingCost } from "../../../app/engine/outside-option";
import { lineProblem, mmc, seeded } from "./support/line-problem";

// Source 1 reaches the M/M/1 site (μ = 4/wk) at travel 0.5; source 2 reaches nothing.
const sharp = lineProblem({ demand: [2, 3], travel: [[0.5], [Infinity]], sites: [mmc(1, 4)], outsideCost: [10, 8], outsideSpread: [0, 0] });
const spread = lineProblem({ demand: [2, 3], travel: [[0.5], [Infinity]], sites: [mmc(1, 4)], outsideCost: [10, 8], outsideSpread: [0, 0.5] });

describe("relative gap with a source that has no allowed site", () => {
  // M/M/1 at x = 2, μ = 4: Wq = x/(μ(μ − x)) = 2/8 = 0.25 weeks.
  const siteWait = Float64Array.of(0.25);
  const allocation = { flow: Float64Array.of(2, 0), balked: Float64Array.of(0, 3) };

  it("sharp outside option: the unreachable source balks at cost o and adds no excess", () => {
    const gap = relativeGap(sharp, allocation, siteWait);
    // actual = 2·(0.25 + 0.5) + 3·8 = 25.5; excess = 0.
    expect(gap.actual).toBeCloseTo(25.5, 12);
    expect(gap.excess).toBe(0);
    expect(gap.relativeGap).toBe(0);
    expect(allocationTotalCost(sharp, allocation, siteWait)).toBeCloseTo(25.5, 12);
  });

  it("spread outside option: balkers pay the mean reservation cost, no excess", () => {
    const gap = relativeGap(spread, allocation, siteWait);
    // Reservations U[4, 12], all balk: 3·8 = 24; actual = 1.5 + 24 = 25.5.
    expect(gap.actual).toBeCloseTo(25.5, 12);
    expect(gap.excess).toBeCloseTo(0, 12);
    expect(gap.relativeGap).toBeCloseTo(0, 12);
  });

  it("a misallocation elsewhere is still measured", () => {
    // Source 1 balks although the site (0.75 total) is far below its outside cost 10: excess 2·(10 − 0.75).
    const bad = { flow: Float64Array.of(0, 0), balked: Float64Array.of(2, 3) };
    const gap = relativeGap(sharp, bad, Float64Array.of(0));
    expect(gap.excess).toBeCloseTo(2 * (10 - 0.5), 12);
    expect(gap.relativeGap).toBeCloseTo((2 * 9.5) / (20 + 24), 12);
  });

  it("choice and optimum converge and send the unreachable source's patients to the outside option", () => {
    for (const problem of [sharp, spread]) {
      for (const result of [solveChoice(problem), solveOptimum(problem)]) {
        expect(result.diagnostics.converged).toBe(true);
        expect(Number.isNaN(result.diagnostics.relativeGap)).toBe(false);
        expect(result.allocation.balked[1]).toBeCloseTo(3, 12);
        expect(result.allocation.flow[1]).toBe(0);
      }
    }
  });
});

/**
 * The gap reads each source's cheapest option from its nearest-site list (`cheapestSite`), not by
 * scanning the whole row. Reference: the definition above computed with a scan of every site, on
 * random problems with more sites than a list holds (48), forbidden pairs, exact ties and tolls.
 * The two must agree to the last bit (the same site costs, added in the same order).
 */
describe("relative gap from the nearest-site lists equals the definition with a full scan", () => {
  function scanned(problem: ReturnType<typeof lineProblem>, allocation: { flow: Float64Array; balked: Float64Array }, siteCost: Float64Array, toll?: Float64Array) {
    const { n, m, travelCost, outsideCost, outsideSpread, demand } = problem;
    let actual = 0;
    let excess = 0;
    for (let i = 0; i < n; i++) {
      let cheapest = Infinity;
      for (let j = 0; j < m; j++) cheapest = Math.min(cheapest, siteCost[j] + (toll ? toll[j] : 0) + travelCost[i * m + j]);
      let served = 0;
      let route = 0;
      for (let j = 0; j < m; j++) {
        const flow = allocation.flow[i * m + j];
        if (flow <= 0) continue;
        const g = siteCost[j] + (toll ? toll[j] : 0) + travelCost[i * m + j];
        served += flow;
        actual += flow * g;
        route += flow * (g - cheapest);
      }
      const balked = allocation.balked[i];
      const o = outsideCost[i];
      actual += balkingCost(balked, demand[i], o, outsideSpread[i]);
      // Sharp outside options only (spread 0): balkers pay o, the served `cheapest`.
      excess += route + (cheapest <= o ? balked * (o - cheapest) : served * (cheapest - o));
    }
    return { actual, excess };
  }

  for (const seed of [1, 2, 3, 4, 5, 6]) {
    it(`random problem ${seed}: 25 sources × 70 sites`, () => {
      const random = seeded(seed);
      const n = 25;
      const m = 70;
      // Costs on a coarse grid make exact ties common; a tenth of the pairs are forbidden.
      const travel = Array.from({ length: n }, () => Array.from({ length: m }, () => (random() < 0.1 ? Infinity : Math.round(random() * 40) / 8)));
      const problem = lineProblem({ demand: Array.from({ length: n }, () => 1 + random()), travel, sites: Array.from({ length: m }, () => mmc(2, 5)), outsideCost: 6, outsideSpread: 0 });
      const flow = new Float64Array(n * m);
      const balked = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const j = Math.floor(random() * m);
        if (travel[i][j] < Infinity) flow[i * m + j] = problem.demand[i] * 0.7;
        balked[i] = problem.demand[i] - flow[i * m + j];
      }
      const siteCost = Float64Array.from({ length: m }, () => Math.round(random() * 16) / 8);
      const toll = Float64Array.from({ length: m }, () => (random() < 0.5 ? 0 : Math.round(random() * 8) / 8));
      for (const t of [undefined, toll]) {
        const gap = relativeGap(problem, { flow, balked }, siteCost, t);
        const reference = scanned(problem, { flow, balked }, siteCost, t);
        expect(gap.actual).toBe(reference.actual);
        expect(gap.excess).toBe(reference.excess);
      }
    });
  }
});
