/**
 * The `plan` rule: the optimum (minimum total cost, Wardrop's second principle, as in
 * `optimum.ts`) subject to what a commissioner can write into contracts and access policy:
 *
 *  - contract volumes per site: minWeekly ≤ routine inflow ≤ maxWeekly (NaN = none);
 *  - a utilisation ceiling u: a site's utilisation counts urgent and routine work alike,
 *    (urgent + routine)/(capacity before urgent work), so routine inflow ≤ u·fullCapacity − urgent.
 *    For a pathway, fullCapacity is the bottleneck stage's cμ/visits and the ceiling holds there,
 *    hence at every stage. Without the per-site urgent inflow the ceiling is u·capacity (exact
 *    when there is no urgent class);
 *  - a maximum journey: pairs with more road km than maxKm are not allowed.
 *
 * Two methods, one answer:
 *  - "lp": javascript-lp-solver on a piecewise-linear cost with adaptive breakpoints and a
 *    certified gap (`plan-lp.ts`), used on request (`method: "lp"`) or, with "auto", while
 *    the LP is expected to stay within 1,000 variables (about 15 practices × 5 sites with spread
 *    outside options). If refinement reaches the LP's size cap before its gap is certified, the
 *    dual method answers instead, with a warning — never an uncertified (NaN) gap;
 *  - "dual": Lagrangian relaxation of the site volume bounds. Each bound gets a multiplier τ_j
 *    (≥ 0 for a maximum, ≤ 0 for a minimum) charged as a per-referral toll. By default the
 *    multipliers are found directly: the optimum's solver runs once on marginal-cost curves
 *    clamped to the bounds (`SiteInverse` with `LoadBounds`), and τ_j is the excess of site j's
 *    solved cost over its marginal cost. Otherwise (`multipliers: "iterate"`, or when the direct
 *    solve does not settle) the relaxed problem is the unconstrained optimum with tolls
 *    (`solveOptimum`, any size), and the tolls are updated until
 *    complementarity holds: a site with τ_j > 0 sits at its maximum, with τ_j < 0 at its minimum.
 *    Because the optimum is strictly convex in the site inflows, x(τ) is continuous and each
 *    x_j falls as τ_j rises (Everett 1963, "Generalized Lagrange multiplier method for solving
 *    problems of optimum allocation of resources", Operations Research 11(3):399–417). The update
 *    is a per-site Newton step on x_j(τ_j) = bound_j: the Jacobi estimate τ_j += M_j(x_j) − M_j(bound_j)
 *    (M_j = W_j + x·W_j', the change in toll that would move x_j to its bound if the other sites'
 *    prices held still — an under-estimate, since flow pushed away partly returns), replaced by
 *    the secant slope of the observed x_j(τ_j) once two iterates exist, kept within [1, 20]× the
 *    Jacobi step and projected onto the multiplier's sign.
 *
 * Infeasible plans (minimum volumes above the demand that can reach a site, a minimum above a
 * maximum or a ceiling, a source left with no site within the journey limit and no outside
 * option, …) return status "infeasible" with messages naming the sites and sources, never a
 * half-made allocation.
 */
import type { Allocation, LineProblem, SolveDiagnostics } from "./problem";
import { ScenarioInputError } from "./problem";
import { solveOptimum } from "./optimum";
import { solveWardropOnCurves } from "./equilibrium";
import { marginalCostCurve } from "./site-cost-curve";
import { planTotalCost, siteMarginalCost, solvePlanLp, type PlanBounds } from "./plan-lp";

/** The relaxed (tolled) optimum the dual method calls; `solveOptimum` in production. */
export type TolledOptimumSolver = (
  problem: LineProblem,
  options: { siteToll: Float64Array; tolerance?: number; maxIterations?: number },
) => { allocation: Allocation; diagnostics: SolveDiagnostics };

export interface PlanOptions {
  /** Utilisation ceiling in (0, 1]; default none (sites may run up to, never at, capacity). */
  maxUtilisation?: number;
  /** Longest allowed journey in road km (> 0); default none. */
  maxKm?: number;
  /** Urgent inflow per site (referrals/week) served ahead of routine patients; default 0. */
  urgentInflow?: Float64Array;
  /** Capacity per site before urgent work (referrals/week); default capacity + urgentInflow. */
  fullCapacity?: Float64Array;
  /**
   * "auto" (default): "lp" while the LP is expected to stay within `lpVariableLimit` variables,
   * else "dual". The product's solve path (`solve-scenario.ts`) asks for "dual": exact at any
   * size and fast; the tests run both and compare.
   */
  method?: "auto" | "lp" | "dual";
  /**
   * Default 1,000. javascript-lp-solver is a dense simplex: about 0.1 s per solve at 500
   * variables here, and a certified 1e-7 gap takes ~10 rounds of two solves, so beyond this the
   * dual method (exact, and faster) is used. The LP itself refines up to 3,000 variables.
   */
  lpVariableLimit?: number;
  /** Largest LP the LP method's refinement builds (variables). Default 3,000; beyond it the dual method answers. */
  lpRefinementLimit?: number;
  /** Target certified relative gap of the LP method. Default 1e-7. */
  tolerance?: number;
  /** Dual method: largest bound violation, as a share of the site's capacity (at least 1/week). Default 1e-9. */
  boundTolerance?: number;
  /** Toll updates at most in the dual method. Default 300. */
  maxIterations?: number;
  /** The inner solver of the dual method. Default: the tolled optimum of `optimum.ts`. */
  tolledOptimum?: TolledOptimumSolver;
  /**
   * Dual method: "direct" (default) solves the optimum once on marginal-cost curves clamped to
   * the bounds, reading each bound's multiplier off as the excess of the site's cost over its
   * curve; "iterate" updates tolls on repeated unconstrained optima (below). The iteration also
   * answers when the direct solve does not converge — it is what names a bound no toll can meet.
   */
  multipliers?: "direct" | "iterate";
  /**
   * Dual method: multipliers to start from (e.g. the previous period's `siteToll`, or the last
   * what-if's), one per site; projected onto each bound's sign. Default all 0 (the optimum).
   */
  warmStartTolls?: Float64Array;
}

export interface PlanSolution {
  rule: "plan";
  method: "lp" | "dual";
  status: "solved" | "infeasible" | "notConverged";
  allocation: Allocation;
  siteInflow: Float64Array;
  siteWait: Float64Array;
  /** Σ x·W(x) + Σ f·t + Σ balkers' reservation costs; NaN when infeasible. */
  totalCost: number;
  /** The bounds the plan enforced (lower 0 = none, upper Infinity = none). */
  bounds: PlanBounds;
  /** Multipliers of the volume bounds (weeks-equivalent per referral): > 0 at a binding maximum, < 0 at a binding minimum. Dual method only. */
  siteToll: Float64Array | null;
  /** The line problem with the journey limit applied (disallowed pairs have Infinity travel cost). */
  problem: LineProblem;
  /** What makes the plan infeasible, one message per site or source named. */
  infeasibilities: string[];
  diagnostics: SolveDiagnostics;
}

const DEFAULTS = { lpVariableLimit: 1000, tolerance: 1e-7, boundTolerance: 1e-9, maxIterations: 300, multipliers: "direct" as "direct" | "iterate" };
type PlanSettings = typeof DEFAULTS & PlanOptions;

/** The problem with pairs longer than maxKm disallowed (a copy; the input is not changed). */
export function withJourneyLimit(problem: LineProblem, maxKm: number): LineProblem {
  if (!Number.isFinite(maxKm)) return problem;
  const travelCost = Float64Array.from(problem.travelCost, (cost, pair) => (problem.km[pair] > maxKm ? Infinity : cost));
  return { ...problem, travelCost };
}

/**
 * Per-site bounds: lower = minWeekly; upper = the smaller of maxWeekly and the utilisation
 * ceiling u·fullCapacity − urgent (never below 0). An upper bound at or above the site's routine
 * capacity is dropped: the wait is infinite there, so it never binds.
 */
export function planBounds(problem: LineProblem, options: PlanOptions = {}): PlanBounds {
  const { m, sites, minWeekly, maxWeekly } = problem;
  const lower = new Float64Array(m);
  const upper = new Float64Array(m).fill(Infinity);
  for (let j = 0; j < m; j++) {
    lower[j] = Number.isNaN(minWeekly[j]) ? 0 : minWeekly[j];
    let bound = Number.isNaN(maxWeekly[j]) ? Infinity : maxWeekly[j];
    if (options.maxUtilisation !== undefined) {
      const urgent = options.urgentInflow?.[j] ?? 0;
      const full = options.fullCapacity?.[j] ?? sites[j].capacity + urgent;
      bound = Math.min(bound, Math.max(0, options.maxUtilisation * full - urgent));
    }
    upper[j] = bound >= sites[j].capacity ? Infinity : bound;
  }
  return { lower, upper };
}

function validateOptions(options: PlanOptions): void {
  const issues: { path: string; message: string }[] = [];
  const { maxUtilisation, maxKm } = options;
  if (maxUtilisation !== undefined && !(maxUtilisation > 0 && maxUtilisation <= 1)) {
    issues.push({ path: "plan.maxUtilisation", message: `must be a number in (0, 1], got ${String(maxUtilisation)}` });
  }
  if (maxKm !== undefined && !(maxKm > 0)) {
    issues.push({ path: "plan.maxKm", message: `must be a number of km greater than 0, got ${String(maxKm)}` });
  }
  if (issues.length > 0) throw new ScenarioInputError(issues);
}

const format = (value: number) => value.toFixed(2);

/**
 * Necessary conditions for a plan to exist, each failure naming the site or source. (The LP and
 * the dual method still detect the rarer joint infeasibilities these do not cover.)
 */
export function planInfeasibilities(problem: LineProblem, bounds: PlanBounds, options: PlanOptions = {}): string[] {
  const { n, m, demand, outsideCost, travelCost, sites, siteIds, sourceIds } = problem;
  const messages: string[] = [];
  const journey = options.maxKm !== undefined ? ` within the ${options.maxKm} km journey limit` : "";
  const reach = new Float64Array(m);
  let totalDemand = 0;
  let totalLower = 0;
  for (let i = 0; i < n; i++) {
    totalDemand += demand[i];
    let allowed = 0;
    let room = 0;
    for (let j = 0; j < m; j++) {
      if (!Number.isFinite(travelCost[i * m + j])) continue;
      reach[j] += demand[i];
      allowed++;
      room += Math.min(bounds.upper[j], sites[j].capacity);
    }
    if (outsideCost[i] !== Infinity || demand[i] <= 0) continue;
    if (allowed === 0) {
      messages.push(`Source "${sourceIds[i]}" has no site${journey} and no outside option (${format(demand[i])} referrals/week).`);
    } else if (demand[i] >= room) {
      messages.push(
        `Source "${sourceIds[i]}" has no outside option and ${format(demand[i])} referrals/week, but its sites${journey} ` +
          `can take at most ${format(room)}/week under the plan's maximum volumes and ceilings.`,
      );
    }
  }
  for (let j = 0; j < m; j++) {
    const low = bounds.lower[j];
    totalLower += low;
    if (low <= 0) continue;
    const site = `Site "${siteIds[j]}"`;
    if (low > bounds.upper[j]) {
      messages.push(`${site}: minimum volume ${format(low)}/week is above its maximum of ${format(bounds.upper[j])}/week (maxWeekly or utilisation ceiling).`);
    } else if (low >= sites[j].capacity) {
      messages.push(`${site}: minimum volume ${format(low)}/week is not below its routine capacity of ${format(sites[j].capacity)}/week.`);
    }
    if (low > reach[j]) {
      messages.push(`${site}: minimum volume ${format(low)}/week exceeds the ${format(reach[j])}/week of demand from sources that may use it${journey}.`);
    }
  }
  let captive = 0;
  let room = 0;
  for (let i = 0; i < n; i++) if (outsideCost[i] === Infinity) captive += demand[i];
  for (let j = 0; j < m; j++) room += Math.min(bounds.upper[j], sites[j].capacity);
  if (captive > 0 && captive >= room) {
    messages.push(
      `Patients with no outside option send ${format(captive)} referrals/week, but all sites together can take at most ` +
        `${format(room)}/week under the plan's maximum volumes and ceilings (${problem.siteIds.join(", ")}).`,
    );
  }
  if (totalLower > totalDemand) {
    messages.push(`The minimum volumes add up to ${format(totalLower)}/week, more than the line's demand of ${format(totalDemand)}/week.`);
  }
  return messages;
}

/** Variables the plan LP would start with (flows + initial segments); refinement adds about 2 per site and spread source per round. */
function estimatedLpVariables(problem: LineProblem): number {
  const { n, m, travelCost, outsideCost, outsideSpread } = problem;
  let count = 0;
  for (let pair = 0; pair < n * m; pair++) if (Number.isFinite(travelCost[pair])) count++;
  let spreadSources = 0;
  for (let i = 0; i < n; i++) {
    if (outsideCost[i] === Infinity) continue;
    if (outsideSpread[i] > 0) spreadSources++;
    else count++;
  }
  // About 12 rounds of refinement at 2 new breakpoints each, on top of the initial grids.
  return count + m * (12 + 24) + spreadSources * (4 + 24);
}

/** Solves the plan for one line. Throws ScenarioInputError for invalid options only. */
export function solvePlan(problem: LineProblem, options: PlanOptions = {}): PlanSolution {
  validateOptions(options);
  const settings: PlanSettings = { ...DEFAULTS, ...options };
  const requested = options.method ?? "auto";
  const limited = withJourneyLimit(problem, options.maxKm ?? Infinity);
  const bounds = planBounds(limited, options);
  const infeasibilities = planInfeasibilities(limited, bounds, options);
 const useLp = requested === "lp" || (requested === "auto" && estimatedLpVariables(limited) <= settings.lpVariableLimit);
  const method = useLp ? "lp" : "dual";
  if (infeasibilities.length > 0) return infeasible(limited, bounds, method, infeasibilities, 0);

  if (useLp) {
    const result = solvePlanLp(limited, bounds, {
      tolerance: settings.tolerance,
      ...(settings.lpRefinementLimit !== undefined ? { variableLimit: settings.lpRefinementLimit } : {}),
    });
    if (!result.feasible && !result.stoppedAtVariableLimit) {
      return infeasible(limited, bounds, method, [jointInfeasibility(limited, bounds)], result.rounds);
    }
    if (!result.converged || !Number.isFinite(result.relativeGap)) {
      // The LP ran out of room (its size cap or rounds) before certifying its gap: the dual
      // method answers and the warning says why.
      const dual = solvePlanDual(limited, bounds, settings);
      const reason = result.warnings.length > 0 ? result.warnings.join(" ") : `relative gap ${result.relativeGap} not certified.`;
      dual.diagnostics.warnings.unshift(`plan: the LP method stopped early (${reason}); the dual method answered instead.`);
      return dual;
    }
    return finish(limited, bounds, method, { flow: result.flow, balked: result.balked }, null, {
      converged: result.converged,
      iterations: result.rounds,
      relativeGap: result.relativeGap,
      warnings: result.warnings,
    });
  }
  return solvePlanDual(limited, bounds, settings);
}

/**
 * The problem restricted to the sources that have at least one allowed site. A source the
 * journey limit cuts off from every site has nothing to allocate: all its patients take the
 * outside option, at a cost no decision changes, so the dual method's inner solves skip it.
 */
function sourcesWithSites(problem: LineProblem): { reduced: LineProblem; kept: number[] } {
  const { n, m, travelCost } = problem;
  const kept: number[] = [];
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      if (Number.isFinite(travelCost[i * m + j])) {
        kept.push(i);
        break;
      }
    }
  }
  if (kept.length === n) return { reduced: problem, kept };
  const rows = (values: Float64Array) => Float64Array.from(kept, (i) => values[i]);
  const pairs = (values: Float64Array) => {
    const out = new Float64Array(kept.length * m);
    kept.forEach((i, row) => out.set(values.subarray(i * m, i * m + m), row * m));
    return out;
  };
  return {
    kept,
    reduced: {
      ...problem,
      n: kept.length,
      sourceIds: kept.map((i) => problem.sourceIds[i]),
      demand: rows(problem.demand),
      outsideCost: rows(problem.outsideCost),
      outsideSpread: rows(problem.outsideSpread),
      travelCost: pairs(problem.travelCost),
      km: pairs(problem.km),
    },
  };
}

function jointInfeasibility(problem: LineProblem, bounds: PlanBounds): string {
  const named = problem.siteIds.filter((_, j) => bounds.lower[j] > 0 || Number.isFinite(bounds.upper[j]));
  return (
    `The plan's constraints cannot all be met together: the minimum and maximum volumes at ` +
    `${named.map((id) => `"${id}"`).join(", ") || "the sites"} with the journey limit leave no allocation of the demand.`
  );
}

function infeasible(problem: LineProblem, bounds: PlanBounds, method: "lp" | "dual", messages: string[], iterations: number): PlanSolution {
  const { n, m } = problem;
  return {
    rule: "plan",
    method,
    status: "infeasible",
    allocation: { flow: new Float64Array(n * m), balked: new Float64Array(n) },
    siteInflow: new Float64Array(m),
    siteWait: new Float64Array(m).fill(NaN),
    totalCost: NaN,
    bounds,
    siteToll: null,
    problem,
    infeasibilities: messages,
    diagnostics: { converged: false, iterations, relativeGap: Infinity, warnings: ["plan: the constraints cannot all be met (see infeasibilities)."] },
  };
}

function finish(
  problem: LineProblem,
  bounds: PlanBounds,
  method: "lp" | "dual",
  allocation: Allocation,
  siteToll: Float64Array | null,
  diagnostics: SolveDiagnostics,
): PlanSolution {
  const { n, m, sites } = problem;
  const siteInflow = new Float64Array(m);
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) siteInflow[j] += allocation.flow[i * m + j];
  const siteWait = Float64Array.from(siteInflow, (x, j) => sites[j].wait(x));
  return {
    rule: "plan",
    method,
    status: diagnostics.converged ? "solved" : "notConverged",
    allocation,
    siteInflow,
    siteWait,
    totalCost: planTotalCost(problem, allocation.flow, allocation.balked),
    bounds,
    siteToll,
    problem,
    infeasibilities: [],
    diagnostics,
  };
}

/** The dual method (see the file comment). */
function solvePlanDual(
  problem: LineProblem,
  bounds: PlanBounds,
  settings: PlanSettings,
): PlanSolution {
  const { n, m, sites, siteIds } = problem;
  const { reduced, kept } = sourcesWithSites(problem);
  // Cut-off sources balk entirely.
  const expand = (allocation: Allocation): Allocation => {
    if (reduced === problem) return allocation;
    const flow = new Float64Array(n * m);
    const balked = Float64Array.from(problem.demand);
    kept.forEach((i, row) => {
      flow.set(allocation.flow.subarray(row * m, row * m + m), i * m);
      balked[i] = allocation.balked[row];
    });
    return { flow, balked };
  };
  const innerTolerance = Math.min(1e-10, settings.boundTolerance * 1e-1);
  const withinBounds = (inflow: Float64Array): boolean =>
    inflow.every((x, j) => {
      const slack = settings.boundTolerance * Math.max(1, sites[j].capacity);
      return x >= bounds.lower[j] - slack && x <= bounds.upper[j] + slack;
    });
  let directFailure: string | null = null;
  if (settings.multipliers === "direct" && !settings.tolledOptimum) {
    const curves = reduced.sites.map(marginalCostCurve);
    const outcome = solveWardropOnCurves(reduced, curves, { tolerance: innerTolerance, loadBounds: bounds }, "plan");
    if (outcome.diagnostics.converged && withinBounds(outcome.load)) {
      const toll = Float64Array.from(outcome.curveCost, (cost, j) => {
        const excess = cost - curves[j].cost(Math.max(outcome.load[j], 0));
        if (Math.abs(excess) <= 1e-12 * (1 + Math.abs(cost))) return 0;
        return (excess > 0 && Number.isFinite(bounds.upper[j])) || (excess < 0 && bounds.lower[j] > 0) ? excess : 0;
      });
      return finish(problem, bounds, "dual", expand(outcome.allocation), toll, outcome.diagnostics);
    }
    directFailure =
      `plan: the direct multipliers did not settle (relative gap ${outcome.diagnostics.relativeGap.toExponential(2)}` +
      `${withinBounds(outcome.load) ? "" : ", bounds not met"}); the toll iteration answered.`;
  }
  const solveReduced = settings.tolledOptimum ?? solveOptimum;
  const inner: TolledOptimumSolver = (_, innerOptions) => {
    const outcome = solveReduced(reduced, innerOptions);
    return { allocation: expand(outcome.allocation), diagnostics: outcome.diagnostics };
  };
  // A warm start keeps only multipliers whose bound exists, with the bound's sign.
  const toll = Float64Array.from({ length: m }, (_, j) => {
    const start = settings.warmStartTolls?.[j] ?? 0;
    if (start > 0 && Number.isFinite(bounds.upper[j])) return start;
    if (start < 0 && bounds.lower[j] > 0) return start;
    return 0;
  });
  const previousToll = new Float64Array(m);
  const previousInflow = new Float64Array(m).fill(NaN);
  const inflow = new Float64Array(m);
  // Multipliers beyond this (weeks-equivalent per referral) mean no toll can meet the bound.
  const tollLimit = 1e6 * (1 + maxFiniteCost(problem));
  let result: ReturnType<TolledOptimumSolver> | null = null;
  let iterations = 0;
  for (; iterations < settings.maxIterations; iterations++) {
    result = inner(problem, { siteToll: Float64Array.from(toll), tolerance: innerTolerance });
    inflow.fill(0);
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) inflow[j] += result.allocation.flow[i * m + j];

    let satisfied = result.diagnostics.converged;
    const steps = new Float64Array(m);
    for (let j = 0; j < m; j++) {
      const slack = settings.boundTolerance * Math.max(1, sites[j].capacity);
      const { lower, upper } = { lower: bounds.lower[j], upper: bounds.upper[j] };
      let target = NaN;
      if (inflow[j] > upper + slack || (toll[j] > 0 && inflow[j] < upper - slack)) target = upper;
      else if (inflow[j] < lower - slack || (toll[j] < 0 && inflow[j] > lower + slack)) target = lower;
      if (Number.isNaN(target)) continue;
      satisfied = false;
      const jacobi = siteMarginalCost(problem, j, inflow[j]) - siteMarginalCost(problem, j, target);
      let step = jacobi;
      const tollChange = toll[j] - previousToll[j];
      const inflowChange = inflow[j] - previousInflow[j];
      if (tollChange !== 0 && Number.isFinite(inflowChange)) {
        const response = inflowChange / tollChange;
        if (response < 0) {
          const secant = (target - inflow[j]) / response;
          if (Math.sign(secant) === Math.sign(jacobi)) {
            step = Math.sign(jacobi) * Math.min(Math.max(Math.abs(secant), Math.abs(jacobi)), 20 * Math.abs(jacobi));
          }
        } else if (Math.abs(inflowChange) <= 1e-12 * Math.max(1, sites[j].capacity) && Math.sign(tollChange) === Math.sign(jacobi)) {
          // The last change of toll moved nobody: double it, so that a bound no toll can meet
          // is recognised (the toll runs away) in a few dozen steps rather than millions.
          step = Math.sign(jacobi) * Math.max(Math.abs(jacobi), 2 * Math.abs(tollChange));
        }
      }
      if (target === upper) steps[j] = Math.max(0, toll[j] + step) - toll[j];
      else steps[j] = Math.min(0, toll[j] + step) - toll[j];
    }
    if (satisfied) break;
    previousToll.set(toll);
    previousInflow.set(inflow);
    for (let j = 0; j < m; j++) toll[j] += steps[j];
    const runaway = toll.findIndex((value) => Math.abs(value) > tollLimit);
    if (runaway >= 0) {
      const kind = toll[runaway] > 0 ? "maximum" : "minimum";
      const bound = toll[runaway] > 0 ? bounds.upper[runaway] : bounds.lower[runaway];
      return infeasible(problem, bounds, "dual", [
        `Site "${siteIds[runaway]}": its ${kind} volume of ${format(bound)}/week cannot be met — no charge or subsidy per ` +
          `referral moves enough patients (those who may use it have no other allowed option, or too few may use it).`,
      ], iterations + 1);
    }
  }
  if (!result) throw new Error("plan: maxIterations must be at least 1.");
  const converged = iterations < settings.maxIterations;
  const warnings = [...(directFailure ? [directFailure] : []), ...result.diagnostics.warnings];
  if (!converged) {
    let worst = 0;
    let worstSite = 0;
    for (let j = 0; j < m; j++) {
      const violation = Math.max(inflow[j] - bounds.upper[j], bounds.lower[j] - inflow[j], 0);
      if (violation > worst) {
        worst = violation;
        worstSite = j;
      }
    }
    warnings.push(
      `plan (dual): bounds not met within ${settings.maxIterations} toll updates; largest violation ` +
        `${worst.toExponential(2)} referrals/week at site "${siteIds[worstSite]}".`,
    );
  }
  return finish(problem, bounds, "dual", result.allocation, Float64Array.from(toll), {
    converged,
    iterations: iterations + 1,
    relativeGap: result.diagnostics.relativeGap,
    warnings,
  });
}

function maxFiniteCost(problem: LineProblem): number {
  let largest = 0;
  for (const cost of problem.outsideCost) if (Number.isFinite(cost)) largest = Math.max(largest, cost * 2);
  for (const cost of problem.travelCost) if (Number.isFinite(cost)) largest = Math.max(largest, cost);
  return largest;
}
