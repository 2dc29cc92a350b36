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
import type { Allocation, LineProblem, SiteWaitModel, SolveDiagnostics } from "./problem";

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
  const capacity = Float64Array.from(sites, (site) => Math.max(0, site.capacity));
  for (let i = 0; i < n; i++) {
    const row = i * m;
    let total = 0;
    for (let j = 0; j < m; j++) if (travelCost[row + j] !== Infinity && !Number.isNaN(travelCost[row + j])) total += capacity[j];
    if (!(total > 0)) continue;
    for (let j = 0; j < m; j++) if (travelCost[row + j] !== Infinity && !Number.isNaN(travelCost[row + j])) shares[row + j] = capacity[j] / total;
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
 * Share of a stream's patients who stay (1 − F of `outside-option.ts`), with the stream's
 * reservation range shifted by its travel: patients stay while the site wait is below
 * low = o(1−s) − t, none stay from high = o(1+s) − t, and a linear share in between
 * (low = high = Infinity: no outside option). `tiesStay` decides the patients exactly
 * indifferent at a sharp threshold (s = 0, wait = low): they stay for the upper end of a
 * bracket, leave for the lower.
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
 * What one pass over a site's streams at wait w tells: the patients served S(w) (ties at a sharp
 * threshold stay), the exact slope −B of S there, and the interval (below, above] of waits on
 * which S is exactly S(w) − B·(w' − w) — no stream's reservation range begins or ends inside it.
 */
interface StreamPass {
  wait: number;
  served: number;
  slope: number;
  below: number;
  above: number;
}

/** Streams of one site in CSR order with their demand and the waits where their reservation range begins and ends. */
interface SiteStreams {
  demand: Float64Array;
  low: Float64Array;
  high: Float64Array;
}

/** One pass over streams first..last−1 at wait w (the patients with no outside option are not among them). */
function passStreams(streams: SiteStreams, first: number, last: number, wait: number): StreamPass {
  const { demand, low, high } = streams;
  let served = 0;
  let slope = 0;
  let below = -Infinity;
  let above = Infinity;
  for (let k = first; k < last; k++) {
    const lo = low[k];
    const hi = high[k];
    if (wait <= lo) {
      // Everyone stays (at wait = lo too: the share is 1 there, and ties stay at a sharp threshold).
      served += demand[k];
      if (lo < above) above = lo;
    } else if (wait < hi) {
      const rate = demand[k] / (hi - lo);
      served += rate * (hi - wait);
      slope += rate;
      if (lo > below) below = lo;
      if (hi < above) above = hi;
    } else if (hi > below) below = hi;
  }
  return { wait, served, slope, below, above };
}

/**
 * Root of the local model x = S(w) − B·(W(x) − w) of one pass (S including the captive patients)
 * inside [low, high], or NaN when the model has none there. The model is a scalar equation in x
 * with W increasing, solved by Newton steps safeguarded by bisection: no pass over the streams.
 */
function modelRoot(site: SiteWaitModel, pass: StreamPass, captive: number, low: number, high: number): number {
  const served = captive + pass.served;
  const q = (x: number) => {
    const wait = x >= site.capacity ? Infinity : site.wait(x);
    return pass.slope > 0 ? x - served + pass.slope * (wait - pass.wait) : x - served;
  };
  if (pass.slope === 0) return served >= low && served <= high ? served : NaN;
  let qLow = q(low);
  const qHigh = q(high);
  if (qLow > 0 || qHigh < 0) return NaN;
  if (qLow === 0) return low;
  let a = low;
  let b = high;
  let x = served >= low && served < high ? served : 0.5 * (low + high);
  for (let step = 0; step < 100 && b - a > 2 * Number.EPSILON * Math.max(1, b); step++) {
    const value = q(x);
    if (value === 0) return x;
    if (value > 0) b = x;
    else {
      a = x;
      qLow = value;
    }
    const slope = 1 + pass.slope * (x >= site.capacity ? Infinity : site.waitSlope(x));
    let next = x - value / slope;
    if (!(next > a && next < b)) next = 0.5 * (a + b);
    if (next === x) break;
    x = next;
  }
  return x;
}

/**
 * Solves a fixed assignment with balking: `shares` (n*m) gives the share of each source's
 * demand sent to each site. Exposed so that other fixed rules (or what-ifs) can reuse it.
 *
 * Per site, the served demand S(w) is piecewise linear in the wait (with downward jumps at sharp
 * thresholds), so one pass over the site's streams gives S, its exact slope and the interval on
 * which that line is exact. The root search in the inflow x keeps the certified bracket
 * [0, capacity] and tries, after every pass, the root of each bracket end's exact local model: if
 * it falls where its model is exact, it is the root. Otherwise the latest model's root is the
 * next point (a Newton step with the exact slope), with a bisection whenever it leaves the bracket
 * or the bracket fails to halve in two steps. When the bracket's two models meet at one sharp
 * threshold and neither has its root on its side, the root is the threshold itself (the
 * indifferent patients split). A few passes per site, whatever the number of streams.
 *
 * Streams that cannot stay at any reachable wait (their range ends below the empty site's wait)
 * and patients without an outside option (always staying) are settled outside the passes. All n·m
 * pairs are read once, to list the streams in source order; the flows and costs are then written
 * stream by stream in that order, which keeps memory access sequential on a national instance
 * (millions of pairs) and costs one step per source for `nearest`.
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

  // Each source's reservation range, and the wait of each empty site (no wait is ever lower).
  const rangeLow = new Float64Array(n);
  const rangeHigh = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const range = reservationRange(outsideCost[i], outsideSpread[i]);
    rangeLow[i] = range.low;
    rangeHigh[i] = range.high;
  }
  const capacity = Float64Array.from(sites, (site) => site.capacity);
  const emptyWait = Float64Array.from(sites, (site) => site.wait(0));

  // The only pass over all pairs: the streams (pairs with demand sent) in source order, and
  // each source's total share. Every later pass goes over the streams alone — for `nearest`
  // one per source instead of n·m pairs.
  const { pairs, firstPair, assigned } = listStreams(n, m, demand, shares);
  // Per site, the demand with no outside option (captive), whether any stream reaches it, and
  // how many streams may stay at some wait (the ones the search needs).
  const captive = new Float64Array(m);
  const reached = new Uint8Array(m);
  const start = new Int32Array(m + 1);
  for (let i = 0; i < n; i++) {
    const free = outsideCost[i] !== Infinity;
    for (let k = firstPair[i]; k < firstPair[i + 1]; k++) {
      const pair = pairs[k];
      const j = pair - i * m;
      reached[j] = 1;
      if (!free) captive[j] += demand[i] * shares[pair];
      else if (rangeHigh[i] - travelCost[pair] >= emptyWait[j]) start[j + 1]++;
    }
  }
  for (let j = 0; j < m; j++) start[j + 1] += start[j];
  // Those streams gathered per site (CSR layout), so every search pass is contiguous.
  const streams: SiteStreams = { demand: new Float64Array(start[m]), low: new Float64Array(start[m]), high: new Float64Array(start[m]) };
  const fill = start.slice(0, m);
  for (let i = 0; i < n; i++) {
    if (outsideCost[i] === Infinity) continue;
    for (let k = firstPair[i]; k < firstPair[i + 1]; k++) {
      const pair = pairs[k];
      const j = pair - i * m;
      const high = rangeHigh[i] - travelCost[pair];
      if (!(high >= emptyWait[j])) continue;
      const at = fill[j]++;
      streams.demand[at] = demand[i] * shares[pair];
      streams.low[at] = rangeLow[i] - travelCost[pair];
      streams.high[at] = high;
    }
  }

  // Per site, the waits at the ends of the final bracket and the share of the indifferent
  // patients (at a sharp threshold inside it) who stay; the flows are written from these.
  const waitLow = new Float64Array(m);
  const waitHigh = new Float64Array(m);
  const weight = new Float64Array(m);
  const overloaded = new Uint8Array(m);
  for (let j = 0; j < m; j++) {
    const site = sites[j];
    const cap = capacity[j];
    const first = start[j];
    const last = start[j + 1];
    if (captive[j] >= cap && reached[j]) {
      overloads.push({ siteId: siteIds[j], demand: captive[j], capacity: cap, shortfall: captive[j] - cap });
      warnings.push(
        `No steady state under ${rule} at site "${siteIds[j]}": ${captive[j].toFixed(2)} referrals/week with no outside ` +
          `option are sent to a routine capacity of ${cap.toFixed(2)}/week (short by ` +
          `${(captive[j] - cap).toFixed(2)} referrals/week).`,
      );
      converged = false;
      steadyState = false;
      overloaded[j] = 1;
      siteWait[j] = Infinity;
      continue;
    }

    // Root of g(x) = x − captive − S(W(x)), increasing in x. Invariant: g(low) ≤ 0 < g(high).
    const waitAt = (x: number) => (x >= cap ? Infinity : site.wait(x));
    let low = 0;
    let high = cap;
    let lowPass = passStreams(streams, first, last, waitAt(0));
    let highPass: StreamPass | null = null;
    let latest = lowPass;
    let root = NaN;
    let steps = 0;
    let widthBefore = high - low;
    if (low - captive[j] - lowPass.served >= 0) root = 0;
    // A model's root is the answer when it lies where that model is exact.
    const exactRoot = (pass: StreamPass | null): number => {
      if (!pass) return NaN;
      const x = modelRoot(site, pass, captive[j], low, high);
      if (Number.isNaN(x)) return NaN;
      const wait = waitAt(x);
      return wait > pass.below && wait <= pass.above ? x : NaN;
    };
    while (Number.isNaN(root) && high - low > tolerance * cap && steps < maxIterations) {
      root = exactRoot(lowPass);
      if (!Number.isNaN(root)) break;
      root = exactRoot(highPass);
      if (!Number.isNaN(root)) break;
      if (highPass && lowPass.above === highPass.below) {
        // Both sides are exact up to one threshold and neither has its root on its side: the
        // root is where the wait reaches that threshold. Narrow [low, high] onto it (W only).
        const threshold = lowPass.above;
        for (let halvings = 0; halvings < 200; halvings++) {
          const middle = 0.5 * (low + high);
          if (middle <= low || middle >= high) break;
          if (waitAt(middle) <= threshold) low = middle;
          else high = middle;
        }
        break;
      }
      const newton = latest === lowPass || latest === highPass ? modelRoot(site, latest, captive[j], low, high) : NaN;
      let middle = steps % 2 === 1 && high - low > 0.5 * widthBefore ? NaN : newton;
      if (steps % 2 === 1) widthBefore = high - low;
      if (!(middle > low && middle < high)) middle = 0.5 * (low + high);
      if (middle <= low || middle >= high) break;
      const pass = passStreams(streams, first, last, waitAt(middle));
      const value = middle - captive[j] - pass.served;
      steps++;
      latest = pass;
      if (Math.abs(value) <= 1e-14 * cap) root = middle;
      else if (value > 0) {
        high = middle;
        highPass = pass;
      } else {
        low = middle;
        lowPass = pass;
      }
    }
    iterations = Math.max(iterations, steps);
    if (!Number.isNaN(root)) {
      low = root;
      high = root;
    } else if (high - low > tolerance * cap * 2 && high - low > 4 * Number.EPSILON * cap) {
      converged = false;
      warnings.push(`${rule}: the inflow at site "${siteIds[j]}" was not pinned down in ${maxIterations} steps.`);
    }

    // Patients served at the bracket's ends; the root lies between. A sharp threshold crossed
    // inside the bracket is the indifferent group: only part of it stays, so interpolate
    // between the two ends to make the inflow consistent with the bracket.
    waitLow[j] = site.wait(low);
    waitHigh[j] = waitAt(high);
    const ends = servedAtEnds(streams, first, last, waitLow[j], waitHigh[j]);
    const servedLow = captive[j] + ends.low;
    const servedHigh = captive[j] + ends.high;
    const target = 0.5 * (low + high);
    weight[j] = servedLow > servedHigh ? Math.min(1, Math.max(0, (target - servedHigh) / (servedLow - servedHigh))) : 0;
  }

  // The flows, stream by stream in source order, from each site's final waits; sources the rule
  // sends nowhere (no allowed site) balk, or, without an outside option, have no steady state.
  for (let i = 0; i < n; i++) {
    const row = i * m;
    const low = rangeLow[i];
    const high = rangeHigh[i];
    const free = outsideCost[i] !== Infinity;
    let leaving = 0;
    for (let k = firstPair[i]; k < firstPair[i + 1]; k++) {
      const j = pairs[k] - row;
      const stream = demand[i] * shares[row + j];
      let staying: number;
      if (!free) staying = stream;
      else if (overloaded[j]) staying = 0; // patients with an outside option all leave an infinitely long queue
      else {
        const travel = travelCost[row + j];
        const stayHigh = streamStaying(low - travel, high - travel, waitHigh[j], false);
        const stayLow = streamStaying(low - travel, high - travel, waitLow[j], true);
        staying = stream * (stayHigh + weight[j] * (stayLow - stayHigh));
      }
      flow[row + j] = staying;
      leaving += stream - staying;
      siteInflow[j] += staying;
    }
    balked[i] = leaving;
    const unassigned = demand[i] * Math.max(0, 1 - assigned[i]);
    if (unassigned <= 1e-12 * Math.max(1, demand[i])) continue;
    if (!free) {
      converged = false;
      steadyState = false;
      warnings.push(
        `No steady state under ${rule} for source "${sourceIds[i]}": it has no allowed site and no outside option ` +
          `(${unassigned.toFixed(2)} referrals/week unserved).`,
      );
    }
    balked[i] += unassigned;
  }
  for (let j = 0; j < m; j++) if (!overloaded[j]) siteWait[j] = siteInflow[j] >= capacity[j] ? Infinity : sites[j].wait(siteInflow[j]);

  const { totalCost, relativeGap } = streamsCost(problem, shares, flow, siteWait, { pairs, firstPair, assigned });
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

/** Patients of streams first..last−1 who stay at the bracket's ends: ties stay at the lower, leave at the upper. */
function servedAtEnds(streams: SiteStreams, first: number, last: number, waitLow: number, waitHigh: number): { low: number; high: number } {
  let low = 0;
  let high = 0;
  for (let k = first; k < last; k++) {
    low += streams.demand[k] * streamStaying(streams.low[k], streams.high[k], waitLow, true);
    high += streams.demand[k] * streamStaying(streams.low[k], streams.high[k], waitHigh, false);
  }
  return { low, high };
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
  return streamsCost(problem, shares, flow, siteWait, listStreams(problem.n, problem.m, problem.demand, shares));
}

/** The streams of a fixed rule: pairs with demand sent (row-major indices, in source order). */
interface StreamList {
  pairs: Int32Array;
  /** Source i's streams are pairs[firstPair[i]] … pairs[firstPair[i + 1] − 1]. */
  firstPair: Int32Array;
  /** Σ_j shares of source i (1, or 0 when the rule sends it nowhere). */
  assigned: Float64Array;
}

function listStreams(n: number, m: number, demand: Float64Array, shares: Float64Array): StreamList {
  // Room for every pair; memory never written (most of it for `nearest`) is never touched.
  const pairs = new Int32Array(n * m);
  const firstPair = new Int32Array(n + 1);
  const assigned = new Float64Array(n);
  let count = 0;
  for (let i = 0; i < n; i++) {
    const row = i * m;
    let total = 0;
    for (let j = 0; j < m; j++) {
      const share = shares[row + j];
      total += share;
      if (demand[i] * share > 0) pairs[count++] = row + j;
    }
    assigned[i] = total;
    firstPair[i + 1] = count;
  }
  return { pairs, firstPair, assigned };
}

/** `fixedRuleCost` over a stream list. */
function streamsCost(
  problem: LineProblem,
  shares: Float64Array,
  flow: Float64Array,
  siteWait: Float64Array,
  { pairs, firstPair, assigned }: StreamList,
): { totalCost: number; relativeGap: number } {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  let actual = 0;
  let best = 0;
  for (let i = 0; i < n; i++) {
    const o = outsideCost[i];
    const s = outsideSpread[i];
    const row = i * m;
    if (o === Infinity) {
      // No outside option: every patient stays, so the actual and the best cost are the same.
      for (let k = firstPair[i]; k < firstPair[i + 1]; k++) {
        const pair = pairs[k];
        const stream = demand[i] * shares[pair];
        const cost = siteWait[pair - row] + travelCost[pair];
        const staying = flow[pair];
        actual += staying > 0 ? staying * cost : 0;
        best += stream * cost;
      }
    } else {
      // stayingShare and balkersCost written out (a national instance has millions of streams).
      const { low, high } = reservationRange(o, s);
      for (let k = firstPair[i]; k < firstPair[i + 1]; k++) {
        const pair = pairs[k];
        const stream = demand[i] * shares[pair];
        const cost = siteWait[pair - row] + travelCost[pair];
        const staying = flow[pair];
        const leaving = Math.max(0, stream - staying);
        actual += (staying > 0 ? staying * cost : 0) + streamBalkersCost(leaving, stream, low, high, o, s);
        const optimalStaying = stream * (cost <= low ? 1 : cost >= high ? 0 : 1 - (cost - low) / (high - low));
        best += (optimalStaying > 0 ? optimalStaying * cost : 0) + streamBalkersCost(stream - optimalStaying, stream, low, high, o, s);
      }
    }
    const unassigned = demand[i] * Math.max(0, 1 - assigned[i]);
    if (unassigned > 0 && o !== Infinity) {
      const cost = balkersCost(unassigned, unassigned, o, s);
      actual += cost;
      best += cost;
    }
  }
  return { totalCost: actual, relativeGap: actual > 0 ? Math.max(0, (actual - best) / actual) : 0 };
}

/** `balkersCost` with the reservation range [low, high] of (o, s) already at hand. */
function streamBalkersCost(balked: number, demand: number, low: number, high: number, outsideCost: number, spread: number): number {
  if (!(balked > 0)) return 0;
  if (balked >= demand) return (balked * (low + (low + Math.min(balked / demand, 1) * (high - low)))) / 2;
  return outsideCost * (1 - spread) * balked + (outsideCost * spread * balked * balked) / demand;
}
