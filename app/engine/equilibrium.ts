/**
 * The `choice` rule: Wardrop's user equilibrium with balking (Wardrop 1952, "Some theoretical
 * aspects of road traffic research", *Proc. Inst. Civil Engineers* 1(3) — from memory for the
 * page range). Every option a source's patients use costs the same and none is cheaper; the
 * patients who balk are exactly those whose reservation cost is below that cost.
 *
 * Method (README.md has the full story): Newton on the m site costs for the logit model,
 * with θ raised threefold per stage from a smooth start (continuation), then the exact θ = ∞ finish on the
 * tied structure (`wardrop-finish.ts`). The same driver solves the optimum on marginal-cost
 * curves (`optimum.ts`). Flows among tied options are the maximum-entropy split.
 */
import type { Allocation, LineProblem, SolveDiagnostics } from "./problem";
import { NoSteadyStateError } from "./problem";
import { relativeGap } from "./allocation-cost";
import { allocationFromRows, allocationLoads } from "./flow-rows";
import { type CostView, LogitWorkspace, THETA_FACTOR, costScaleOf, evaluateLogit, initialTheta, logitContinuation, logitNewton } from "./logit-newton";
import { type SiteCostCurve, SiteInverse, waitCurve } from "./site-cost-curve";
import { EXACT_CYCLE, wardropFinish } from "./wardrop-finish";

/**
 * θ at which continuation hands over to the exact finish, times the instance's cost scale: high
 * enough that the tied options are told apart from the rest, low enough that Newton at that θ
 * is still cheap and well conditioned.
 */
const FINISH_SCALE = 1e5;

/**
 * Hand-overs to the finish, tried in turn until one succeeds: θ as a multiple of θ_finish, and
 * Σ_j |R_j| (as a share of demand) to which the logit model is solved there. The finish reads only
 * the tied structure and first guesses from the logit solution and re-solves exactly. A hand-over
 * at 1e-3 of demand saved three Newton steps but read a wrong structure often enough (national
 * instances: the finish then spent 8 rounds before the retry) that 1e-6 comes first; a tight
 * solve at very large θ took 170 damped Newton steps on a national scenario, so larger θ comes
 * only when the structure read off is still wrong. `cycleTolerance`: how closely a cycle of tied
 * pairs must agree to be kept as exact ties (`wardropFinish`).
 */
const FINISH_ATTEMPTS = [
  { thetaScale: 1, handover: 1e-6, cycleTolerance: EXACT_CYCLE },
  { thetaScale: 10, handover: 1e-6, cycleTolerance: EXACT_CYCLE },
  { thetaScale: 100, handover: 1e-9, cycleTolerance: EXACT_CYCLE },
  // Last, from the same logit solution: pairs closing cycles that agree to 1e-6 of the costs are
  // kept as ties. With many sites close together, the sources of a distant town see nearly the
  // same difference in travel cost to two neighbouring sites, so the tie graph has cycles that
  // agree to ~1e-8 weeks: too close for the logit solution to tell which pair of each is the tie,
  // too far apart to be exact. Generated 600×80 and 600×120 regions (seeds 1–6): 13 of 24 solves
  // ended on the logit fallback (gaps up to 9e-9); with this attempt 7, with gaps up to 6.6e-10.
  // Only a last resort: kept from the start, such pairs stopped a 500×40 region short of 1e-10.
  { thetaScale: 100, handover: 1e-9, cycleTolerance: 1e-6 },
];

const CONTINUATION_CUTOFF = 25;
/**
 * The first stage, at the smoothest θ, keeps about fifteen options per source with
 * CONTINUATION_CUTOFF; it only seeds the next stage, so shares below e^-15 ≈ 3e-7 are dropped
 * there (national instance: the same Newton steps, a quarter less time).
 */
const FIRST_STAGE_CUTOFF = 15;

/** Newton steps per finish attempt's continuation at most (see `solveWardropOnCurves`). */
const ATTEMPT_ITERATIONS = 150;

/** Active-set rounds per finish attempt: a right structure settles in ≤ 5; a wrong one only degrades. */
const FINISH_ROUNDS = 8;

export interface SolveOptions {
  /** Per-site cost (weeks) added to every option at the site; never counted in total cost. Default none. */
  siteToll?: Float64Array;
  /** Target relative gap (PRODUCT.md definition). Default 1e-10. */
  tolerance?: number;
  /** Cap on Newton iterations over all stages and finish attempts. Default 2000. */
  maxIterations?: number;
  /** Site costs to start from (e.g. the previous period's waits). Default: each site's empty wait. */
  warmStartWaits?: Float64Array;
  /**
   * Volume bounds per site (the plan's contracts and ceilings; lower 0 / upper Infinity = none):
   * solved through the clamped inverse of `SiteInverse`, whose excess cost at a bound is the
   * bound's toll (reported in `siteCost`, counted in the relative gap).
   */
  loadBounds?: { lower: Float64Array; upper: Float64Array };
}

export interface SolveResult {
  allocation: Allocation;
  /** Mean routine wait at each site (weeks) under the allocation. */
  siteWait: Float64Array;
  diagnostics: SolveDiagnostics;
}

interface NormalisedOptions {
  siteToll: Float64Array | undefined;
  tolerance: number;
  maxIterations: number;
  warmStartWaits: Float64Array | undefined;
  loadBounds: SolveOptions["loadBounds"];
}

export function normaliseOptions(options: SolveOptions): NormalisedOptions {
  return {
    siteToll: options.siteToll,
    tolerance: options.tolerance ?? 1e-10,
    maxIterations: options.maxIterations ?? 2000,
    warmStartWaits: options.warmStartWaits,
    loadBounds: options.loadBounds,
  };
}

/** Throws NoSteadyStateError when patients with no outside option alone exceed every site's capacity. */
export function assertSteadyState(problem: LineProblem): void {
  let captive = 0;
  for (let i = 0; i < problem.n; i++) if (!Number.isFinite(problem.outsideCost[i])) captive += problem.demand[i];
  let capacity = 0;
  for (const site of problem.sites) capacity += site.capacity;
  if (captive >= capacity) {
    throw new NoSteadyStateError([
      { lineId: problem.lineId, siteIds: problem.siteIds, demand: captive, capacity, shortfall: captive - capacity },
    ]);
  }
}

export function buildCostView(
  problem: LineProblem,
  curves: SiteCostCurve[],
  siteToll: Float64Array | undefined,
  loadBounds?: SolveOptions["loadBounds"],
): CostView {
  const { n, m } = problem;
  let pairCost = problem.travelCost;
  if (siteToll) {
    pairCost = new Float64Array(n * m);
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) pairCost[i * m + j] = problem.travelCost[i * m + j] + siteToll[j];
  }
  let totalDemand = 0;
  for (let i = 0; i < n; i++) totalDemand += problem.demand[i];
  return {
    n,
    m,
    demand: problem.demand,
    outsideCost: problem.outsideCost,
    outsideSpread: problem.outsideSpread,
    pairCost,
    inverses: curves.map((curve, j) =>
      loadBounds ? new SiteInverse(curve, { lower: loadBounds.lower[j], upper: loadBounds.upper[j] }) : new SiteInverse(curve),
    ),
    totalDemand,
  };
}

export interface CurveSolveOutcome {
  allocation: Allocation;
  load: Float64Array;
  /** Cost on the solved curves (wait or marginal cost) at the allocation's loads. */
  curveCost: Float64Array;
  diagnostics: SolveDiagnostics;
}

/**
 * Wardrop equilibrium on the given site cost curves (waits → user equilibrium; marginal costs →
 * system optimum). The relative gap is measured on those curves.
 */
export function solveWardropOnCurves(problem: LineProblem, curves: SiteCostCurve[], options: SolveOptions, ruleName: string): CurveSolveOutcome {
  const settings = normaliseOptions(options);
  assertSteadyState(problem);
  const { n, m } = problem;
  const view = buildCostView(problem, curves, settings.siteToll, settings.loadBounds);
  // Continuation only hands the finish a tied structure, which reads costs, not shares: shares
  // below e^-25 ≈ 1e-11 are dropped (the logit rule keeps LOGIT_CUTOFF), a third less work.
  view.cutoff = CONTINUATION_CUTOFF;
  const warnings: string[] = [];
  const w = new Float64Array(m);
  for (let j = 0; j < m; j++) w[j] = view.inverses[j].closed ? Infinity : (settings.warmStartWaits?.[j] ?? view.inverses[j].startCost);
  const workspace = new LogitWorkspace(n, m);
  let iterations = 0;
  if (view.totalDemand <= 0 || m === 0) {
    return finishOutcome(problem, curves, view, { flow: new Float64Array(n * m), balked: new Float64Array(n) }, null, settings, 0, warnings);
  }
  // Continuation: θ up by factors of THETA_FACTOR from a smooth start to θ_finish = FINISH_SCALE / cost scale.
  const startTheta = initialTheta(view, w);
  let budget = settings.maxIterations;
  // The first stage's solution tells the cost scale that θ_finish is measured against.
  view.cutoff = FIRST_STAGE_CUTOFF;
  if (!settings.warmStartWaits && !settings.loadBounds) firstGuess(view, curves, startTheta, w, workspace);
  const first = logitNewton(view, startTheta, w, workspace, 1e-3 * view.totalDemand, budget, true);
  view.cutoff = CONTINUATION_CUTOFF;
  iterations += first.iterations;
  budget -= first.iterations;
  const baseFinishTheta = Math.max(startTheta, FINISH_SCALE / costScaleOf(view, workspace));
  let fromTheta = Math.min(startTheta * THETA_FACTOR, baseFinishTheta);
  let closest: CurveSolveOutcome | null = null;
  for (let attempt = 0; attempt < FINISH_ATTEMPTS.length; attempt++) {
    const last = attempt === FINISH_ATTEMPTS.length - 1;
    const finishTheta = baseFinishTheta * FINISH_ATTEMPTS[attempt].thetaScale;
    const tolerance = FINISH_ATTEMPTS[attempt].handover * view.totalDemand;
    // Each attempt's Newton steps are capped: at large θ Newton can stall short of a tight
    // hand-over (the logit residual is nearly piecewise constant there), and the next attempt's
    // larger θ then does better than spending the whole budget at this one.
    const path = logitContinuation(view, w, workspace, fromTheta, finishTheta, tolerance, Math.max(Math.min(budget, ATTEMPT_ITERATIONS), 1));
    iterations += path.iterations;
    budget -= path.iterations;
    const theta = path.theta;
    const finish = wardropFinish(view, w, theta, Math.max(budget, 1), FINISH_ROUNDS, FINISH_ATTEMPTS[attempt].cycleTolerance);
    iterations += finish.iterations;
    budget -= finish.iterations;
    if (finish.ok) {
      const allocation = allocationFromRows(view.m, finish.rows, finish.balked);
      const result = finishOutcome(problem, curves, view, allocation, finish.siteCost, settings, iterations, warnings);
      if (result.diagnostics.converged) return annotate(result, ruleName);
      // A finished structure short of the tolerance: kept in case no later attempt does better.
      if (!closest || result.diagnostics.relativeGap < closest.diagnostics.relativeGap) closest = result;
    }
    if (last || budget <= 0) {
      if (!closest) {
        warnings.push(`${ruleName}: the exact finish failed (${finish.message}); the logit approximation at θ = ${theta.toExponential(2)} is reported.`);
        evaluateLogit(view, theta, w, workspace);
        closest = finishOutcome(problem, curves, view, logitAllocation(view, workspace), w, settings, iterations, warnings);
      }
      closest.diagnostics.iterations = iterations;
      return annotate(closest, ruleName);
    }
    // Retry from a sharper logit solution (the same θ solved tighter, then larger θ).
    fromTheta = Math.min(theta * THETA_FACTOR, baseFinishTheta * FINISH_ATTEMPTS[Math.min(attempt + 1, FINISH_ATTEMPTS.length - 1)].thetaScale);
  }
  throw new Error("unreachable");
}

/**
 * Share of capacity at which `firstGuess` prices a site that logit would overfill. Tried on
 * generated national instances (5 seeds, choice and optimum): 0.8 cut the first stage's time by
 * about a quarter in 9 of 10 runs; 0.9 and 0.95 less, 0.7 slowed the choice.
 */
const FIRST_GUESS_LOAD = 0.8;

/**
 * Site costs to start the first stage from, in place of empty sites. From empty sites logit sends
 * each area's demand to its nearest sites, far beyond their capacity, and Newton on the costs
 * climbs out slowly: near empty a site's load rises steeply with its cost, so the linear model
 * asks for small steps (national instance: seven full steps that cut the residual by half in all,
 * then ten damped ones). One fixed-point step first — each site's cost at the inflow logit sends
 * it from empty, capped at FIRST_GUESS_LOAD of its capacity — starts Newton with overfilled sites
 * already dear (first stage: 43 → 27 evaluations on the national command-line file's optimum).
 */
function firstGuess(view: CostView, curves: SiteCostCurve[], theta: number, w: Float64Array, workspace: LogitWorkspace): void {
  evaluateLogit(view, theta, w, workspace);
  for (let j = 0; j < view.m; j++) {
    if (!Number.isFinite(w[j])) continue;
    w[j] = curves[j].cost(Math.min(workspace.inflow[j], FIRST_GUESS_LOAD * curves[j].capacity));
  }
}

function annotate(outcome: CurveSolveOutcome, ruleName: string): CurveSolveOutcome {
  const { diagnostics } = outcome;
  if (!diagnostics.converged) {
    diagnostics.warnings.push(
      `${ruleName} did not converge: relative gap ${diagnostics.relativeGap.toExponential(2)} after ${diagnostics.iterations} iterations.`,
    );
  }
  return outcome;
}

function finishOutcome(
  problem: LineProblem,
  curves: SiteCostCurve[],
  view: CostView,
  allocation: Allocation,
  siteCost: Float64Array | null,
  settings: NormalisedOptions,
  iterations: number,
  warnings: string[],
): CurveSolveOutcome {
  const load = allocationLoads(allocation, problem.n, problem.m);
  // At a volume bound the site's cost is the solved one: the curve's plus the bound's toll.
  const curveCost = Float64Array.from(load, (x, j) =>
    siteCost && view.inverses[j].atBound(siteCost[j]) ? siteCost[j] : x > 0 ? curves[j].cost(x) : view.inverses[j].emptyCost,
  );
  const gap = relativeGap(problem, allocation, curveCost, settings.siteToll).relativeGap;
  return {
    allocation,
    load,
    curveCost,
    diagnostics: { converged: gap <= settings.tolerance, iterations, relativeGap: gap, warnings },
  };
}

/** Flows and balking of the logit split held in the workspace. */
export function logitAllocation(view: CostView, ws: LogitWorkspace): Allocation {
  const { n, m, demand } = view;
  const flow = new Float64Array(n * m);
  const balked = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    for (let k = ws.rowStart[i]; k < ws.rowStart[i + 1]; k++) flow[i * m + ws.columns[k]] = ws.served[i] * ws.shares[k];
    balked[i] = demand[i] > 0 && Number.isFinite(view.outsideCost[i]) ? Math.max(demand[i] - ws.served[i], 0) : 0;
  }
  return { flow, balked };
}

/** Patient choice: Wardrop user equilibrium with balking. */
export function solveChoice(problem: LineProblem, options: SolveOptions = {}): SolveResult {
  const curves = problem.sites.map(waitCurve);
  const outcome = solveWardropOnCurves(problem, curves, options, "choice");
  return { allocation: outcome.allocation, siteWait: outcome.curveCost, diagnostics: outcome.diagnostics };
}
