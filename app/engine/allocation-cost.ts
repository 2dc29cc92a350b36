/**
 * What an allocation costs, and how far it is from an equilibrium.
 *
 * Total cost (PRODUCT.md): Σ_ij f_ij·(W_j(x_j) + t_ij) + Σ_i B_i(b_i), where B_i is the reservation
 * cost of the b_i balkers (the lowest reservations balk first, see `outside-option.ts`).
 *
 * Relative gap (the traffic-assignment measure; Boyce, Ralevic-Dekic & Bar-Gera 2004, "Convergence
 * of traffic assignment: how much is enough?", *J. Transportation Engineering* 130(1)):
 *
 *   gap = (Σ flows × their cost + Σ balkers × their reservation cost − Σ_i d_i·E[min(r_i, u_i)])
 *         / (Σ flows × their cost + Σ balkers × their reservation cost),
 *
 * with u_i = min_j (c_j + t_ij) the source's cheapest public option. For the choice model c_j is
 * the wait W_j(x_j); for the optimum it is the marginal cost M_j(x_j) = W_j + x_j·W_j' and the
 * balkers' term is unchanged (its marginal is the marginal balker's reservation cost), so the
 * gap measures Wardrop's second principle exactly as it measures the first. A site toll (the plan
 * rule's Lagrange multipliers) adds to c_j in the gap but never to the reported total cost.
 *
 * The numerator is summed as non-negative per-source terms — Σ_j f_ij (g_ij − u_i) plus the
 * balking mismatch — rather than as a difference of two large totals, so gaps of 1e-14 are still
 * resolved.
 */
import type { Allocation, LineProblem } from "./problem";
import { rowsOf } from "./flow-rows";
import { cheapestSite, lowestCost, nearestSites } from "./nearest-sites";
import { balkingCost, expectedPatientCost } from "./outside-option";

/** Σ f·(wait + travel) + Σ balkers' reservation costs, in weeks-equivalent per week. */
export function allocationTotalCost(problem: LineProblem, allocation: Allocation, siteWait: Float64Array): number {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  const rows = rowsOf(allocation, m);
  const sites = new Int32Array(m);
  const flows = new Float64Array(m);
  let total = 0;
  for (let i = 0; i < n; i++) {
    const row = i * m;
    const count = rows.read(i, sites, flows);
    for (let k = 0; k < count; k++) {
      const j = sites[k];
      if (flows[k] > 0) total += flows[k] * (siteWait[j] + travelCost[row + j]);
    }
    total += balkingCost(allocation.balked[i], demand[i], outsideCost[i], outsideSpread[i]);
  }
  return total;
}

export interface GapTerms {
  /** Σ flows × their cost + Σ balkers × their reservation cost (with the given site costs and tolls). */
  actual: number;
  /** actual − Σ d_i·E[min(r_i, u_i)], summed from non-negative per-source terms. */
  excess: number;
  relativeGap: number;
}

/**
 * Relative gap of an allocation given each site's cost c_j (wait, or marginal cost for the
 * optimum) and an optional per-site toll.
 */
export function relativeGap(
  problem: LineProblem,
  allocation: Allocation,
  siteCost: Float64Array,
  siteToll?: Float64Array,
): GapTerms {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  const rows = rowsOf(allocation, m);
  const sites = new Int32Array(m);
  const flows = new Float64Array(m);
  // Each source's cheapest option from its nearest-site list (`cheapestSite`: the same site as a
  // scan of the whole row, which on a national instance is 2.8 million pairs per gap).
  const lists = nearestSites(travelCost, n, m);
  const tolled = siteToll ? Float64Array.from(siteCost, (cost, j) => cost + siteToll[j]) : siteCost;
  const lowest = lowestCost(tolled);
  let actual = 0;
  let excess = 0;
  for (let i = 0; i < n; i++) {
    const row = i * m;
    const best = cheapestSite(lists, travelCost, m, tolled, lowest, i);
    const cheapest = best < 0 ? Infinity : tolled[best] + travelCost[row + best];
    let served = 0;
    let routeExcess = 0;
    const count = rows.read(i, sites, flows);
    for (let k = 0; k < count; k++) {
      const j = sites[k];
      const flow = flows[k];
      if (flow <= 0) continue;
      const g = siteCost[j] + (siteToll ? siteToll[j] : 0) + travelCost[row + j];
      served += flow;
      actual += flow * g;
      routeExcess += flow * (g - cheapest);
    }
    const balked = allocation.balked[i];
    const balkCost = balkingCost(balked, demand[i], outsideCost[i], outsideSpread[i]);
    actual += balkCost;
    // Served patients paying `cheapest` plus balkers paying B(b), against each patient's own best.
    let balkExcess: number;
    if (!Number.isFinite(outsideCost[i])) balkExcess = balked > 0 ? Infinity : 0;
    // No allowed site (e.g. every pair beyond a journey limit): balking is the only option, so
    // the balkers pay exactly their own best and the source adds nothing (0·∞ must not be NaN).
    else if (!(cheapest < Infinity)) balkExcess = served > 0 ? Infinity : 0;
    else if (outsideSpread[i] === 0) {
      const o = outsideCost[i];
      balkExcess = cheapest <= o ? balked * (o - cheapest) : served * (cheapest - o);
    } else {
      const best = demand[i] * expectedPatientCost(cheapest, outsideCost[i], outsideSpread[i]);
      balkExcess = Math.max(0, served * cheapest + balkCost - best);
    }
    excess += routeExcess + balkExcess;
  }
  // An allocation that overloads a site (infinite wait) is infinitely far from equilibrium.
  const gap = !Number.isFinite(actual) || !Number.isFinite(excess) ? Infinity : actual > 0 ? excess / actual : 0;
  return { actual, excess, relativeGap: gap };
}

/**
 * Maximum-entropy split of row totals over a support with given column totals (matrix balancing,
 * Sinkhorn 1964 "A relationship between arbitrary positive matrices and doubly stochastic
 * matrices", *Ann. Math. Statist.* 35(2); Bregman 1967): the flows f_ij = α_i·β_j on the support
 * that meet both totals. Among all splits with these totals it has the largest entropy −Σ f ln f,
 * and it is the limit of the logit split as θ → ∞ among tied options — which is why tables built
 * from it do not change between runs. Rows may carry `slack` (an option with fixed weight 1 and
 * no column total, e.g. a sharp outside option), which then absorbs what the columns do not take.
 *
 * `support` lists, per row, the columns it may use. Returns flows per support entry in the same
 * order, the number of sweeps and the largest remaining column mismatch.
 */
export function maxEntropySplit(
  rowTotals: Float64Array,
  columnTotals: Float64Array,
  support: Int32Array[],
  options: { slack?: Uint8Array; tolerance?: number; maxSweeps?: number } = {},
): { flows: Float64Array[]; slackFlows: Float64Array; sweeps: number; mismatch: number } {
  const tolerance = options.tolerance ?? 1e-13;
  const maxSweeps = options.maxSweeps ?? 10_000;
  const rows = rowTotals.length;
  const columns = columnTotals.length;
  const beta = new Float64Array(columns).fill(1);
  const alpha = new Float64Array(rows);
  const columnSums = new Float64Array(columns);
  const scale = columnTotals.reduce((a, b) => a + b, 0) + rowTotals.reduce((a, b) => a + b, 0) || 1;
  let mismatch = Infinity;
  let sweeps = 0;
  for (; sweeps < maxSweeps; sweeps++) {
    // Rows: α_i = total_i / (Σ_support β_j + slack).
    columnSums.fill(0);
    for (let i = 0; i < rows; i++) {
      let weight = options.slack?.[i] ? 1 : 0;
      for (const j of support[i]) weight += beta[j];
      alpha[i] = weight > 0 ? rowTotals[i] / weight : 0;
      for (const j of support[i]) columnSums[j] += alpha[i] * beta[j];
    }
    mismatch = 0;
    for (let j = 0; j < columns; j++) mismatch = Math.max(mismatch, Math.abs(columnSums[j] - columnTotals[j]));
    if (mismatch <= tolerance * scale) break;
    for (let j = 0; j < columns; j++) {
      if (columnSums[j] > 0) beta[j] *= columnTotals[j] / columnSums[j];
    }
  }
  const flows = support.map((columnsOfRow, i) => Float64Array.from(columnsOfRow, (j) => alpha[i] * beta[j]));
  const slackFlows = Float64Array.from({ length: rows }, (_, i) => (options.slack?.[i] ? alpha[i] : 0));
  return { flows, slackFlows, sweeps, mismatch };
}
