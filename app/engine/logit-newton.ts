/**
 * Newton's method on the m site costs for the logit (stochastic user) equilibrium.
 *
 * Fix a cost w_j at every site. Each source i then splits its patients by logit over its options
 * (sites at g_ij = w_j + c_ij, c_ij = travel + toll, and the outside option, see
 * `outside-option.ts`), which sends Σ_i q_i·p_ij(w) patients to site j. Site j's own curve says
 * which inflow produces the cost w_j: x_j(w_j) = W_j⁻¹(w_j). The equilibrium is the root of the
 * m equations
 *
 *   R_j(w) = Σ_i q_i(w)·p_ij(w) − x_j(w_j) = 0.
 *
 * R is the gradient of the concave dual of Fisk's entropy-regularised program (Fisk 1980,
 * "Some developments in equilibrium traffic assignment", *Transportation Research B* 14(3)), so
 * its Jacobian −H is symmetric negative definite:
 *
 *   H = Σ_i [ θ q_i (diag p_i − p_i p_iᵀ) + κ_i p_i p_iᵀ ] + diag(x_j'(w_j)),
 *
 * with κ_i = −dq_i/dV_i ≥ 0 (V_i the inclusive cost). Newton solves H Δ = R: dense Cholesky up to
 * DENSE_LIMIT sites; beyond it block by block when sites fall apart into groups that share no
 * source, else conjugate gradients on the implicit H. A line search on the slope of the dual along
 * the step (see `logitNewton`) picks the step length.
 *
 * Pruning: an option more than 40/θ weeks dearer than a source's cheapest carries a share below
 * e^{-40} ≈ 4e-18 and is skipped (less during continuation, see `CostView.cutoff`), so each source
 * touches only the few sites that can be near its cheapest (read from candidate lists, see
 * `CandidateSites`); H is assembled from those alone (work Σ_i K_i², K_i the kept options).
 */
import { logitBalkingShare } from "./outside-option";
import { choleskySolveInPlace } from "./dense-linear";
import type { SiteInverse } from "./site-cost-curve";
import { grownPair, lowestCost, nearestSites, sortedRow } from "./nearest-sites";

/** Options costlier than the cheapest by more than this many 1/θ carry shares below e^-40. */
export const LOGIT_CUTOFF = 40;

/** The solvers' common view of one line: costs per pair, demand, outside options, site curves. */
export interface CostView {
  n: number;
  m: number;
  demand: Float64Array;
  outsideCost: Float64Array;
  outsideSpread: Float64Array;
  /** Travel cost plus any site toll, per pair (n·m); Infinity = pair not allowed. */
  pairCost: Float64Array;
  /** Inverse of each site's cost curve (wait for choice, marginal cost for the optimum). */
  inverses: SiteInverse[];
  totalDemand: number;
  /** Options dearer than a source's cheapest by more than cutoff/θ are dropped. Default LOGIT_CUTOFF. */
  cutoff?: number;
}

/** Buffers reused across Newton iterations (allocated once per solve). */
export class LogitWorkspace {
  rowStart: Int32Array;
  columns: Int32Array;
  shares: Float64Array;
  served: Float64Array;
  servedSlope: Float64Array;
  inclusiveCost: Float64Array;
  inflow: Float64Array;
  load: Float64Array;
  loadSlope: Float64Array;
  residual: Float64Array;
  hessian: Float64Array;
  step: Float64Array;
  trial: Float64Array;
  candidates: CandidateSites;
  blocks: BlockBuffers;

  constructor(readonly n: number, readonly m: number) {
    this.rowStart = new Int32Array(n + 1);
    const initial = Math.max(n * Math.min(m, 16), 16);
    this.columns = new Int32Array(initial);
    this.shares = new Float64Array(initial);
    this.served = new Float64Array(n);
    this.servedSlope = new Float64Array(n);
    this.inclusiveCost = new Float64Array(n);
    this.inflow = new Float64Array(m);
    this.load = new Float64Array(m);
    this.loadSlope = new Float64Array(m);
    this.residual = new Float64Array(m);
    // Dense Newton systems need m²; conjugate gradients only five work vectors.
    this.hessian = new Float64Array(m <= DENSE_LIMIT ? m * m : 5 * m);
    this.step = new Float64Array(m);
    this.trial = new Float64Array(m);
    this.candidates = new CandidateSites(n, m);
    this.blocks = blockBuffers(m);
  }

  ensureCapacity(needed: number): void {
    if (needed > this.columns.length) [this.columns, this.shares] = grownPair(this.columns, this.shares, needed);
  }
}

/**
 * Each source's candidate sites: those within `margin` of its cheapest option at the reference
 * costs (a neighbour list with a skin, as in molecular dynamics; Verlet 1967, *Physical Review*
 * 159(1)). When no site cost has moved by more than δ since, a site off the list costs more than
 * the source's cheapest by at least margin − 2δ, so while width + 2δ ≤ margin the list holds
 * every option within the logit width and the evaluation reads a few entries per source instead
 * of scanning its nearest-site list (whose early stop is weak when some site is nearly empty).
 */
class CandidateSites {
  pairCost: Float64Array | null = null;
  margin = 0;
  /** Largest cost change since the reference, measured by the last `covers`. */
  drift = Infinity;
  reference: Float64Array;
  rowStart: Int32Array;
  sites: Int32Array = new Int32Array(0);
  costs: Float64Array = new Float64Array(0);

  constructor(n: number, m: number) {
    this.reference = new Float64Array(m);
    this.rowStart = new Int32Array(n + 1);
  }

  /** Whether the lists still hold every option within `width` of the cheapest at costs w. */
  covers(pairCost: Float64Array, w: Float64Array, width: number): boolean {
    if (this.pairCost !== pairCost || this.margin > CANDIDATE_STALE * width) {
      this.drift = Infinity;
      return false;
    }
    let drift = 0;
    for (let j = 0; j < w.length; j++) {
      const a = w[j];
      const b = this.reference[j];
      if (a === b) continue;
      const d = Math.abs(a - b);
      if (!(d <= drift)) drift = d;
    }
    this.drift = drift;
    return width + 2 * drift <= this.margin;
  }

  /**
   * The margin for a rebuild: the width plus a skin of CANDIDATE_SKIN widths when that pays —
   * the costs last moved by less than the skin (Newton steps near a solution) and sources keep
   * about one option each (large θ, where scanning for the cheapest, not the shares, is the
   * work); otherwise none (early steps, long line-search trials, and small θ, where a skin would
   * take in many more sites).
   */
  marginFor(width: number, n: number): number {
    const stored = this.rowStart[n];
    const sharp = this.pairCost !== null && stored <= CANDIDATE_SHARP * n;
    return width * (sharp && 2 * this.drift <= CANDIDATE_SKIN * width ? 1 + CANDIDATE_SKIN : 1);
  }

  /** Rebuilds the lists at costs w with the given margin (exact: the nearest-site lists' reading rule). */
  build(view: CostView, w: Float64Array, margin: number): void {
    const { n, m, demand, pairCost } = view;
    const lists = nearestSites(pairCost, n, m);
    const lowestSiteCost = lowestCost(w);
    let stored = 0;
    for (let i = 0; i < n; i++) {
      this.rowStart[i] = stored;
      if (!(demand[i] > 0)) continue;
      let sites = lists.sites;
      let costs = lists.costs;
      let from = i * lists.perSource;
      let to = from + lists.count[i];
      let cheapest = cheapestOnList(sites, costs, from, to, w, lowestSiteCost, Infinity);
      // Sites off the list cost at least lowestSiteCost + bound: read the whole row (sorted) only if that could matter.
      if (lowestSiteCost + lists.bound[i] <= cheapest + margin) {
        from = sortedRow(lists, pairCost, m, i);
        to = from + lists.rowCount[i];
        sites = lists.rowSites;
        costs = lists.rowCosts;
        cheapest = cheapestOnList(sites, costs, from, to, w, lowestSiteCost, cheapest);
      }
      if (cheapest === Infinity) continue;
      if (stored + m > this.sites.length) [this.sites, this.costs] = grownPair(this.sites, this.costs, stored + m);
      const limit = cheapest + margin;
      for (let k = from; k < to; k++) {
        const c = costs[k];
        if (lowestSiteCost + c > limit) break;
        const j = sites[k];
        if (w[j] + c <= limit) {
          this.sites[stored] = j;
          this.costs[stored] = c;
          stored++;
        }
      }
    }
    this.rowStart[n] = stored;
    this.reference.set(w);
    this.margin = margin;
    this.pairCost = pairCost;
  }
}

/**
 * The lowest w_j + c over list entries from..to−1 (in increasing pair cost c), starting from
 * `cheapest`: once `lowest` (no site costs less) + c reaches the cheapest so far, no later entry
 * can be cheaper.
 */
function cheapestOnList(sites: Int32Array, costs: Float64Array, from: number, to: number, w: Float64Array, lowest: number, cheapest: number): number {
  for (let k = from; k < to; k++) {
    const c = costs[k];
    if (lowest + c >= cheapest) break;
    const g = w[sites[k]] + c;
    if (g < cheapest) cheapest = g;
  }
  return cheapest;
}

/** The candidate lists' skin, in logit widths (see `marginFor`); lists wider than CANDIDATE_STALE widths are rebuilt. */
const CANDIDATE_SKIN = 2;
const CANDIDATE_STALE = 8;
/** Candidates per source up to which a skin is worth its wider lists. */
const CANDIDATE_SHARP = 2;

/**
 * Logit split at site costs w: fills the workspace's kept options and shares, served demand,
 * site inflows and the residual R. Returns ‖R‖₂.
 */
export function evaluateLogit(view: CostView, theta: number, w: Float64Array, ws: LogitWorkspace): number {
  const { n, m, demand, outsideCost, outsideSpread } = view;
  const width = (view.cutoff ?? LOGIT_CUTOFF) / theta;
  const candidates = ws.candidates;
  if (!candidates.covers(view.pairCost, w, width)) candidates.build(view, w, candidates.marginFor(width, n));
  const { rowStart: candidateStart, sites: candidateSites, costs: candidateCosts } = candidates;
  ws.inflow.fill(0);
  ws.ensureCapacity(candidateStart[n]);
  let kept = 0;
  for (let i = 0; i < n; i++) {
    ws.rowStart[i] = kept;
    ws.served[i] = 0;
    ws.servedSlope[i] = 0;
    ws.inclusiveCost[i] = Infinity;
    const from = candidateStart[i];
    const to = candidateStart[i + 1];
    if (from === to) continue;
    let cheapest = Infinity;
    for (let k = from; k < to; k++) {
      const g = w[candidateSites[k]] + candidateCosts[k];
      if (g < cheapest) cheapest = g;
    }
    const limit = cheapest + width;
    let sum = 0;
    const first = kept;
    for (let k = from; k < to; k++) {
      const j = candidateSites[k];
      const g = w[j] + candidateCosts[k];
      if (g <= limit) {
        const weight = Math.exp(-theta * (g - cheapest));
        ws.columns[kept] = j;
        ws.shares[kept] = weight;
        sum += weight;
        kept++;
      }
    }
    const inclusive = cheapest - Math.log(sum) / theta;
    ws.inclusiveCost[i] = inclusive;
    const balkingShare = logitBalkingShare(inclusive, outsideCost[i], outsideSpread[i], theta, ws.servedSlope, i);
    const served = demand[i] * (1 - balkingShare);
    ws.served[i] = served;
    ws.servedSlope[i] *= demand[i];
    const scale = 1 / sum;
    for (let k = first; k < kept; k++) {
      ws.shares[k] *= scale;
      ws.inflow[ws.columns[k]] += served * ws.shares[k];
    }
  }
  ws.rowStart[n] = kept;
  let norm = 0;
  for (let j = 0; j < m; j++) {
    const x = view.inverses[j].load(w[j]);
    ws.load[j] = x;
    ws.loadSlope[j] = view.inverses[j].loadSlope(w[j], x);
    const r = ws.inflow[j] - x;
    ws.residual[j] = r;
    norm += r * r;
  }
  return Math.sqrt(norm);
}

/** H as in the header, lower triangle, from the last `evaluateLogit`: one block of all sites. */
function assembleHessian(view: CostView, theta: number, ws: LogitWorkspace): void {
  const { root, position, offset, size } = ws.blocks;
  for (let j = 0; j < view.m; j++) {
    root[j] = 0;
    position[j] = j;
  }
  offset[0] = 0;
  size[0] = view.m;
  assembleBlocks(view, theta, ws, ws.hessian);
}

/**
 * H into its diagonal blocks, from the last `evaluateLogit`: the block of site j (rooted at
 * blocks.root[j]) is the lower triangle of a size × size matrix at blocks.offset of `h`, site j at
 * row blocks.position[j]. A source's kept sites all lie in one block.
 */
function assembleBlocks(view: CostView, theta: number, ws: LogitWorkspace, h: Float64Array): void {
  const { n, m } = view;
  const { root, position, offset, size } = ws.blocks;
  for (let j = 0; j < m; j++) if (root[j] === j) h.fill(0, offset[j], offset[j] + size[j] * size[j]);
  for (let j = 0; j < m; j++) {
    const r = root[j];
    h[offset[r] + position[j] * (size[r] + 1)] += ws.loadSlope[j];
  }
  for (let i = 0; i < n; i++) {
    const start = ws.rowStart[i];
    const end = ws.rowStart[i + 1];
    if (end === start) continue;
    const stiff = theta * ws.served[i];
    const rankOne = stiff - ws.servedSlope[i];
    const r = root[ws.columns[start]];
    const base = offset[r];
    const width = size[r];
    for (let a = start; a < end; a++) {
      const pa = ws.shares[a];
      const ra = position[ws.columns[a]];
      h[base + ra * (width + 1)] += stiff * pa;
      const coefficient = rankOne * pa;
      for (let b = start; b <= a; b++) {
        const rb = position[ws.columns[b]];
        h[base + (ra >= rb ? ra * width + rb : rb * width + ra)] -= coefficient * ws.shares[b];
      }
    }
  }
}

/** out = H·v without forming H (work proportional to the kept options). */
function multiplyHessian(view: CostView, theta: number, ws: LogitWorkspace, v: Float64Array, out: Float64Array): void {
  const { n, m } = view;
  for (let j = 0; j < m; j++) out[j] = ws.loadSlope[j] * v[j];
  for (let i = 0; i < n; i++) {
    const start = ws.rowStart[i];
    const end = ws.rowStart[i + 1];
    if (end === start) continue;
    const stiff = theta * ws.served[i];
    const rankOne = stiff - ws.servedSlope[i];
    let dot = 0;
    for (let k = start; k < end; k++) dot += ws.shares[k] * v[ws.columns[k]];
    for (let k = start; k < end; k++) {
      const j = ws.columns[k];
      out[j] += ws.shares[k] * (stiff * v[j] - rankOne * dot);
    }
  }
}

/** Sites beyond which the Newton system is solved by conjugate gradients instead of Cholesky. */
const DENSE_LIMIT = 120;

/**
 * Newton direction H·Δ = R. Dense Cholesky for small m; for large m, conjugate gradients with a
 * Jacobi preconditioner (Hestenes & Stiefel 1952) on the implicit H — each product costs only
 * the kept options, and an inexact direction is all Newton needs far from the solution.
 */
function newtonDirection(view: CostView, theta: number, ws: LogitWorkspace): void {
  const { m, n } = view;
  if (m <= DENSE_LIMIT) {
    assembleHessian(view, theta, ws);
    ws.step.set(ws.residual);
    choleskySolveInPlace(ws.hessian, ws.step, m);
    return;
  }
  if (blockNewtonDirection(view, theta, ws)) return;
  const diagonal = ws.hessian.subarray(0, m);
  for (let j = 0; j < m; j++) diagonal[j] = ws.loadSlope[j];
  for (let i = 0; i < n; i++) {
    const stiff = theta * ws.served[i];
    const rankOne = stiff - ws.servedSlope[i];
    for (let k = ws.rowStart[i]; k < ws.rowStart[i + 1]; k++) {
      const p = ws.shares[k];
      diagonal[ws.columns[k]] += stiff * p - rankOne * p * p;
    }
  }
  const r = ws.hessian.subarray(m, 2 * m);
  const z = ws.hessian.subarray(2 * m, 3 * m);
  const d = ws.hessian.subarray(3 * m, 4 * m);
  const hd = ws.hessian.subarray(4 * m, 5 * m);
  const x = ws.step;
  x.fill(0);
  r.set(ws.residual);
  let rz = 0;
  let target = 0;
  for (let j = 0; j < m; j++) {
    z[j] = r[j] / diagonal[j];
    d[j] = z[j];
    rz += r[j] * z[j];
    target += r[j] * r[j];
  }
  // Inexact Newton (Dembo, Eisenstat & Steihaug 1982): a loose direction far from the root, a
  // tight one near it, where the forcing term shrinks with the residual.
  const demandScale = Math.max(view.totalDemand, 1e-300);
  const forcing = Math.min(1e-2, Math.sqrt(Math.sqrt(target) / demandScale));
  target *= Math.max(forcing * forcing, 1e-24);
  for (let iteration = 0; iteration < 200; iteration++) {
    multiplyHessian(view, theta, ws, d, hd);
    let curvature = 0;
    for (let j = 0; j < m; j++) curvature += d[j] * hd[j];
    if (!(curvature > 0)) break;
    const alpha = rz / curvature;
    let rr = 0;
    for (let j = 0; j < m; j++) {
      x[j] += alpha * d[j];
      r[j] -= alpha * hd[j];
      rr += r[j] * r[j];
    }
    if (rr <= target) break;
    let rzNext = 0;
    for (let j = 0; j < m; j++) {
      z[j] = r[j] / diagonal[j];
      rzNext += r[j] * z[j];
    }
    const beta = rzNext / rz;
    rz = rzNext;
    for (let j = 0; j < m; j++) d[j] = z[j] + beta * d[j];
  }
}

/** The block solve's buffers: per site its block's root, position in it; per root the block's size and offsets. */
interface BlockBuffers {
  root: Int32Array;
  size: Int32Array;
  position: Int32Array;
  offset: Int32Array;
  start: Int32Array;
  members: Int32Array;
  matrix: Float64Array;
}

function blockBuffers(m: number): BlockBuffers {
  const [root, size, position, offset, start, members] = Array.from({ length: 6 }, () => new Int32Array(m));
  return { root, size, position, offset, start, members, matrix: new Float64Array(0) };
}

/** Sites per block beyond which the block solve gives way to conjugate gradients. */
const BLOCK_LIMIT = 160;

/**
 * Exact Newton direction when H falls apart into small blocks. Two sites are coupled in H only
 * through a source that keeps both, so H is block diagonal over the connected groups of sites
 * that share sources; at large θ most sources keep one site and the groups are small (national
 * instance: dozens of sites at most), where conjugate gradients need hundreds of products on the
 * ill-conditioned whole. Each block is assembled and factorised (Cholesky) on its own. Returns
 * false, having done nothing, when a block has more than BLOCK_LIMIT sites.
 */
function blockNewtonDirection(view: CostView, theta: number, ws: LogitWorkspace): boolean {
  const { n, m } = view;
  const blocks = ws.blocks;
  const root = blocks.root;
  for (let j = 0; j < m; j++) root[j] = j;
  const find = (j: number): number => {
    while (root[j] !== j) {
      root[j] = root[root[j]];
      j = root[j];
    }
    return j;
  };
  for (let i = 0; i < n; i++) {
    const start = ws.rowStart[i];
    const end = ws.rowStart[i + 1];
    if (end - start < 2) continue;
    const first = find(ws.columns[start]);
    for (let k = start + 1; k < end; k++) {
      const other = find(ws.columns[k]);
      if (other !== first) root[other] = first;
    }
  }
  // Blocks: sites numbered within their block, each block's matrix stored at its offset.
  const size = blocks.size;
  const position = blocks.position;
  size.fill(0);
  for (let j = 0; j < m; j++) {
    const r = find(j);
    root[j] = r;
    position[j] = size[r]++;
    if (size[r] > BLOCK_LIMIT) return false;
  }
  // Per block: where its matrix starts, and where its sites are listed in `members`.
  const offset = blocks.offset;
  const first = blocks.start;
  const members = blocks.members;
  let total = 0;
  let listed = 0;
  for (let j = 0; j < m; j++) {
    if (root[j] !== j) continue;
    offset[j] = total;
    total += size[j] * size[j];
    first[j] = listed;
    listed += size[j];
  }
  for (let j = 0; j < m; j++) members[first[root[j]] + position[j]] = j;
  if (blocks.matrix.length < total) blocks.matrix = new Float64Array(Math.max(total, 2 * blocks.matrix.length));
  const h = blocks.matrix;
  assembleBlocks(view, theta, ws, h);
  // Solve block by block: gather the residual, factorise, scatter the step.
  for (let j = 0; j < m; j++) {
    if (root[j] !== j) continue;
    const width = size[j];
    const sites = members.subarray(first[j], first[j] + width);
    const right = ws.trial.subarray(0, width);
    for (let a = 0; a < width; a++) right[a] = ws.residual[sites[a]];
    choleskySolveInPlace(h.subarray(offset[j], offset[j] + width * width), right, width);
    for (let a = 0; a < width; a++) ws.step[sites[a]] = right[a];
  }
  return true;
}

export interface NewtonOutcome {
  iterations: number;
  /** Σ_j |R_j| at exit, referrals/week. */
  residual: number;
  converged: boolean;
}

function absoluteSum(values: Float64Array): number {
  let s = 0;
  for (let k = 0; k < values.length; k++) s += Math.abs(values[k]);
  return s;
}

/** A line search takes a climbing step once its bracket is this narrow relative to the step. */
const NARROW_BRACKET = 0.1;
/** Bisect instead of a secant when φ' at the bracket's far end is this many times steeper. */
const KINK_RATIO = 10;

/**
 * Newton iterations at a fixed θ from the costs in `w` (updated in place) until Σ_j |R_j| ≤
 * `tolerance`. Stops early, unconverged, when the line search finds no step. `emptyChords`: see
 * the chord rule inside (for a start from empty sites).
 */
export function logitNewton(
  view: CostView,
  theta: number,
  w: Float64Array,
  ws: LogitWorkspace,
  tolerance: number,
  maxIterations: number,
  emptyChords = false,
): NewtonOutcome {
  const { m } = view;
  evaluateLogit(view, theta, w, ws);
  let iterations = 0;
  while (absoluteSum(ws.residual) > tolerance && iterations < maxIterations) {
    iterations++;
    newtonDirection(view, theta, ws);
    if (emptyChords) {
      // A site whose step would take its cost below its empty cost meets the steep extension
      // there (a cliff in the dual, where line searches take tiny steps). Such a site's slope in
      // H becomes the chord to the empty point, x_j/(w_j − e_j) — the linear model then empties
      // it at its empty cost, not beyond — and the direction is solved again. Used in the first
      // stage, where costs rise from empty sites (national instance: 17 Newton steps and 25
      // evaluations instead of 20 and 46); later stages start near their solution, where the
      // chords only slowed Newton's final convergence.
      for (let round = 0; round < 2; round++) {
        let crossing = 0;
        for (let j = 0; j < m; j++) {
          const inverse = view.inverses[j];
          const above = w[j] - inverse.emptyCost;
          if (inverse.bounds.lower > 0 || !(above > 0) || w[j] + ws.step[j] >= inverse.emptyCost) continue;
          // Never steeper than the site's own steepest slope: a site a hair above its empty
          // cost (w − e ≈ 1e-31 once) gave a chord of ~1e28, and Cholesky's pivot floor, relative
          // to the largest diagonal entry, then flattened every other site's step to nothing.
          const chord = Math.min(ws.load[j] / above, inverse.maxLoadSlope);
          if (!(chord > ws.loadSlope[j] * (1 + 1e-9))) continue;
          ws.loadSlope[j] = chord;
          crossing++;
        }
        if (crossing === 0) break;
        newtonDirection(view, theta, ws);
      }
    }
    // A full Newton step can jump far when a site is nearly empty or nearly full; no site cost
    // needs to move by more than a few times the width of the kept options plus its own size.
    let largest = 0;
    for (let j = 0; j < m; j++) if (Number.isFinite(w[j])) largest = Math.max(largest, Math.abs(ws.step[j]) / (4 * LOGIT_CUTOFF / theta + Math.abs(w[j])));
    let alpha = largest > 1 ? 1 / largest : 1;
    // Line search on the concave dual Ψ (whose gradient is R) through its slope along the step,
    // φ'(α) = R(w + αΔ)·Δ, which falls as α grows. The Newton (or any CG) direction climbs:
    // φ'(0) = RᵀΔ > 0. A step is taken when |φ'(α)| ≤ φ'(0)/2 (a strong Wolfe curvature
    // condition), or when the full step still climbs. An overshoot brackets the maximiser of φ
    // and the bracket shrinks by secants on φ' (regula falsi, kept 5% inside the bracket): accepting
    // the first step that merely did not overshoot took hundreds of 5% steps at moderate θ, where
    // the full step overshoots by far. Inexact directions need no accurate solve to be accepted.
    // Across a kink (φ' far steeper at the bracket's far end than it fell before it) secants
    // creep, so the bracket is halved instead, and a climbing step is taken once the bracket is
    // narrow: a step into a site's empty-cost cliff once took 40 trial evaluations.
    let slope0 = 0;
    for (let j = 0; j < m; j++) if (ws.step[j] !== 0) slope0 += ws.residual[j] * ws.step[j];
    let accepted = false;
    if (slope0 > 0) {
      let low = 0;
      let lowSlope = slope0;
      let high = Infinity;
      let highSlope = 0;
      for (let attempt = 0; attempt < 40; attempt++) {
        for (let j = 0; j < m; j++) ws.trial[j] = w[j] + alpha * ws.step[j];
        evaluateLogit(view, theta, ws.trial, ws);
        let slope = 0;
        for (let j = 0; j < m; j++) if (ws.step[j] !== 0) slope += ws.residual[j] * ws.step[j];
        const overshoot = slope < -0.5 * slope0;
        const short = slope > 0.5 * slope0 && high < Infinity;
        if (!overshoot && !short) {
          w.set(ws.trial);
          accepted = true;
          break;
        }
        if (overshoot) {
          high = alpha;
          highSlope = slope;
        } else {
          low = alpha;
          lowSlope = slope;
          // Still climbing, in a bracket already narrow: take it (the dual has risen).
          if (high - low <= NARROW_BRACKET * low) {
            w.set(ws.trial);
            accepted = true;
            break;
          }
        }
        const width = high - low;
        if (-highSlope > KINK_RATIO * lowSlope) {
          // φ' drops by far more across the bracket than it fell before it: a kink (a site's cost
          // stepping past its empty cost, where its inflow turns steeply), where secants creep.
          alpha = low + 0.5 * width;
        } else {
          const secant = low + (width * lowSlope) / (lowSlope - highSlope);
          alpha = Math.min(Math.max(secant, low + 0.05 * width), high - 0.05 * width);
        }
      }
    }
    if (!accepted) {
      // Re-evaluate at the last accepted point so the workspace describes w.
      evaluateLogit(view, theta, w, ws);
      return { iterations, residual: absoluteSum(ws.residual), converged: false };
    }
  }
  const residual = absoluteSum(ws.residual);
  return { iterations, residual, converged: residual <= tolerance };
}

/**
 * Growth of θ per continuation stage. Each stage starts from the previous solution, extrapolated;
 * with ×3 that start is within a few logit widths 1/θ of the new solution, so a stage takes a few
 * Newton steps, where ×10 took tens of damped ones (national instance: 190 → 110 in all).
 */
export const THETA_FACTOR = 3;
const STAGE_ITERATIONS = 1000;

/**
 * Continuation in θ: solve at `fromTheta`, then at THETA_FACTOR× larger θ, …, up to `toTheta`, each stage
 * to a loose tolerance and the last to `finalTolerance` (Σ|R|, referrals/week). Between stages the
 * costs are extrapolated along the path w(θ) ≈ w* + a/θ (its asymptotic form) when that lowers
 * the residual, so each stage starts close to its solution.
 */
export function logitContinuation(
  view: CostView,
  w: Float64Array,
  ws: LogitWorkspace,
  fromTheta: number,
  toTheta: number,
  finalTolerance: number,
  maxIterations: number,
): NewtonOutcome & { theta: number } {
  const { m } = view;
  let theta = Math.min(fromTheta, toTheta);
  let iterations = 0;
  const previous = new Float64Array(m);
  let previousTheta = 0;
  for (;;) {
    const last = theta >= toTheta;
    const stageCap = last ? maxIterations - iterations : Math.min(STAGE_ITERATIONS, maxIterations - iterations);
    const outcome = logitNewton(view, theta, w, ws, last ? finalTolerance : 1e-3 * view.totalDemand, Math.max(stageCap, 1));
    iterations += outcome.iterations;
    if (last || iterations >= maxIterations) return { ...outcome, iterations, theta };
    const nextTheta = Math.min(theta * THETA_FACTOR, toTheta);
    if (previousTheta > 0) {
      const current = Float64Array.from(w);
      const currentNorm = evaluateLogit(view, nextTheta, current, ws);
      for (let j = 0; j < m; j++) {
        if (!Number.isFinite(w[j])) continue;
        const limit = (theta * w[j] - previousTheta * previous[j]) / (theta - previousTheta);
        ws.trial[j] = limit + (w[j] - limit) * (theta / nextTheta);
      }
      const predicted = Float64Array.from(ws.trial);
      if (evaluateLogit(view, nextTheta, predicted, ws) < currentNorm) {
        previous.set(w);
        w.set(predicted);
      } else previous.set(w);
    } else previous.set(w);
    previousTheta = theta;
    theta = nextTheta;
  }
}

/**
 * A starting θ for continuation: small enough that the first Newton steps act on a smooth
 * problem (θ times the typical cost ≈ 1), large enough that each source keeps only its ~16
 * nearest sites (otherwise assembling H costs n·m² at national size).
 */
export function initialTheta(view: CostView, w: Float64Array): number {
  const { n, m, pairCost, demand, outsideCost } = view;
  const sampleStep = Math.max(1, Math.floor(n / 256));
  const costs: number[] = [];
  const spreads: number[] = [];
  const rank = Math.min(m, 16) - 1;
  const row = new Float64Array(m);
  for (let i = 0; i < n; i += sampleStep) {
    if (!(demand[i] > 0)) continue;
    let count = 0;
    for (let j = 0; j < m; j++) {
      const g = w[j] + pairCost[i * m + j];
      if (Number.isFinite(g)) row[count++] = g;
    }
    if (count === 0) continue;
    const sorted = row.subarray(0, count).sort();
    costs.push(Math.min(sorted[0], Number.isFinite(outsideCost[i]) ? outsideCost[i] : Infinity));
    if (count > rank && rank > 0) spreads.push(sorted[rank] - sorted[0]);
  }
  const median = (values: number[]): number => {
    if (values.length === 0) return 0;
    const s = [...values].sort((a, b) => a - b);
    return s[Math.floor(s.length / 2)];
  };
  const halfLoadCost = meanHalfLoadCost(view);
  const costScale = Math.max(median(costs), halfLoadCost, 1e-9);
  let theta = 1 / costScale;
  const spread = median(spreads);
  if (m > 16 && spread > 0) theta = Math.max(theta, LOGIT_CUTOFF / spread);
  return theta;
}

/** Demand-weighted mean inclusive cost after `evaluateLogit`: the scale θ is measured against. */
export function costScaleOf(view: CostView, ws: LogitWorkspace): number {
  let total = 0;
  let weight = 0;
  for (let i = 0; i < view.n; i++) {
    const v = ws.inclusiveCost[i];
    if (Number.isFinite(v) && view.demand[i] > 0) {
      total += view.demand[i] * Math.abs(v);
      weight += view.demand[i];
    }
  }
  const halfLoadCost = meanHalfLoadCost(view);
  return Math.max(weight > 0 ? total / weight : 0, halfLoadCost, 1e-9);
}

/** Mean rise of site cost from empty to half capacity over open sites. */
function meanHalfLoadCost(view: CostView): number {
  let total = 0;
  let count = 0;
  for (const inverse of view.inverses) {
    if (inverse.closed) continue;
    total += inverse.curve.cost(inverse.curve.capacity / 2) - inverse.emptyCost;
    count++;
  }
  return count > 0 ? total / count : 0;
}
