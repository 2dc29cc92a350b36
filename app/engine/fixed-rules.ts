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

import { allocationFromRows, denseFlows, type FlowRows } from "./flow-rows";
import { nearestSites } from "./nearest-sites";
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
  /** The shares a_ij the rule assigned, source by source (`sharesArray` gives them as an n·m array). */
  shares: FixedShares;
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
 * A fixed rule's shares a_ij, given source by source rather than as an n·m array: on a national
 * instance that array is 22 MB of fresh memory per solve, and the rules need far less — nearest
 * one site per source, capacity share one total per source (its share of site j is capacity_j
 * over that total). The solver asks for one source's row at a time, into scratch arrays it
 * reuses, each time it goes over the streams.
 */
export interface FixedShares {
  /**
   * Writes source i's nonzero shares and their sites, in site order, into `shares` and `sites`
   * (room for m each) and returns how many there are. The shares sum to 1, or to 0 when the rule
   * sends the source nowhere.
   */
  row(source: number, sites: Int32Array, shares: Float64Array): number;
}

/**
 * The nearest rule: each source's routine patients are all sent to the allowed site (finite
 * travel cost) with the fewest road km; ties go to the site listed first, so results are
 * stable. A source with no allowed site is sent nowhere (its patients balk, or, without an
 * outside option, the rule has no steady state for it).
 */
export function nearestRuleShares(problem: LineProblem): FixedShares {
  const { n, m, km, travelCost } = problem;
  // Travel cost is km / kmPerWeek, so it never falls as km rises: the site with the fewest km has
  // the lowest travel cost, and only the sites tied at that cost need their km compared. They
  // lead the source's nearest-site list (sorted by travel cost), unless the tie runs past its end.
  const lists = nearestSites(travelCost, n, m);
  const nearest = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const base = i * lists.perSource;
    const end = base + lists.count[i];
    let best = -1;
    if (end > base && lists.costs[base] < lists.bound[i]) {
      const lowest = lists.costs[base];
      for (let k = base; k < end && lists.costs[k] === lowest; k++) {
        const j = lists.sites[k];
        if (best < 0 || km[i * m + j] < km[i * m + best] || (km[i * m + j] === km[i * m + best] && j < best)) best = j;
      }
    } else if (end > base) {
      for (let j = 0; j < m; j++) {
        const pair = i * m + j;
        if (!Number.isFinite(travelCost[pair])) continue;
        if (best < 0 || km[pair] < km[i * m + best]) best = j;
      }
    }
    nearest[i] = best;
  }
  return {
    row(source, sites, shares) {
      if (nearest[source] < 0) return 0;
      sites[0] = nearest[source];
      shares[0] = 1;
      return 1;
    },
  };
}

/**
 * The capacity-share rule: each source's routine patients are split over its allowed sites in
 * proportion to their capacity for routine patients, SiteWaitModel.capacity — for an M/M/c site
 * teams × ratePerTeam less the urgent inflow served ahead of routine patients, i.e. the capacity
 * actually available to the patients being shared out. Sites with no routine capacity get none.
 */
export function capacityRuleShares(problem: LineProblem): FixedShares {
  const { n, m, travelCost, sites } = problem;
  const capacity = Float64Array.from(sites, (site) => Math.max(0, site.capacity));
  // Each source's allowed capacity (in site order, as every row below divides by it).
  const total = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const row = i * m;
    let sum = 0;
    for (let j = 0; j < m; j++) if (travelCost[row + j] !== Infinity && !Number.isNaN(travelCost[row + j])) sum += capacity[j];
    total[i] = sum;
  }
  return {
    row(source, rowSites, rowShares) {
      const sum = total[source];
      if (!(sum > 0)) return 0;
      const row = source * m;
      let count = 0;
      for (let j = 0; j < m; j++) {
        const travel = travelCost[row + j];
        if (travel === Infinity || Number.isNaN(travel) || capacity[j] === 0) continue;
        rowSites[count] = j;
        rowShares[count++] = capacity[j] / sum;
      }
      return count;
    },
  };
}

/** The shares given as an n·m array (row-major), e.g. by a what-if. */
export function denseRuleShares(m: number, dense: Float64Array): FixedShares {
  return {
    row(source, sites, shares) {
      let count = 0;
      for (let j = 0; j < m; j++) {
        const share = dense[source * m + j];
        if (share === 0) continue;
        sites[count] = j;
        shares[count++] = share;
      }
      return count;
    },
  };
}

/** A rule's shares as an n·m array (row-major): for tests and display, never on the solving path. */
export function sharesArray(n: number, m: number, shares: FixedShares): Float64Array {
  // Shares come row by row as flows do.
  return denseFlows({ read: (i, sites, values) => shares.row(i, sites, values) }, n, m);
}

/** The nearest rule's shares as an n·m array (`nearestRuleShares`). */
export function nearestShares(problem: LineProblem): Float64Array {
  return sharesArray(problem.n, problem.m, nearestRuleShares(problem));
}

/** The capacity-share rule's shares as an n·m array (`capacityRuleShares`). */
export function capacityShares(problem: LineProblem): Float64Array {
  return sharesArray(problem.n, problem.m, capacityRuleShares(problem));
}

/** `nearest` with balking. */
export function solveNearest(problem: LineProblem, options: FixedRuleOptions = {}): FixedRuleSolution {
  return solveFixedShares(problem, nearestRuleShares(problem), "nearest", options);
}

/** `capacityShare` with balking. */
export function solveCapacityShare(problem: LineProblem, options: FixedRuleOptions = {}): FixedRuleSolution {
  return solveFixedShares(problem, capacityRuleShares(problem), "capacityShare", options);
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

/** What a sweep computes for a site (`StreamSums.request`). */
const NOTHING = 0;
/** A pass at `wait` (`StreamPass`). */
const PASS = 1;
/** The patients who stay at the bracket's two ends: at `wait` ties stay, at `waitHigh` they leave. */
const ENDS = 2;

/** Per site, what the next sweep over the streams is asked for and what it sums. */
interface StreamSums {
  request: Uint8Array;
  wait: Float64Array;
  waitHigh: Float64Array;
  /** PASS: S(wait) and its slope −B, and the interval (below, above] on which that line is exact. */
  served: Float64Array;
  slope: Float64Array;
  below: Float64Array;
  above: Float64Array;
  /** ENDS: patients who stay at `wait` (ties stay), in `served`, and at `waitHigh` (ties leave) here. */
  servedHigh: Float64Array;
}

function streamSums(m: number): StreamSums {
  return {
    request: new Uint8Array(m),
    wait: new Float64Array(m),
    waitHigh: new Float64Array(m),
    served: new Float64Array(m),
    slope: new Float64Array(m),
    below: new Float64Array(m),
    above: new Float64Array(m),
    servedHigh: new Float64Array(m),
  };
}

/** The rows of a fixed rule as the solver reads them: the shares, the scratch for one row, and each source's reservation range. */
interface StreamRows {
  shares: FixedShares;
  sites: Int32Array;
  values: Float64Array;
  rangeLow: Float64Array;
  rangeHigh: Float64Array;
  /** Wait of each empty site: a stream whose range ends below it never stays. */
  emptyWait: Float64Array;
}

/** Per site, the demand with no outside option (captive), whether any stream reaches it, and how many streams take part in its search. */
interface StreamCensus {
  captive: Float64Array;
  reached: Uint8Array;
  searched: Int32Array;
}

/**
 * One sweep over the streams that take part in the search — patients with an outside option
 * whose range ends at or above the empty site's wait — answering every site's request at once.
 * Going over the streams source by source reads the n·m pairs in memory order and needs no
 * per-site copy of them (three n·m arrays on a national instance); a site's sums still add its
 * streams in source order, as a pass over that site's streams alone would. With `census` (the
 * first sweep, which every site asks for) it also sums every site's captive demand, marks the
 * sites any stream reaches and counts each site's streams.
 */
function sweepStreams(problem: LineProblem, rows: StreamRows, sums: StreamSums, census: StreamCensus | null = null): void {
  const { n, m, demand, outsideCost, travelCost } = problem;
  const { shares, sites, values, rangeLow, rangeHigh, emptyWait } = rows;
  const { request, wait, waitHigh, served, slope, below, above, servedHigh } = sums;
  for (let j = 0; j < m; j++) {
    served[j] = 0;
    slope[j] = 0;
    below[j] = -Infinity;
    above[j] = Infinity;
    servedHigh[j] = 0;
  }
  for (let i = 0; i < n; i++) {
    // Patients with no outside option always stay: they are their sites' captive demand.
    const captiveSource = outsideCost[i] === Infinity;
    if ((captiveSource && !census) || !(demand[i] > 0)) continue;
    const count = shares.row(i, sites, values);
    const row = i * m;
    const sourceDemand = demand[i];
    const sourceLow = rangeLow[i];
    const sourceHigh = rangeHigh[i];
    for (let k = 0; k < count; k++) {
      const j = sites[k];
      const stream = sourceDemand * values[k];
      if (!(stream > 0)) continue;
      if (census) {
        census.reached[j] = 1;
        if (captiveSource) {
          census.captive[j] += stream;
          continue;
        }
      }
      const kind = request[j];
      if (kind === NOTHING) continue;
      const travel = travelCost[row + j];
      const hi = sourceHigh - travel;
      if (!(hi >= emptyWait[j])) continue;
      if (census) census.searched[j]++;
      const lo = sourceLow - travel;
      if (kind === ENDS) {
        served[j] += stream * streamStaying(lo, hi, wait[j], true);
        servedHigh[j] += stream * streamStaying(lo, hi, waitHigh[j], false);
        continue;
      }
      const at = wait[j];
      if (at <= lo) {
        // Everyone stays (at wait = lo too: the share is 1 there, and ties stay at a sharp threshold).
        served[j] += stream;
        if (lo < above[j]) above[j] = lo;
      } else if (at < hi) {
        const rate = stream / (hi - lo);
        served[j] += rate * (hi - at);
        slope[j] += rate;
        if (lo > below[j]) below[j] = lo;
        if (hi < above[j]) above[j] = hi;
      } else if (hi > below[j]) below[j] = hi;
    }
  }
}

/** Some sites' streams copied site by site (CSR), each site's in source order; other sites' ranges are empty. */
interface GatheredStreams {
  start: Int32Array;
  demand: Float64Array;
  low: Float64Array;
  high: Float64Array;
}

/**
 * The streams of the sites asking for a pass, gathered per site by one sweep (`searched` counts
 * each site's streams). When few sites are still searching, a sweep over all streams costs far
 * more than passes over theirs alone: a site whose search needs many steps (a bisection) would
 * otherwise make every round a sweep over all n·m pairs.
 */
function gatherStreams(problem: LineProblem, rows: StreamRows, sums: StreamSums, searched: Int32Array): GatheredStreams {
  const { n, m, demand, outsideCost, travelCost } = problem;
  const { shares, sites, values, rangeLow, rangeHigh, emptyWait } = rows;
  const { request } = sums;
  const start = new Int32Array(m + 1);
  for (let j = 0; j < m; j++) start[j + 1] = start[j] + (request[j] === PASS ? searched[j] : 0);
  const gathered: GatheredStreams = { start, demand: new Float64Array(start[m]), low: new Float64Array(start[m]), high: new Float64Array(start[m]) };
  const fill = start.slice(0, m);
  for (let i = 0; i < n; i++) {
    if (outsideCost[i] === Infinity || !(demand[i] > 0)) continue;
    const count = shares.row(i, sites, values);
    const row = i * m;
    for (let k = 0; k < count; k++) {
      const j = sites[k];
      if (request[j] !== PASS) continue;
      const stream = demand[i] * values[k];
      if (!(stream > 0)) continue;
      const travel = travelCost[row + j];
      const hi = rangeHigh[i] - travel;
      if (!(hi >= emptyWait[j])) continue;
      const at = fill[j]++;
      gathered.demand[at] = stream;
      gathered.low[at] = rangeLow[i] - travel;
      gathered.high[at] = hi;
    }
  }
  return gathered;
}

/** `sweepStreams`' passes for the sites asking for one, over their gathered streams (the same sums in the same order). */
function passGathered(gathered: GatheredStreams, sums: StreamSums): void {
  const { start, demand, low, high } = gathered;
  const { request, wait, served, slope, below, above } = sums;
  for (let j = 0; j < request.length; j++) {
    if (request[j] !== PASS) continue;
    const at = wait[j];
    let siteServed = 0;
    let siteSlope = 0;
    let siteBelow = -Infinity;
    let siteAbove = Infinity;
    for (let k = start[j]; k < start[j + 1]; k++) {
      const stream = demand[k];
      const lo = low[k];
      const hi = high[k];
      if (at <= lo) {
        siteServed += stream;
        if (lo < siteAbove) siteAbove = lo;
      } else if (at < hi) {
        const rate = stream / (hi - lo);
        siteServed += rate * (hi - at);
        siteSlope += rate;
        if (lo > siteBelow) siteBelow = lo;
        if (hi < siteAbove) siteAbove = hi;
      } else if (hi > siteBelow) siteBelow = hi;
    }
    served[j] = siteServed;
    slope[j] = siteSlope;
    below[j] = siteBelow;
    above[j] = siteAbove;
  }
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

/** Where one site's root search ended: the bracket [low, high] on the inflow (one point when the root was found). */
interface SiteSearch {
  low: number;
  high: number;
  steps: number;
  /** False when the bracket was still wide after `maxIterations` steps. */
  pinned: boolean;
}

/**
 * The root search of one site, as a generator: it yields each wait at which it needs a pass over
 * the site's streams and is resumed with that pass, so that one sweep over all streams serves
 * every site's search at once (`solveFixedShares`).
 *
 * Root of g(x) = x − captive − S(W(x)), increasing in x. Invariant: g(low) ≤ 0 < g(high).
 */
function* searchSite(
  site: SiteWaitModel,
  captive: number,
  tolerance: number,
  maxIterations: number,
): Generator<number, SiteSearch, StreamPass> {
  const cap = site.capacity;
  const waitAt = (x: number) => (x >= cap ? Infinity : site.wait(x));
  let low = 0;
  let high = cap;
  let lowPass = yield waitAt(0);
  let highPass: StreamPass | null = null;
  let latest = lowPass;
  let root = NaN;
  let steps = 0;
  let widthBefore = high - low;
  if (low - captive - lowPass.served >= 0) root = 0;
  // A model's root is the answer when it lies where that model is exact.
  const exactRoot = (pass: StreamPass | null): number => {
    if (!pass) return NaN;
    const x = modelRoot(site, pass, captive, low, high);
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
    const newton: number = latest === lowPass || latest === highPass ? modelRoot(site, latest, captive, low, high) : NaN;
    let middle: number = steps % 2 === 1 && high - low > 0.5 * widthBefore ? NaN : newton;
    if (steps % 2 === 1) widthBefore = high - low;
    if (!(middle > low && middle < high)) middle = 0.5 * (low + high);
    if (middle <= low || middle >= high) break;
    const pass: StreamPass = yield waitAt(middle);
    const value = middle - captive - pass.served;
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
  if (!Number.isNaN(root)) return { low: root, high: root, steps, pinned: true };
  const pinned = !(high - low > tolerance * cap * 2 && high - low > 4 * Number.EPSILON * cap);
  return { low, high, steps, pinned };
}

/**
 * Solves a fixed assignment with balking: `shares` gives the share of each source's demand sent
 * to each site. Exposed so that other fixed rules (or what-ifs, `denseRuleShares`) can reuse it.
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
 * The sites' searches run side by side: each sweep over the streams, source by source in memory
 * order, makes the next pass of every site still searching (`sweepStreams`). On a national
 * instance (2.8 M streams under capacity share, one step per site) that is a handful of sweeps
 * and no n·m array but the flows: fresh memory is what costs most there (page faults), and
 * listing the streams per site took three n·m arrays. Patients without an outside option (always
 * staying) are settled outside the passes; the flows and costs are written source by source.
 */
export function solveFixedShares(
  problem: LineProblem,
  shares: FixedShares,
  rule: FixedRuleKey,
  options: FixedRuleOptions = {},
): FixedRuleSolution {
  const { tolerance, maxIterations } = { ...DEFAULT_OPTIONS, ...options };
  const { n, m, demand, outsideCost, outsideSpread, travelCost, sites, siteIds, sourceIds } = problem;
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
  const rows: StreamRows = { shares, sites: new Int32Array(m), values: new Float64Array(m), rangeLow, rangeHigh, emptyWait };

  // The sites' root searches, side by side: each asks for passes at waits, and one sweep
  // answers every request of the round. Every search's first pass is at the empty site's wait,
  // made by the first sweep for all sites together with each site's captive demand (which says
  // which sites are overloaded and never searched).
  const captive = new Float64Array(m);
  const reached = new Uint8Array(m);
  const searched = new Int32Array(m);
  const sums = streamSums(m);
  for (let j = 0; j < m; j++) {
    sums.request[j] = PASS;
    sums.wait[j] = 0 >= capacity[j] ? Infinity : emptyWait[j];
  }
  sweepStreams(problem, rows, sums, { captive, reached, searched });
  let allStreams = 0;
  for (let j = 0; j < m; j++) allStreams += searched[j];
  const overloaded = new Uint8Array(m);
  const searches: (Generator<number, SiteSearch, StreamPass> | null)[] = new Array(m).fill(null);
  const outcomes: (SiteSearch | null)[] = new Array(m).fill(null);
  let searching = 0;
  const answer = (j: number, step: IteratorResult<number, SiteSearch>) => {
    if (step.done) {
      outcomes[j] = step.value;
      sums.request[j] = NOTHING;
    } else {
      sums.request[j] = PASS;
      sums.wait[j] = step.value;
      searching++;
    }
  };
  const passMade = (j: number): StreamPass => ({ wait: sums.wait[j], served: sums.served[j], slope: sums.slope[j], below: sums.below[j], above: sums.above[j] });
  for (let j = 0; j < m; j++) {
    if (captive[j] >= capacity[j] && reached[j]) {
      overloaded[j] = 1;
      sums.request[j] = NOTHING;
      continue;
    }
    const search = searchSite(sites[j], captive[j], tolerance, maxIterations);
    searches[j] = search;
    let step = search.next();
    // The first sweep's pass is the one asked for (the same wait): no sweep again for it.
    if (!step.done && Object.is(step.value, sums.wait[j])) step = search.next(passMade(j));
    answer(j, step);
  }
  // Once the sites still searching hold under a quarter of the streams, theirs are gathered and
  // the remaining rounds go over those alone.
  let gathered: GatheredStreams | null = null;
  while (searching > 0) {
    if (!gathered) {
      let searchingStreams = 0;
      for (let j = 0; j < m; j++) if (sums.request[j] === PASS) searchingStreams += searched[j];
      if (4 * searchingStreams < allStreams) gathered = gatherStreams(problem, rows, sums, searched);
    }
    if (gathered) passGathered(gathered, sums);
    else sweepStreams(problem, rows, sums);
    searching = 0;
    for (let j = 0; j < m; j++) {
      if (sums.request[j] !== PASS) continue;
      answer(j, (searches[j] as Generator<number, SiteSearch, StreamPass>).next(passMade(j)));
    }
  }

  // Per site, the waits at the ends of the final bracket and the share of the indifferent
  // patients (at a sharp threshold inside it) who stay; the flows are written from these.
  const waitLow = new Float64Array(m);
  const waitHigh = new Float64Array(m);
  const weight = new Float64Array(m);
  for (let j = 0; j < m; j++) {
    const cap = capacity[j];
    const outcome = outcomes[j];
    if (overloaded[j] || !outcome) {
      overloads.push({ siteId: siteIds[j], demand: captive[j], capacity: cap, shortfall: captive[j] - cap });
      warnings.push(
        `No steady state under ${rule} at site "${siteIds[j]}": ${captive[j].toFixed(2)} referrals/week with no outside ` +
          `option are sent to a routine capacity of ${cap.toFixed(2)}/week (short by ` +
          `${(captive[j] - cap).toFixed(2)} referrals/week).`,
      );
      converged = false;
      steadyState = false;
      siteWait[j] = Infinity;
      continue;
    }
    iterations = Math.max(iterations, outcome.steps);
    if (!outcome.pinned) {
      converged = false;
      warnings.push(`${rule}: the inflow at site "${siteIds[j]}" was not pinned down in ${maxIterations} steps.`);
    }
    waitLow[j] = sites[j].wait(outcome.low);
    waitHigh[j] = outcome.high >= cap ? Infinity : sites[j].wait(outcome.high);
    sums.request[j] = ENDS;
    sums.wait[j] = waitLow[j];
    sums.waitHigh[j] = waitHigh[j];
  }

  // The flows, source by source, from each site's final waits. The indifferent patients' share
  // (`weight`) only matters for streams whose patients at the bracket's two ends differ — a
  // bracket left wide, or ties at a sharp threshold. Usually there are none (each root is found
  // exactly), so the inflows and balking are summed first as if every weight were 0, which is
  // then exact, and only when such a stream turns up are the weights worked out (a sweep more)
  // and the sums made again. The flows themselves are stored nowhere: `fixedRuleRows` works a
  // source's out from the same numbers whenever they are read (capacity share has a flow on
  // every pair, 22 MB of fresh memory on a national instance).
  const final: FinalWaits = { overloaded, waitLow, waitHigh, weight };
  const flows: FlowWriting = { final, siteInflow, balked, assigned: new Float64Array(n) };
  if (!sumFlows(problem, rows, flows, true)) {
    // Patients served at the bracket's ends; the root lies between. A sharp threshold crossed
    // inside the bracket is the indifferent group: only part of it stays, so interpolate
    // between the two ends to make the inflow consistent with the bracket.
    sweepStreams(problem, rows, sums);
    for (let j = 0; j < m; j++) {
      const outcome = outcomes[j];
      if (overloaded[j] || !outcome) continue;
      const servedLow = captive[j] + sums.served[j];
      const servedHigh = captive[j] + sums.servedHigh[j];
      const target = 0.5 * (outcome.low + outcome.high);
      weight[j] = servedLow > servedHigh ? Math.min(1, Math.max(0, (target - servedHigh) / (servedLow - servedHigh))) : 0;
    }
    siteInflow.fill(0);
    sumFlows(problem, rows, flows, false);
  }

  // Sources the rule sends nowhere (no allowed site) balk, or, without an outside option, have
  // no steady state.
  for (let i = 0; i < n; i++) {
    const free = outsideCost[i] !== Infinity;
    const assigned = flows.assigned[i];
    const unassigned = demand[i] * Math.max(0, 1 - assigned);
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

  const { totalCost, relativeGap } = fixedRuleCost(problem, shares, final, siteWait);
  return {
    rule,
    allocation: allocationFromRows(m, fixedRuleRows(problem, shares, rangeLow, rangeHigh, final), balked),
    siteInflow,
    siteWait,
    totalCost: steadyState ? totalCost : Infinity,
    shares,
    overloads,
    diagnostics: { converged, iterations, relativeGap: steadyState ? relativeGap : Infinity, warnings },
  };
}

/** Per site, what the flows follow from: overloaded or not, the waits at the final bracket's ends, the indifferent patients' share. */
interface FinalWaits {
  overloaded: Uint8Array;
  waitLow: Float64Array;
  waitHigh: Float64Array;
  weight: Float64Array;
}

/** What `sumFlows` reads (final waits) and writes (inflows, balking, each source's total share). */
interface FlowWriting {
  final: FinalWaits;
  siteInflow: Float64Array;
  balked: Float64Array;
  assigned: Float64Array;
}

/**
 * Patients of a stream (`stream` referrals/week from a source to site j, travel cost `travel`,
 * reservation range [low, high]) who stay, at the final waits; NaN when `exactOnly` and the
 * patients at the bracket's two ends differ (the weight is then needed).
 */
function stayingAt(final: FinalWaits, j: number, stream: number, free: boolean, travel: number, low: number, high: number, exactOnly: boolean): number {
  if (!free) return stream;
  if (final.overloaded[j]) return 0; // patients with an outside option all leave an infinitely long queue
  const stayHigh = streamStaying(low - travel, high - travel, final.waitHigh[j], false);
  const stayLow = streamStaying(low - travel, high - travel, final.waitLow[j], true);
  if (exactOnly && stayLow !== stayHigh) return NaN;
  return stream * (stayHigh + final.weight[j] * (stayLow - stayHigh));
}

/** A fixed rule's flows, source by source, worked out from the final waits (`stayingAt`) when read: one per stream. */
function fixedRuleRows(problem: LineProblem, shares: FixedShares, rangeLow: Float64Array, rangeHigh: Float64Array, final: FinalWaits): FlowRows {
  const { m, demand, outsideCost, travelCost } = problem;
  const shareSites = new Int32Array(m);
  const shareValues = new Float64Array(m);
  return {
    read(i, sites, flows) {
      const count = shares.row(i, shareSites, shareValues);
      const free = outsideCost[i] !== Infinity;
      let written = 0;
      for (let k = 0; k < count; k++) {
        const stream = demand[i] * shareValues[k];
        if (!(stream > 0)) continue;
        const j = shareSites[k];
        sites[written] = j;
        flows[written++] = stayingAt(final, j, stream, free, travelCost[i * m + j], rangeLow[i], rangeHigh[i], false);
      }
      return written;
    },
  };
}

/**
 * Sums every stream's patients who stay, source by source: site inflows (`siteInflow` starting
 * at 0), each source's patients who leave and its total share. With `stopAtDifference` it gives
 * up (false) at the first stream whose patients at the bracket's two ends differ, where the
 * weight of the indifferent patients matters: the sums are then to be made again.
 */
function sumFlows(problem: LineProblem, rows: StreamRows, writing: FlowWriting, stopAtDifference: boolean): boolean {
  const { n, m, demand, outsideCost, travelCost } = problem;
  const { shares, sites: rowSites, values: rowShares, rangeLow, rangeHigh } = rows;
  const { final, siteInflow, balked, assigned } = writing;
  for (let i = 0; i < n; i++) {
    const row = i * m;
    const low = rangeLow[i];
    const high = rangeHigh[i];
    const free = outsideCost[i] !== Infinity;
    const count = shares.row(i, rowSites, rowShares);
    let total = 0;
    let leaving = 0;
    for (let k = 0; k < count; k++) {
      total += rowShares[k];
      const stream = demand[i] * rowShares[k];
      if (!(stream > 0)) continue;
      const j = rowSites[k];
      const staying = stayingAt(final, j, stream, free, travelCost[row + j], low, high, stopAtDifference);
      if (Number.isNaN(staying)) return false;
      leaving += stream - staying;
      siteInflow[j] += staying;
    }
    assigned[i] = total;
    balked[i] = leaving;
  }
  return true;
}

/**
 * Total cost and relative gap of a fixed-rule allocation, stream by stream, each stream's
 * patients who stay worked out from the final waits as its flow is (`stayingAt`).
 *
 * Each stream (the patients of source i the rule sends to site j, or sends nowhere) has two
 * options: the site, at cost g = W_j + t_ij, or the outside option at their own reservation cost.
 * Its cost is y·g + (cost of its balkers, the lowest reservation costs); its best possible cost
 * is that of every patient taking the cheaper of the two, d·∫ min(g, r(u)) du. The relative gap
 * is PRODUCT.md's (Σ flows × their cost + balkers' cost − Σ demand × cheapest option) / the
 * former, with the choice set a fixed rule leaves: zero exactly when the balking decisions
 * are in equilibrium.
 */
function fixedRuleCost(
  problem: LineProblem,
  shares: FixedShares,
  final: FinalWaits,
  siteWait: Float64Array,
): { totalCost: number; relativeGap: number } {
  const { n, m, demand, outsideCost, outsideSpread, travelCost } = problem;
  const rowSites = new Int32Array(m);
  const rowShares = new Float64Array(m);
  let actual = 0;
  let best = 0;
  for (let i = 0; i < n; i++) {
    const o = outsideCost[i];
    const s = outsideSpread[i];
    const row = i * m;
    const count = shares.row(i, rowSites, rowShares);
    let assigned = 0;
    if (o === Infinity) {
      // No outside option: every patient stays, so the actual and the best cost are the same.
      for (let k = 0; k < count; k++) {
        assigned += rowShares[k];
        const stream = demand[i] * rowShares[k];
        if (!(stream > 0)) continue;
        const pair = row + rowSites[k];
        const cost = siteWait[rowSites[k]] + travelCost[pair];
        const staying = stream; // with no outside option every patient stays (`stayingAt`)
        actual += staying > 0 ? staying * cost : 0;
        best += stream * cost;
      }
    } else {
      // stayingShare and balkersCost written out (a national instance has millions of streams).
      const { low, high } = reservationRange(o, s);
      for (let k = 0; k < count; k++) {
        assigned += rowShares[k];
        const stream = demand[i] * rowShares[k];
        if (!(stream > 0)) continue;
        const pair = row + rowSites[k];
        const cost = siteWait[rowSites[k]] + travelCost[pair];
        const staying = stayingAt(final, rowSites[k], stream, true, travelCost[pair], low, high, false);
        const leaving = Math.max(0, stream - staying);
        actual += (staying > 0 ? staying * cost : 0) + streamBalkersCost(leaving, stream, low, high, o, s);
        const optimalStaying = stream * (cost <= low ? 1 : cost >= high ? 0 : 1 - (cost - low) / (high - low));
        best += (optimalStaying > 0 ? optimalStaying * cost : 0) + streamBalkersCost(stream - optimalStaying, stream, low, high, o, s);
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

/** `balkersCost` with the reservation range [low, high] of (o, s) already at hand. */
function streamBalkersCost(balked: number, demand: number, low: number, high: number, outsideCost: number, spread: number): number {
  if (!(balked > 0)) return 0;
  if (balked >= demand) return (balked * (low + (low + Math.min(balked / demand, 1) * (high - low)))) / 2;
  return outsideCost * (1 - spread) * balked + (outsideCost * spread * balked * balked) / demand;
}
