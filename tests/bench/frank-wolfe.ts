/**
 * A textbook Frank–Wolfe baseline for the benchmark only (never used by the product):
 * Frank & Wolfe (1956) "An algorithm for quadratic programming", Naval Research Logistics
 * Quarterly 3; applied to traffic assignment by LeBlanc, Morlok & Pierskalla (1975). Elastic
 * demand by the excess-demand device (Gartner 1980): balking is one more "link" whose cost is the
 * marginal balker's reservation cost F⁻¹(b/d).
 *
 * Each iteration: all-or-nothing assignment at current costs (each source's whole demand to its
 * cheapest option), then an exact line search (bisection on the directional derivative of the
 * Beckmann objective). Costs are site waits for `choice` and marginal costs for `optimum`, the
 * same curves and the same relative gap as the product's solvers.
 */
import type { LineProblem } from "../../app/engine/problem";
import type { SiteCostCurve } from "../../app/engine/site-cost-curve";
import { expectedPatientCost, marginalBalkingCost } from "../../app/engine/outside-option";

export interface FrankWolfeTrace {
  /** (elapsed ms, relative gap) after each iteration. */
  points: { ms: number; gap: number }[];
  /** First time the gap reached the target, or null. */
  msToTarget: number | null;
}

export function frankWolfe(problem: LineProblem, curves: SiteCostCurve[], options: { target: number; timeLimitMs: number }): FrankWolfeTrace {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  const started = performance.now();
  const flow = new Float64Array(n * m);
  const balked = new Float64Array(n);
  const load = new Float64Array(m);
  // Feasible start: every source split over its allowed sites in proportion to capacity.
  for (let i = 0; i < n; i++) {
    let weight = 0;
    for (let j = 0; j < m; j++) if (travelCost[i * m + j] < Infinity) weight += curves[j].capacity;
    for (let j = 0; j < m; j++) {
      if (travelCost[i * m + j] < Infinity) flow[i * m + j] = (demand[i] * curves[j].capacity) / weight;
      load[j] += flow[i * m + j];
    }
  }
  const target = new Float64Array(n);
  const targetBalk = new Uint8Array(n);
  const targetLoad = new Float64Array(m);
  const cost = new Float64Array(m);
  const points: { ms: number; gap: number }[] = [];
  let msToTarget: number | null = null;
  for (;;) {
    for (let j = 0; j < m; j++) cost[j] = curves[j].cost(load[j]);
    // All-or-nothing direction, and the gap at the current point (same definition as the product).
    targetLoad.fill(0);
    let actual = 0;
    let best = 0;
    for (let i = 0; i < n; i++) {
      const row = i * m;
      let cheapest = Infinity;
      let cheapestSite = -1;
      for (let j = 0; j < m; j++) {
        const g = cost[j] + travelCost[row + j];
        const f = flow[row + j];
        if (f > 0) {
          actual += f * g;
        }
        if (g < cheapest) {
          cheapest = g;
          cheapestSite = j;
        }
      }
      const o = outsideCost[i];
      const s = outsideSpread[i];
      if (balked[i] > 0) {
        const low = o * (1 - s);
        actual += balked[i] * (low + marginalBalkingCost(balked[i], demand[i], o, s)) / 2;
      }
      best += demand[i] * expectedPatientCost(cheapest, o, s);
      // The balking link's cost at the current balking is the marginal balker's reservation.
      const balkLinkCost = Number.isFinite(o) ? marginalBalkingCost(balked[i], demand[i], o, s) : Infinity;
      targetBalk[i] = balkLinkCost < cheapest ? 1 : 0;
      target[i] = targetBalk[i] ? -1 : cheapestSite;
      if (!targetBalk[i]) targetLoad[cheapestSite] += demand[i];
    }
    const gap = actual > 0 ? (actual - best) / actual : 0;
    const ms = performance.now() - started;
    points.push({ ms, gap });
    if (gap <= options.target && msToTarget === null) msToTarget = ms;
    if (msToTarget !== null || ms > options.timeLimitMs) break;
    // Exact line search: the directional derivative of the Beckmann objective is increasing in α.
    // Travel costs are constant: their part of the slope does not depend on α.
    let travelSlope = 0;
    for (let i = 0; i < n; i++) {
      const row = i * m;
      for (let k = 0; k < m; k++) if (flow[row + k] > 0) travelSlope -= flow[row + k] * travelCost[row + k];
      if (target[i] >= 0) travelSlope += demand[i] * travelCost[row + target[i]];
    }
    const slopeAt = (alpha: number): number => {
      let slope = travelSlope;
      for (let j = 0; j < m; j++) {
        const delta = targetLoad[j] - load[j];
        if (delta !== 0) slope += delta * curves[j].cost(load[j] + alpha * delta);
      }
      for (let i = 0; i < n; i++) {
        const balkDelta = (targetBalk[i] ? demand[i] : 0) - balked[i];
        if (balkDelta !== 0) slope += balkDelta * marginalBalkingCost(balked[i] + alpha * balkDelta, demand[i], outsideCost[i], outsideSpread[i]);
      }
      return Number.isNaN(slope) ? Infinity : slope;
    };
    let lo = 0;
    let hi = 1;
    if (slopeAt(1) <= 0) lo = 1;
    else {
      for (let step = 0; step < 40; step++) {
        const mid = 0.5 * (lo + hi);
        if (slopeAt(mid) > 0) hi = mid;
        else lo = mid;
      }
    }
    const alpha = lo;
    for (let i = 0; i < n; i++) {
      const row = i * m;
      for (let k = 0; k < m; k++) flow[row + k] *= 1 - alpha;
      if (target[i] >= 0) flow[row + target[i]] += alpha * demand[i];
      balked[i] = (1 - alpha) * balked[i] + (targetBalk[i] ? alpha * demand[i] : 0);
    }
    for (let j = 0; j < m; j++) load[j] += alpha * (targetLoad[j] - load[j]);
  }
  return { points, msToTarget };
}

/** Best gap reached within `ms`. */
export function gapWithin(trace: FrankWolfeTrace, ms: number): number {
  let best = Infinity;
  for (const point of trace.points) if (point.ms <= ms) best = Math.min(best, point.gap);
  return best;
}
