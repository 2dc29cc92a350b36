/**
 * The fixed referral rules `nearest` and `capacityShare`: patients do not choose a site, the
 * rule assigns one (or a split over several) — but patients still balk (PRODUCT.md, "Fixed rules
 * still let patients balk"): a patient whose reservation cost is below the cost of the option
 * they are given (the wait at the assigned site + the travel to it) leaves for the outside option.
 *
 * Why this reduces to one equation per site. A rule fixes, for every source i and site j, the
 * share a_ij of i's routine demand d_i that is sent to j. The patients of that "stream" (d_i·a_ij
 * of them) face only one public option, site j, whose cost g_ij = W_j(x_j) + t_ij depends on
 * nothing but site j's own inflow x_j. So site j's inflow solves the scalar fixed point
 *
 *   x_j = Σ_i d_i·a_ij·(1 − F_i(W_j(x_j) + t_ij)),
 *
 * where F_i is the share of i's patients whose reservation cost is below a cost (uniform on
 * [o(1−s), o(1+s)]; a step at o when s = 0; zero without an outside option). The right side is
 * non-increasing in x_j (W_j rises) and the left side increasing, so the root is unique; a sharp
 * threshold makes the right side jump, and the root is then a point where the marginal
 * patients are indifferent and only part of them stay (the monotone-inclusion solution).
 * We search x_j in the certified bracket [0, capacity_j]: at 0 the served demand is ≥ 0, at
 * capacity the wait is infinite and only patients without an outside option remain, so the
 * bracket always holds the root unless those alone overload the site. Newton is unsafe because
 * the right side may jump; safeguarded regula falsi (Illinois) keeps the bracket, is fast where
 * the function is smooth, and falls back to bisection, so about 45 steps reach double precision
 * whatever the instance.
 *
 * No steady state: if the patients with no outside option sent to a site already reach its
 * capacity, that rule has no steady state at that site (its wait is infinite). This is not an
 * error of the scenario — patient choice may well be fine because patients would go elsewhere —
 * so the rule reports converged = false, a warning naming the site and the shortfall, and
 * Infinity for that site's wait and for the total cost, instead of throwing.
 */

import { balkingCost, balkingShare, reservationRange } from "./outside-option";
import type { Allocation, LineProblem, SolveDiagnostics } from "./problem";

export type FixedRuleKey = "nearest" | "capacityShare";

/** A site the rule overloads (patients with no outside option alone reach its capacity). */
export interface FixedRuleOverload {
  siteId: string;
  /** Referrals/week with no outside option that the rule sends to the site. */
  demand: number;
  /** The site's capacity for routine referrals/week (SiteWaitModel.capacity). */
  capacity: number;
  /** demand − capacity ≥ 0 (referrals/week). */
  shortfall: number;
}

export interface FixedRuleSolution {
  rule: FixedRuleKey;
  allocation: Allocation;
  /** Routine inflow per site (referrals/week), the sum of the flows. */
  siteInflow: Float64Array;
  /** Routine-class mean queue wait per site (weeks) at that inflow; Infinity where overloaded. */
  siteWait: Float64Array;
  /**
   * Σ flows × (wait + travel) + Σ balkers × their reservation cost (weeks-equivalent/week).
   * Balkers of each stream are the patients with the lowest reservation costs in that stream.
   */
  totalCost: number;
  /** The shares a_ij (n*m, row-major) the rule assigned; rows sum to 1 or to 0 (no allowed site). */
  shares: Float64Array;
  overloads: FixedRuleOverload[];
  diagnostics: SolveDiagnostics;
}

export interface FixedRuleOptions {
  /** Bisection stops when the bracket is narrower than this share of the site's capacity. Default 1e-13. */
  tolerance?: number;
  /** Root-finding steps per site at most. Default 200 (bisection alone needs 45 at the default tolerance). */
  maxIterations?: number;
}

const DEFAULT_OPTIONS: Required<FixedRuleOptions> = { tolerance: 1e-13, maxIterations: 200 };

/**
 * The nearest rule: each source's routine patients are all sent to the allowed site (finite
 * travel cost) with the fewest road km; ties go to the site listed first, so results are
 * stable. A source with no allowed site is sent nowhere (its patients balk, or, without an
 * outside option, the rule has no steady state for it).
 */
export function nearestShares(problem: LineProblem): Float64Array {
  const { n, m, km, travelCost } = problem;
  const shares = new Float64Array(n * m);
  for (let i = 0; i < n; i++) {
    let best = -1;
    for (let j = 0; j < m; j++) {
      const pair = i * m + j;
      if (!Number.isFinite(travelCost[pair])) continue;
      if (best < 0 || km[pair] < km[i * m + best]) best = j;
    }
    if (best >= 0) shares[i * m + best] = 1;
  }
  return shares;
}

/**
 * The capacity-share rule: each source's routine patients are split over its allowed sites in
 * proportion to their capacity for routine patients, SiteWaitModel.capacity — for an M/M/c site
 * teams × ratePerTeam less the urgent inflow served ahead of routine patients, i.e. the capacity
 * actually available to the patients being shared out. Sites with no routine capacity get none.
 */
export function capacityShares(problem: LineProblem): Float64Array {
  const { n, m, travelCost, sites } = problem;
  const shares = new Float64Array(n * m);
  for (let i = 0; i < n; i++) {
    let total = 0;
    for (let j = 0; j < m; j++) {
      if (Number.isFinite(travelCost[i * m + j])) total += Math.max(0, sites[j].capacity);
    }
    if (!(total > 0)) continue;
    for (let j = 0; j < m; j++) {
      if (Number.isFinite(travelCost[i * m + j])) shares[i * m + j] = Math.max(0, sites[j].capacity) / total;
    }
  }
  return shares;
}

/** `nearest` with balking. */
export function solveNearest(problem: LineProblem, options: FixedRuleOptions = {}): FixedRuleSolution {
  return solveFixedShares(problem, nearestShares(problem), "nearest", options);
}

/** `capacityShare` with balking. */
export function solveCapacityShare(problem: LineProblem, options: FixedRuleOptions = {}): FixedRuleSolution {
  return solveFixedShares(problem, capacityShares(problem), "capacityShare", options);
}

/**
 * Share of a stream's patients who stay when their option costs `cost`: 1 − F(cost), F from
 * `outside-option.ts`. `tiesStay` decides the patients exactly indifferent at a sharp threshold
 * (s = 0, cost = o): they stay for the upper end of the bracket, leave for the lower.
 */
function stayingShare(cost: number, outsideCost: number, spread: number, tiesStay: boolean): number {
  if (outsideCost === Infinity) return 1;
  if (tiesStay && spread === 0 && cost === outsideCost) return 1;
  return 1 - balkingShare(cost, outsideCost, spread);
}

/**
 * `stayingShare` for the hot loops, with the stream's reservation range shifted by its travel:
 * patients stay while the site wait is below low = o(1−s) − t, none stay from high = o(1+s) − t,
 * and a linear share in between (low = high = Infinity: no outside option).
 */
function streamStaying(low: number, high: number, wait: number, tiesStay: boolean): number {
  if (low === Infinity || wait < low || (tiesStay && wait === low)) return 1;
  return wait < high ? (high - wait) / (high - low) : 0;
}

/** Reservation cost of a stream's balkers (the lowest reservation costs leave first); 0 without an outside option. */
function balkersCost(balked: number, demand: number, outsideCost: number, spread: number): number {
  if (!(balked > 0) || outsideCost === Infinity) return 0;
  // balkingCost's formula o(1−s)·b + o·s·b²/d, without its range object (hot loop).
  if (balked >= demand) return balkingCost(balked, demand, outsideCost, spread);
  return outsideCost * (1 - spread) * balked + (outsideCost * spread * balked * balked) / demand;
}

/**
 * Solves a fixed assignment with balking: `shares` (n*m) gives the share of each source's
 * demand sent to each site. Exposed so that other fixed rules (or what-ifs) can reuse it.
 */
export function solveFixedShares(
  problem: LineProblem,
  shares: Float64Array,
  rule: FixedRuleKey,
  options: FixedRuleOptions = {},
): FixedRuleSolution {
  const { tolerance, maxIterations } = { ...DEFAULT_OPTIONS, ...options };
  const { n, m, demand, outsideCost, outsideSpread, travelCost, sites, siteIds, sourceIds } = problem;
  const flow = new Float64Array(n * m);
  const balked = new Float64Array(n);
  const siteInflow = new Float64Array(m);
  const siteWait = new Float64Array(m);
  const overloads: FixedRuleOverload[] = [];
  const warnings: string[] = [];
  let iterations = 0;
  let converged = true;
  let steadyState = true;

  // Each site's streams, gathered once (CSR layout): the sources it receives, their demand
  // share, travel cost and outside option. Keeps every root-finding step O(streams of the site).
  const start = new Int32Array(m + 1);
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) if (demand[i] * shares[i * m + j] > 0) start[j + 1]++;
  for (let j = 0; j < m; j++) start[j + 1] += start[j];
  const streamSource = new Int32Array(start[m]);
  const streamDemand = new Float64Array(start[m]);
  const streamTravel = new Float64Array(start[m]);
  // Waits at which the stream's reservation range begins and ends: o(1 ∓ s) − travel.
  const streamLow = new Float64Array(start[m]);
  const streamHigh = new Float64Array(start[m]);
  const fill = start.slice(0, m);
  for (let i = 0; i < n; i++) {
    const range = reservationRange(outsideCost[i], outsideSpread[i]);
    for (let j = 0; j < m; j++) {
      const stream = demand[i] * shares[i * m + j];
      if (!(stream > 0)) continue;
      const k = fill[j]++;
      streamSource[k] = i;
      streamDemand[k] = stream;
      streamTravel[k] = travelCost[i * m + j];
      streamLow[k] = range.low - streamTravel[k];
      streamHigh[k] = range.high - streamTravel[k];
    }
  }
  const served = (first: number, last: number, wait: number, tiesStay: boolean): number => {
    let total = 0;
    for (let k = first; k < last; k++) total += streamDemand[k] * streamStaying(streamLow[k], streamHigh[k], wait, tiesStay);
    return total;
  };

  for (let j = 0; j < m; j++) {
    const site = sites[j];
    const capacity = site.capacity;
    const first = start[j];
    const last = start[j + 1];
    let captive = 0; // demand with no outside option: it stays whatever the wait
    for (let k = first; k < last; k++) if (outsideCost[streamSource[k]] === Infinity) captive += streamDemand[k];
    if (captive >= capacity && last > first) {
      overloads.push({ siteId: siteIds[j], demand: captive, capacity, shortfall: captive - capacity });
      warnings.push(
        `No steady state under ${rule} at site "${siteIds[j]}": ${captive.toFixed(2)} referrals/week with no outside ` +
          `option are sent to a routine capacity of ${capacity.toFixed(2)}/week (short by ` +
          `${(captive - capacity).toFixed(2)} referrals/week).`,
      );
      converged = false;
      steadyState = false;
      siteWait[j] = Infinity;
      for (let k = first; k < last; k++) {
        const i = streamSource[k];
        // Patients with an outside option all leave an infinitely long queue.
        if (outsideCost[i] === Infinity) flow[i * m + j] = streamDemand[k];
        else balked[i] += streamDemand[k];
      }
      siteInflow[j] = captive;
      continue;
    }

    // Root of g(x) = x − served(W(x)), increasing in x. Invariant: g(low) ≤ 0 < g(high).
    // Illinois steps (regula falsi that halves a stale end's value; Dowell & Jarratt 1971,
    // BIT 11:168–174) converge superlinearly where g is smooth; a bisection step whenever the
    // bracket failed to halve keeps the worst case at bisection's certified rate, which is what
    // a sharp threshold (a jump in g) needs.
    const excess = (x: number) => x - served(first, last, x >= capacity ? Infinity : site.wait(x), true);
    let low = 0;
    let high = capacity;
    let gLow = excess(low);
    let gHigh = capacity - captive;
    let root = NaN;
    let steps = 0;
    let side = 0;
    let widthBefore = high - low;
    if (gLow >= 0) root = 0;
    while (Number.isNaN(root) && high - low > tolerance * capacity && steps < maxIterations) {
      let middle = steps % 2 === 1 && high - low > 0.5 * widthBefore ? NaN : (low * gHigh - high * gLow) / (gHigh - gLow);
      if (steps % 2 === 1) widthBefore = high - low;
      if (!(middle > low && middle < high)) middle = 0.5 * (low + high);
      if (middle <= low || middle >= high) break;
      const value = excess(middle);
      steps++;
      if (Math.abs(value) <= 1e-14 * capacity) root = middle;
      else if (value > 0) {
        high = middle;
        gHigh = value;
        if (side === 1) gLow *= 0.5;
        side = 1;
      } else {
        low = middle;
        gLow = value;
        if (side === -1) gHigh *= 0.5;
        side = -1;
      }
    }
    iterations = Math.max(iterations, steps);
    if (!Number.isNaN(root)) {
      low = root;
      high = root;
    } else if (high - low > tolerance * capacity * 2 && high - low > 4 * Number.EPSILON * capacity) {
      converged = false;
      warnings.push(`${rule}: the inflow at site "${siteIds[j]}" was not pinned down in ${maxIterations} steps.`);
    }

    // Patients served at the bracket's ends; the root lies between. A sharp threshold crossed
    // inside the bracket is the indifferent group: only part of it stays, so interpolate
    // between the two ends to make the inflow consistent with the bracket.
    const waitLow = site.wait(low);
    const waitHigh = high >= capacity ? Infinity : site.wait(high);
    const servedLow = served(first, last, waitLow, true);
    const servedHigh = served(first, last, waitHigh, false);
    const target = 0.5 * (low + high);
    const weight = servedLow > servedHigh ? Math.min(1, Math.max(0, (target - servedHigh) / (servedLow - servedHigh))) : 0;
    let inflow = 0;
    for (let k = first; k < last; k++) {
      const i = streamSource[k];
      const stayHigh = streamStaying(streamLow[k], streamHigh[k], waitHigh, false);
      const stayLow = streamStaying(streamLow[k], streamHigh[k], waitLow, true);
      const staying = streamDemand[k] * (stayHigh + weight * (stayLow - stayHigh));
      flow[i * m + j] = staying;
      balked[i] += streamDemand[k] - staying;
      inflow += staying;
    }
    siteInflow[j] = inflow;
    siteWait[j] = inflow >= capacity ? Infinity : site.wait(inflow);
  }

  // Sources the rule sends nowhere (no allowed site): they balk, or there is no steady state.
  for (let i = 0; i < n; i++) {
    let assigned = 0;
    for (let j = 0; j < m; j++) assigned += shares[i * m + j];
    const unassigned = demand[i] * Math.max(0, 1 - assigned);
    if (unassigned <= 1e-12 * Math.max(1, demand[i])) continue;
    if (outsideCost[i] === Infinity) {
      converged = false;
      steadyState = false;
      warnings.push(
        `No steady state under ${rule} for source "${sourceIds[i]}": it has no allowed site and no outside option ` +
          `(${unassigned.toFixed(2)} referrals/week unserved).`,
      );
    }
    balked[i] += unassigned;
  }

  const { totalCost, relativeGap } = fixedRuleCost(problem, shares, flow, siteWait);
  return {
    rule,
    allocation: { flow, balked },
    siteInflow,
    siteWait,
    totalCost: steadyState ? totalCost : Infinity,
    shares,
    overloads,
    diagnostics: { converged, iterations, relativeGap: steadyState ? relativeGap : Infinity, warnings },
  };
}

/**
 * Total cost and relative gap of a fixed-rule allocation, stream by stream.
 *
 * Each stream (the patients of source i the rule sends to site j, or sends nowhere) has two
 * options: the site, at cost g = W_j + t_ij, or the outside option at their own reservation cost.
 * Its cost is y·g + (cost of its balkers, the lowest reservation costs); its best possible cost
 * is that of every patient taking the cheaper of the two, d·∫ min(g, r(u)) du. The relative gap
 * is PRODUCT.md's (Σ flows × their cost + balkers' cost − Σ demand × cheapest option) / the
 * former, with the choice set a fixed rule leaves: zero exactly when the balking decisions
 * are in equilibrium.
 */
export function fixedRuleCost(
  problem: LineProblem,
  shares: Float64Array,
  flow: Float64Array,
  siteWait: Float64Array,
): { totalCost: number; relativeGap: number } {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  let actual = 0;
  let best = 0;
  for (let i = 0; i < n; i++) {
    const o = outsideCost[i];
    const s = outsideSpread[i];
    let assigned = 0;
    for (let j = 0; j < m; j++) {
      const pair = i * m + j;
      const stream = demand[i] * shares[pair];
      assigned += shares[pair];
      if (stream <= 0) continue;
      const cost = siteWait[j] + travelCost[pair];
      const staying = flow[pair];
      const leaving = Math.max(0, stream - staying);
      actual += (staying > 0 ? staying * cost : 0) + balkersCost(leaving, stream, o, s);
      if (o === Infinity) best += stream * cost;
      else {
        const optimalStaying = stream * stayingShare(cost, o, s, true);
        best += (optimalStaying > 0 ? optimalStaying * cost : 0) + balkersCost(stream - optimalStaying, stream, o, s);
      }
    }
    const unassigned = demand[i] * Math.max(0, 1 - assigned);
    if (unassigned > 0 && o !== Infinity) {
      const cost = balkersCost(unassigned, unassigned, o, s);
      actual += cost;
      best += cost;
    }
  }
  return { totalCost: actual, relativeGap: actual > 0 ? Math.max(0, (actual - best) / actual) : 0 };
}
