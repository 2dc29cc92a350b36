/**
 * The exact finish of the Wardrop equilibrium (and of the optimum, on marginal-cost curves).
 *
 * Why a finish. The logit equilibrium at scale θ approaches Wardrop's as θ → ∞ (Fisk 1980), but
 * only like 1/θ, and beyond θ ≈ 1e8 the shares exp(−θ·Δ) amplify rounding in the site costs.
 * So continuation stops at a moderate θ, reads off which options are (nearly) tied, and solves
 * the θ = ∞ limit on that structure exactly.
 *
 * The limit's structure. Let T_i be the sites source i uses (and, for a sharp outside option,
 * whether it is tied with it). All options in T_i cost the same, so within a connected group of
 * sites (linked by sources that use several) the site costs are fixed up to one level L:
 * w_j = L + δ_j, with δ from travel-cost differences along a spanning tree. A source tied with a
 * sharp outside option fixes L (its cost equals o). The logit shares converge too: writing
 * w_j(θ) = L + δ_j + η_j/θ, a source's shares among its tied options tend to
 * e^{−η_j} / (Σ_{k∈T_i} e^{−η_k} + [tied with outside]·1), which is the maximum-entropy split
 * (flows of the product form α_i·β_j on the tied pairs). What remains are, per group, the
 * unknowns (L, η) — one level (unless fixed) and one η per site less one gauge — and as many
 * equations, the site balances Σ_i f_ij = x_j(L + δ_j). Newton solves them (dense LU per group);
 * the Jacobian contains no θ, so it is as well conditioned as the problem itself.
 *
 * Active-set corrections. If the guessed structure is wrong, either some tied share runs to zero
 * (η → ∞: that pair carries no flow and is dropped) or some option outside T_i turns out cheaper
 * (it is added); then the structure is rebuilt and solved again. Flows are then exact to rounding.
 */
import type { CostView } from "./logit-newton";
import { luSolveInPlace } from "./dense-linear";
import { type FlowRows, storedRows } from "./flow-rows";
import { reservationRange } from "./outside-option";
import { cheapestSite, keyOrder, lowestCost, nearestSites, sitesWithin } from "./nearest-sites";

/** An option within this many 1/θ of a source's cheapest counts as tied (logit share ≥ ~1e-10). */
const TIE_WIDTH = 23;
/** Shares below this at a failed group solve mark pairs that carry no flow. */
const VANISHING_SHARE = 1e-9;
/** Newton steps a group gets before a vanishing share stops its solve (for pruning and a re-solve). */
const VANISHING_AFTER = 4;

export interface FinishOutcome {
  ok: boolean;
  /** Flows of the answer, as rows of the tied pairs (empty until the last round). */
  rows: FlowRows;
  balked: Float64Array;
  /** Site cost (wait or marginal cost) at the solution. */
  siteCost: Float64Array;
  load: Float64Array;
  rounds: number;
  iterations: number;
  message: string;
}

interface SourceTie {
  sites: number[];
  outsideTie: boolean;
  /** Pairs (and the outside tie) that the Wardrop check found cheaper: first into the spanning forest. */
  forced: Set<number>;
  forcedTie: boolean;
  allBalk: boolean;
}

interface Group {
  sites: number[];
  sources: number[];
  /** Offset δ_j per site of the group (w_j = L + δ_j), by position in `sites`. */
  delta: Float64Array;
  grounded: boolean;
  level: number;
}

/**
 * Relative mismatch up to which a pair closing a cycle of the forest counts as an exact tie and is
 * kept (`buildGroups`). Exact ties (sites at one place, symmetric layouts) agree to rounding; a
 * looser value is a last resort for regions with many sites close together (see
 * `solveWardropOnCurves`), where cycles agree to ~1e-8 of the costs but are not exact.
 */
export const EXACT_CYCLE = 1e-10;

export function wardropFinish(
  view: CostView,
  w: Float64Array,
  theta: number,
  maxIterations = Infinity,
  maxRounds = 40,
  cycleTolerance = EXACT_CYCLE,
): FinishOutcome {
  const { n, m, demand, outsideCost, outsideSpread, pairCost } = view;
  const lists = nearestSites(pairCost, n, m);
  const tie: SourceTie[] = initialStructure(view, w, theta);
  let rows: FlowRows = storedRows(new Int32Array(n + 1), new Int32Array(0), new Float64Array(0));
  const balked = new Float64Array(n);
  const siteCost = new Float64Array(m);
  const load = new Float64Array(m);
  const sourceOffset = new Float64Array(n);
  const eta = new Float64Array(m);
  // η starts from the logit solution: w_j(θ) ≈ L + δ_j + η_j/θ.
  let iterations = 0;
  let message = "";
  // Groups solved in an earlier round, by structure: most groups come back unchanged after a
  // round that corrected a few sources, and then start from their solution.
  const solvedBefore = new Map<number, SolvedGroup>();
  for (let round = 1; round <= maxRounds; round++) {
    const groups = buildGroups(view, tie, sourceOffset, w, cycleTolerance);
    if (groups === null) continue; // inconsistent ties were dropped; rebuild
    let pruned = false;
    let unbalanced = 0;
    if (iterations >= maxIterations) {
      return { ok: false, rows, balked, siteCost, load, rounds: round, iterations, message: "the iteration budget ran out" };
    }
    // Groups are independent systems: a round costs as many iterations as its slowest group.
    let roundIterations = 0;
    for (const group of groups) {
      const key = groupKey(group, tie);
      const known = solvedBefore.get(key);
      if (!known || !restoreGroup(group, known, eta)) initialiseGroup(view, group, w, theta, eta);
      const solved = solveGroup(view, group, tie, sourceOffset, eta);
      if (solved.ok) solvedBefore.set(key, saveGroup(group, eta));
      roundIterations = Math.max(roundIterations, solved.iterations);
      // A group that cannot balance has the wrong sources (e.g. more fixed demand than the
      // sites can take): vanishing shares are dropped now; otherwise the check below, run on
      // the group's last iterate, offers its sources their cheaper options.
      if (!solved.ok) {
        if (pruneVanishing(view, group, tie, eta)) pruned = true;
        else unbalanced++;
      }
    }
    iterations += roundIterations;
    if (pruned) continue;
    // Site costs on the solved structure (loads and flows are written only for the answer).
    siteCost.fill(NaN);
    for (const group of groups) group.sites.forEach((j, k) => (siteCost[j] = group.level + group.delta[k]));
    for (let j = 0; j < m; j++) if (Number.isNaN(siteCost[j])) siteCost[j] = view.inverses[j].emptyCost;
    const allocate = (): void => {
      load.fill(0);
      for (const group of groups) for (const j of group.sites) load[j] = view.inverses[j].load(siteCost[j]);
      // One row per source, its tied sites in ascending order (sources outside every group have none).
      const start = new Int32Array(n + 1);
      for (const group of groups) for (const i of group.sources) start[i + 1] = tie[i].sites.length;
      for (let i = 0; i < n; i++) start[i + 1] += start[i];
      const sites = new Int32Array(start[n]);
      const flows = new Float64Array(start[n]);
      for (const group of groups) {
        for (const i of group.sources) writeSourceFlows(view, i, tie[i], group.level + sourceOffset[i], eta, start[i], sites, flows, balked);
      }
      rows = storedRows(start, sites, flows);
      for (let i = 0; i < n; i++) {
        const t = tie[i];
        if (t.allBalk || t.sites.length === 0) balked[i] = Number.isFinite(outsideCost[i]) ? demand[i] : 0;
      }
    };
    for (let i = 0; i < n; i++) {
      const t = tie[i];
      if (t.allBalk || t.sites.length === 0) t.sites = [];
    }
    // Wardrop check: no cheaper option left unused, outside option respected.
    let changed = false;
    const lowest = lowestCost(siteCost);
    for (let i = 0; i < n; i++) {
      if (!(demand[i] > 0)) continue;
      const row = i * m;
      const best = cheapestSite(lists, pairCost, m, siteCost, lowest, i);
      if (best < 0) continue;
      const cheapest = siteCost[best] + pairCost[row + best];
      const t = tie[i];
      const o = outsideCost[i];
      const { high } = Number.isFinite(o) ? reservationRange(o, outsideSpread[i]) : { high: Infinity };
      const tolerance = 1e-12 * (1 + Math.abs(cheapest));
      if (t.allBalk || t.sites.length === 0) {
        if (cheapest < (outsideSpread[i] === 0 ? o : high) - tolerance) {
          t.allBalk = false;
          t.sites = [best];
          t.forced.add(best);
          t.outsideTie = outsideSpread[i] === 0 && Number.isFinite(o);
          t.forcedTie = t.outsideTie;
          changed = true;
        }
        continue;
      }
      const used = siteCost[t.sites[0]] + pairCost[row + t.sites[0]];
      if (cheapest < used - tolerance) {
        // Sites already tied with this source can differ by up to the cycle test's tolerance in
        // `buildGroups` (exact ties kept around a cycle): only a site not yet tied is a change,
        // else the same structure came back round after round and the finish gave up.
        let added = false;
        for (let j = 0; j < m; j++) {
          if (siteCost[j] + pairCost[row + j] < used - tolerance && !t.sites.includes(j)) {
            t.sites.push(j);
            t.forced.add(j);
            added = true;
          }
        }
        if (added) {
          t.sites.sort((a, b) => a - b);
          changed = true;
        }
      }
      if (Number.isFinite(o) && outsideSpread[i] === 0 && !t.outsideTie && used > o + tolerance) {
        t.outsideTie = true;
        t.forcedTie = true;
        changed = true;
      }
      if (Number.isFinite(o) && outsideSpread[i] > 0 && used > high + tolerance) {
        t.allBalk = true;
        changed = true;
      }
    }
    if (!changed) {
      allocate();
      if (unbalanced === 0) return { ok: true, rows, balked, siteCost, load, rounds: round, iterations, message: "" };
      message = `${unbalanced} group(s) of sites could not balance their inflow`;
      return { ok: false, rows, balked, siteCost, load, rounds: round, iterations, message };
    }
    message = "the tied structure kept changing";
  }
  return { ok: false, rows, balked, siteCost, load, rounds: maxRounds, iterations, message: message || "too many rounds" };
}

function initialStructure(view: CostView, w: Float64Array, theta: number): SourceTie[] {
  const { n, m, demand, outsideCost, outsideSpread, pairCost } = view;
  const width = TIE_WIDTH / theta;
  const lists = nearestSites(pairCost, n, m);
  const lowest = lowestCost(w);
  const ties: SourceTie[] = [];
  for (let i = 0; i < n; i++) {
    const best = cheapestSite(lists, pairCost, m, w, lowest, i);
    const cheapest = best < 0 ? Infinity : w[best] + pairCost[i * m + best];
    const sites = demand[i] > 0 && cheapest < Infinity ? sitesWithin(lists, pairCost, m, w, lowest, i, cheapest + width) : [];
    const o = outsideCost[i];
    let outsideTie = false;
    let allBalk = sites.length === 0 && Number.isFinite(o);
    if (Number.isFinite(o) && sites.length > 0) {
      if (outsideSpread[i] === 0) {
        if (cheapest > o + width) allBalk = true;
        else if (cheapest >= o - width) outsideTie = true;
      } else if (cheapest > reservationRange(o, outsideSpread[i]).high + width) allBalk = true;
    }
    ties.push({ sites: allBalk ? [] : sites, outsideTie, allBalk, forced: new Set(), forcedTie: false });
  }
  return ties;
}

/**
 * Connected groups of sites with their offsets δ. The spanning forest is built greedily from the
 * most clearly tied pairs (Kruskal 1956, on the pairs' cost excess in the logit solution; pairs
 * the check has just found cheaper come first), over sources, sites and one "ground" node for
 * sharp outside options. A pair that closes a cycle must agree with the forest's offsets (an
 * exact tie, kept for the maximum-entropy split) or is dropped. Returns null when something was
 * dropped, so the caller rebuilds.
 */
function buildGroups(view: CostView, tie: SourceTie[], sourceOffset: Float64Array, w: Float64Array, cycleTolerance: number): Group[] | null {
  const { n, m, pairCost, outsideCost } = view;
  // Nodes: sources 0..n−1, sites n..n+m−1, ground n+m.
  const ground = n + m;
  const parent = new Int32Array(n + m + 1);
  for (let k = 0; k <= n + m; k++) parent[k] = k;
  const find = (k: number): number => {
    while (parent[k] !== k) {
      parent[k] = parent[parent[k]];
      k = parent[k];
    }
    return k;
  };
  // Candidate edges (source, site or −1 for the ground), ordered by key.
  let edgeCount = 0;
  for (let i = 0; i < n; i++) if (tie[i].sites.length > 0) edgeCount += tie[i].sites.length + (tie[i].outsideTie ? 1 : 0);
  const edgeSource = new Int32Array(edgeCount);
  const edgeSite = new Int32Array(edgeCount);
  const edgeKey = new Float64Array(edgeCount);
  let e = 0;
  for (let i = 0; i < n; i++) {
    const t = tie[i];
    if (t.sites.length === 0) continue;
    let cheapest = Infinity;
    for (const j of t.sites) cheapest = Math.min(cheapest, w[j] + pairCost[i * m + j]);
    for (const j of t.sites) {
      edgeSource[e] = i;
      edgeSite[e] = j;
      edgeKey[e++] = t.forced.has(j) ? -1 : w[j] + pairCost[i * m + j] - cheapest;
    }
    if (t.outsideTie) {
      edgeSource[e] = i;
      edgeSite[e] = -1;
      edgeKey[e++] = t.forcedTie ? -1 : Math.abs(cheapest - outsideCost[i]);
    }
  }
  const order = keyOrder(edgeKey, edgeCount);
  // The forest's edges as node pairs, then as adjacency lists (compressed rows).
  const treeA = new Int32Array(n + m);
  const treeB = new Int32Array(n + m);
  let treeEdges = 0;
  const closing: number[] = [];
  for (const edge of order) {
    const a = edgeSource[edge];
    const b = edgeSite[edge] < 0 ? ground : n + edgeSite[edge];
    const ra = find(a);
    const rb = find(b);
    if (ra === rb) closing.push(edge);
    else {
      parent[ra] = rb;
      treeA[treeEdges] = a;
      treeB[treeEdges++] = b;
    }
  }
  const neighbourStart = new Int32Array(n + m + 2);
  for (let k = 0; k < treeEdges; k++) {
    neighbourStart[treeA[k] + 1]++;
    neighbourStart[treeB[k] + 1]++;
  }
  for (let k = 0; k <= n + m; k++) neighbourStart[k + 1] += neighbourStart[k];
  const neighbours = new Int32Array(2 * treeEdges);
  const filled = neighbourStart.slice(0, n + m + 1);
  for (let k = 0; k < treeEdges; k++) {
    neighbours[filled[treeA[k]]++] = treeB[k];
    neighbours[filled[treeB[k]]++] = treeA[k];
  }
  // Potentials along the forest: absolute from the ground (u_i = o_i), relative from a root site.
  const potential = new Float64Array(n + m + 1);
  const seen = new Uint8Array(n + m + 1);
  const groups: Group[] = [];
  // Potentials: absolute (u_i = o_i) in a subtree hanging from the ground, relative to a root site
  // otherwise. Subtrees joined only through the ground are independent groups (their level is fixed).
  seen[ground] = 1;
  const queue = new Int32Array(n + m + 1);
  const visit = (root: number, grounded: boolean): void => {
    let tail = 0;
    queue[tail++] = root;
    seen[root] = 1;
    potential[root] = grounded ? outsideCost[root] : 0;
    for (let head = 0; head < tail; head++) {
      const node = queue[head];
      for (let k = neighbourStart[node]; k < neighbourStart[node + 1]; k++) {
        const next = neighbours[k];
        if (seen[next]) continue;
        seen[next] = 1;
        if (node < n) potential[next] = potential[node] - pairCost[node * m + (next - n)];
        else potential[next] = potential[node] + pairCost[next * m + (node - n)];
        queue[tail++] = next;
      }
    }
    const sites: number[] = [];
    const sources: number[] = [];
    for (let k = 0; k < tail; k++) {
      const node = queue[k];
      if (node >= n) sites.push(node - n);
      else {
        sources.push(node);
        sourceOffset[node] = potential[node];
      }
    }
    if (sites.length > 0) groups.push({ sites, sources, delta: Float64Array.from(sites, (j) => potential[n + j]), grounded, level: 0 });
  };

  for (let k = neighbourStart[ground]; k < neighbourStart[ground + 1]; k++) if (!seen[neighbours[k]]) visit(neighbours[k], true);
  for (let j = 0; j < m; j++) if (!seen[n + j] && neighbourStart[n + j + 1] > neighbourStart[n + j]) visit(n + j, false);
  // Pairs closing a cycle: keep exact ties, drop the rest.
  let dropped = false;
  for (const edge of closing) {
    const i = edgeSource[edge];
    const site = edgeSite[edge];
    const t = tie[i];
    const scale = cycleTolerance * (1 + Math.abs(potential[i]));
    if (site < 0) {
      if (Math.abs(potential[i] - outsideCost[i]) > scale) {
        t.outsideTie = false;
        dropped = true;
      }
    } else if (Math.abs(potential[n + site] + pairCost[i * m + site] - potential[i]) > scale) {
      t.sites = t.sites.filter((j) => j !== site);
      dropped = true;
    }
  }
  return dropped ? null : groups;
}

/**
 * A hash of a group's structure: its sources with their tied sites and outside ties (its sites
 * follow from them). Only a warm start hangs on it, so a collision would cost time, not accuracy.
 */
function groupKey(group: Group, tie: SourceTie[]): number {
  let low = group.grounded ? 0x9e3779b9 : 0x85ebca6b;
  let high = group.sources.length;
  const mix = (value: number): void => {
    low = Math.imul(low ^ value, 0x01000193);
    high = Math.imul(high + value, 0x5bd1e995) ^ (high >>> 15);
  };
  // In increasing order, so that the key does not depend on the order the forest visited them.
  const sources = Int32Array.from(group.sources).sort();
  for (const i of sources) {
    mix(i + 1);
    for (const j of tie[i].sites) mix(-(j + 2));
    if (tie[i].outsideTie) mix(-1);
  }
  return (high >>> 0) * 4294967296 + (low >>> 0);
}

interface SolvedGroup {
  /** Site cost and η by site. */
  cost: Map<number, number>;
  eta: Map<number, number>;
}

function saveGroup(group: Group, eta: Float64Array): SolvedGroup {
  const cost = new Map<number, number>();
  const etaBySite = new Map<number, number>();
  group.sites.forEach((j, k) => {
    cost.set(j, group.level + group.delta[k]);
    etaBySite.set(j, eta[j]);
  });
  return { cost, eta: etaBySite };
}

/** Starts a group from its earlier solution (its level read through this round's offsets); false if the sites differ. */
function restoreGroup(group: Group, known: SolvedGroup, eta: Float64Array): boolean {
  if (known.eta.size !== group.sites.length || !group.sites.every((j) => known.eta.has(j))) return false;
  if (!group.grounded) group.level = (known.cost.get(group.sites[0]) as number) - group.delta[0];
  for (const j of group.sites) eta[j] = known.eta.get(j) as number;
  return true;
}

function initialiseGroup(view: CostView, group: Group, w: Float64Array, theta: number, eta: Float64Array): void {
  const { sites, delta } = group;
  if (!group.grounded) group.level = w[sites[0]] - delta[0];
  for (let k = 0; k < sites.length; k++) {
    const value = theta * (w[sites[k]] - group.level - delta[k]);
    eta[sites[k]] = Math.min(Math.max(value, -30), 30);
  }
  if (!group.grounded) {
    const shift = eta[sites[0]];
    for (const j of sites) eta[j] -= shift;
  }
}

/** Served demand and its slope in the level for a source not tied with a sharp outside option. */
function servedAt(view: CostView, i: number, u: number): { served: number; slope: number } {
  const o = view.outsideCost[i];
  const spread = view.outsideSpread[i];
  const d = view.demand[i];
  if (!Number.isFinite(o) || spread === 0) return { served: d, slope: 0 };
  const { low, high } = reservationRange(o, spread);
  if (u <= low) return { served: d, slope: 0 };
  if (u >= high) return { served: 0, slope: 0 };
  return { served: d * (high - u) / (high - low), slope: -d / (high - low) };
}

function solveGroup(
  view: CostView,
  group: Group,
  tie: SourceTie[],
  sourceOffset: Float64Array,
  eta: Float64Array,
): { ok: boolean; iterations: number } {
  const { sites, sources, delta, grounded } = group;
  const size = sites.length;
  // Each source's tied sites as positions in the group, flattened (built once per group solve).
  const local = new Map<number, number>();
  sites.forEach((j, k) => local.set(j, k));
  const memberStart = new Int32Array(sources.length + 1);
  for (let s = 0; s < sources.length; s++) memberStart[s + 1] = memberStart[s] + tie[sources[s]].sites.length;
  const member = new Int32Array(memberStart[sources.length]);
  for (let s = 0; s < sources.length; s++) {
    const tied = tie[sources[s]].sites;
    for (let a = 0; a < tied.length; a++) member[memberStart[s] + a] = local.get(tied[a]) as number;
  }
  const share = new Float64Array(Math.max(size, 1));
  // Unknowns: grounded → η of every site; otherwise L then η of sites 1..size−1 (η of site 0 is 0).
  const unknowns = size;
  const etaIndex = (k: number): number => (grounded ? k : k === 0 ? -1 : k);
  const residual = new Float64Array(size);
  const jacobian = new Float64Array(unknowns * unknowns);
  const step = new Float64Array(unknowns);
  const savedEta = new Float64Array(size);
  let scale = 0;
  for (const i of sources) scale += view.demand[i];
  // Aim at rounding level; a stall is accepted once the balance is within 1e-11 of the demand.
  const tolerance = 1e-15 * Math.max(scale, 1e-300);
  const acceptable = 1e-11 * Math.max(scale, 1e-300);

  // The smallest tied share at the last evaluation: one that has all but vanished marks a tie the
  // solution does not have, and Newton would spend its whole budget driving its η to infinity.
  let smallestShare = 1;
  /**
   * The largest imbalance beyond `limit` that the site costs could resolve: a site's balance
   * cannot be read finer than the inflow a few rounding steps of its cost move (the resolution
   * is worked out only for sites over the limit by a little).
   */
  const largestImbalance = (limit: number): number => {
    let largest = 0;
    for (let k = 0; k < size; k++) {
      let excess = Math.abs(residual[k]);
      // Rounding explains small imbalances only; larger ones need no second look.
      if (excess > limit && excess <= 1e-4 * scale) {
        const w = group.level + delta[k];
        excess -= view.inverses[sites[k]].loadResolution(w, Math.abs(group.level) + Math.abs(delta[k]));
      }
      largest = Math.max(largest, excess);
    }
    return largest;
  };
  const evaluate = (withJacobian: boolean): number => {
    smallestShare = 1;
    residual.fill(0);
    if (withJacobian) jacobian.fill(0);
    for (let k = 0; k < size; k++) {
      const j = sites[k];
      const w = group.level + delta[k];
      const x = view.inverses[j].load(w);
      const slope = view.inverses[j].loadSlope(w, x);
      residual[k] -= x;
      if (withJacobian && !grounded) jacobian[k * unknowns] -= slope;
    }
    for (let s = 0; s < sources.length; s++) {
      const i = sources[s];
      const t = tie[i];
      const first = memberStart[s];
      const count = memberStart[s + 1] - first;
      let smallest = t.outsideTie ? 0 : Infinity;
      for (let a = 0; a < count; a++) smallest = Math.min(smallest, eta[sites[member[first + a]]]);
      let sum = t.outsideTie ? Math.exp(smallest) : 0;
      for (let a = 0; a < count; a++) {
        const e = Math.exp(-(eta[sites[member[first + a]]] - smallest));
        share[a] = e;
        sum += e;
      }
      const { served, slope } = t.outsideTie ? { served: view.demand[i], slope: 0 } : servedAt(view, i, group.level + sourceOffset[i]);
      for (let a = 0; a < count; a++) {
        share[a] /= sum;
        if (share[a] < smallestShare) smallestShare = share[a];
      }
      if (t.outsideTie) smallestShare = Math.min(smallestShare, Math.exp(smallest) / sum);
      for (let a = 0; a < count; a++) {
        const ka = member[first + a];
        const pa = share[a];
        residual[ka] += served * pa;
        if (!withJacobian) continue;
        if (!grounded) jacobian[ka * unknowns] += slope * pa;
        const row = ka * unknowns;
        for (let b = 0; b < count; b++) {
          const column = etaIndex(member[first + b]);
          if (column < 0) continue;
          jacobian[row + column] -= served * pa * ((a === b ? 1 : 0) - share[b]);
        }
      }
    }
    let norm = 0;
    for (let k = 0; k < size; k++) norm += residual[k] * residual[k];
    return Math.sqrt(norm);
  };

  let norm = evaluate(true);
  let iterations = 0;
  for (; iterations < 60; iterations++) {
    const largest = largestImbalance(tolerance);
    if (largest <= tolerance) return { ok: true, iterations };
    if (iterations >= VANISHING_AFTER && smallestShare < VANISHING_SHARE && largest > acceptable) return { ok: false, iterations };
    for (let k = 0; k < size; k++) step[k] = -residual[k];
    if (!luSolveInPlace(jacobian, step, unknowns)) return { ok: false, iterations };
    // η moves at most 8 per step (a factor e^8 in a share); the line search does the rest.
    let biggestEta = 0;
    for (let k = 0; k < size; k++) if (etaIndex(k) >= 0) biggestEta = Math.max(biggestEta, Math.abs(step[etaIndex(k)]));
    let alpha = biggestEta > 8 ? 8 / biggestEta : 1;
    const savedLevel = group.level;
    for (let k = 0; k < size; k++) savedEta[k] = eta[sites[k]];
    let accepted = false;
    for (let attempt = 0; attempt < 40; attempt++) {
      if (!grounded) group.level = savedLevel + alpha * step[0];
      for (let k = 0; k < size; k++) {
        const index = etaIndex(k);
        if (index >= 0) eta[sites[k]] = savedEta[k] + alpha * step[index];
      }
      const trial = evaluate(false);
      if (trial <= (1 - 1e-4 * alpha) * norm) {
        norm = trial;
        accepted = true;
        break;
      }
      alpha *= 0.5;
    }
    if (!accepted) {
      group.level = savedLevel;
      for (let k = 0; k < size; k++) eta[sites[k]] = savedEta[k];
      evaluate(false);
      return { ok: largestImbalance(acceptable) <= acceptable, iterations };
    }
    evaluate(true);
  }
  return { ok: largestImbalance(acceptable) <= acceptable, iterations };
}

/** After a failed group solve: drop tied options whose share has (nearly) vanished. */
function pruneVanishing(view: CostView, group: Group, tie: SourceTie[], eta: Float64Array): boolean {
  let pruned = false;
  for (const i of group.sources) {
    const t = tie[i];
    let smallest = t.outsideTie ? 0 : Infinity;
    for (const j of t.sites) smallest = Math.min(smallest, eta[j]);
    let sum = t.outsideTie ? Math.exp(smallest) : 0;
    for (const j of t.sites) sum += Math.exp(-(eta[j] - smallest));
    if (t.outsideTie && Math.exp(smallest) / sum < VANISHING_SHARE) {
      t.outsideTie = false;
      pruned = true;
    }
    const kept = t.sites.filter((j) => Math.exp(-(eta[j] - smallest)) / sum >= VANISHING_SHARE);
    if (kept.length < t.sites.length) {
      pruned = true;
      t.sites = kept;
      if (kept.length === 0) t.allBalk = t.outsideTie || Number.isFinite(view.outsideCost[i]);
    }
  }
  return pruned;
}

function writeSourceFlows(
  view: CostView,
  i: number,
  t: SourceTie,
  u: number,
  eta: Float64Array,
  rowStart: number,
  sites: Int32Array,
  flows: Float64Array,
  balked: Float64Array,
): void {
  const { demand } = view;
  let smallest = t.outsideTie ? 0 : Infinity;
  for (const j of t.sites) smallest = Math.min(smallest, eta[j]);
  let sum = t.outsideTie ? Math.exp(smallest) : 0;
  for (const j of t.sites) sum += Math.exp(-(eta[j] - smallest));
  const served = t.outsideTie ? demand[i] : servedAt(view, i, u).served;
  let total = 0;
  for (const j of t.sites) {
    const f = served * Math.exp(-(eta[j] - smallest)) / sum;
    // The row keeps sites ascending: j goes after the tied sites below it.
    let position = rowStart;
    for (const k of t.sites) if (k < j) position++;
    sites[position] = j;
    flows[position] = f;
    total += f;
  }
  // Without an outside option nobody balks; elsewhere the remainder is the balkers (never negative by rounding).
  balked[i] = Number.isFinite(view.outsideCost[i]) ? Math.max(demand[i] - total, 0) : 0;
}
