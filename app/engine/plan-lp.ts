/**
 * The `plan` rule by linear programming (javascript-lp-solver) on a piecewise-linear cost.
 *
 * The plan minimises the total cost (PRODUCT.md)
 *
 *   Σ_j x_j·W_j(x_j) + Σ_ij f_ij·t_ij + Σ_i B_i(b_i),   B_i(b) = o(1−s)·b + o·s·b²/d_i,
 *
 * (B_i: the reservation costs of the b patients with the lowest reservation costs, uniform on
 * [o(1−s), o(1+s)]) over flows f ≥ 0 on allowed pairs and balking b_i ∈ [0, d_i] (0 without an
 * outside option), with Σ_j f_ij + b_i = d_i and L_j ≤ x_j = Σ_i f_ij ≤ U_j.
 *
 * Both x·W(x) and B are convex (Lee & Cohen 1983; Grassmann 1983, J. Appl. Prob. 20(4), from
 * memory, for Wq), so each is replaced by the chord interpolant through breakpoints: a site's
 * inflow becomes a sum of segment variables whose slopes rise, so the LP fills them in order
 * without integer variables (the classical separable-programming device: Dantzig (1963)
 * *Linear Programming and Extensions*, ch. 24, from memory). The chords lie above the curve, so the
 * LP's objective bounds the true cost of its own solution from above.
 *
 * Breakpoints are chosen adaptively: a coarse grid (denser toward capacity, where the wait
 * rises like a barrier), then each round splits the segments next to the LP's solution and,
 * if a site sits on its artificial top breakpoint, moves the top closer to capacity. Rounds stop
 * when the certified relative gap is below the tolerance. The gap is the Frank–Wolfe bound: by
 * convexity OPT ≥ cost(z) + min_{y feasible} ∇cost(z)·(y − z), and that minimum is a second,
 * smaller LP with the marginal costs W + x·W' + t and B' — the constrained form of PRODUCT.md's
 * "relative gap with marginal costs" (Frank & Wolfe 1956, Naval Research Logistics Quarterly 3).
 *
 * Size: javascript-lp-solver is a dense simplex; we use it while the LP has at most
 * `variableLimit` variables (default 3,000) and leave larger plans to the dual method in `plan.ts`.
 */
import solver, { type Model, type Solution } from "javascript-lp-solver";
import { balkingCost, marginalBalkingCost } from "./outside-option";
import type { LineProblem } from "./problem";

/** Per-site volume bounds for the plan (referrals/week): lower 0 = none, upper Infinity = none. */
export interface PlanBounds {
  lower: Float64Array;
  upper: Float64Array;
}

export interface PlanLpOptions {
  /** Stop when (cost − Frank–Wolfe lower bound)/cost falls below this. Default 1e-7. */
  tolerance?: number;
  /** Refinement rounds at most. Default 40. */
  maxRounds?: number;
  /** Largest LP (variables) this method builds. Default 3,000. */
  variableLimit?: number;
  /**
   * A constant cost per referral added at each site (weeks-equivalent), not counted in
   * `totalCost`: the plan's Lagrange multipliers when this LP serves as the inner solve of the
   * dual method, and a check of that method. Default none.
   */
  siteToll?: Float64Array;
}

export interface PlanLpResult {
  feasible: boolean;
  flow: Float64Array;
  balked: Float64Array;
  siteInflow: Float64Array;
  /** True total cost of the returned allocation (not the piecewise-linear objective). */
  totalCost: number;
  /** Certified: (totalCost − lower bound on the optimum)/totalCost. */
  relativeGap: number;
  /** The final breakpoints of each site's cost x·W(x), for checking the piecewise error. */
  siteBreakpoints: Float64Array[];
  /** The final breakpoints of each source's balking cost (null: linear or no outside option). */
  balkBreakpoints: (Float64Array | null)[];
  rounds: number;
  variables: number;
  converged: boolean;
  /** Refinement stopped because the next LP would exceed `variableLimit` (not an infeasibility). */
  stoppedAtVariableLimit: boolean;
  warnings: string[];
}

const DEFAULTS = { tolerance: 1e-7, maxRounds: 40, variableLimit: 3000 };

/** Cost of serving inflow x at a site: x·W(x) (0 at 0, avoiding 0·W). */
export function siteCost(problem: LineProblem, site: number, inflow: number): number {
  return inflow > 0 ? inflow * problem.sites[site].wait(inflow) : 0;
}

/** Marginal cost of a site's inflow: W(x) + x·W'(x). */
export function siteMarginalCost(problem: LineProblem, site: number, inflow: number): number {
  const model = problem.sites[site];
  return model.wait(inflow) + (inflow > 0 ? inflow * model.waitSlope(inflow) : 0);
}

/** Reservation costs of the b lowest-reservation patients of source i (`outside-option.ts`). */
export function sourceBalkingCost(problem: LineProblem, source: number, balked: number): number {
  if (balked <= 0) return 0;
  return balkingCost(balked, problem.demand[source], problem.outsideCost[source], problem.outsideSpread[source]);
}

/** Marginal balking cost: the reservation cost of the next patient to leave, o(1−s) + 2·o·s·b/d. */
export function sourceBalkingMarginalCost(problem: LineProblem, source: number, balked: number): number {
  return marginalBalkingCost(balked, problem.demand[source], problem.outsideCost[source], problem.outsideSpread[source]);
}

/** True total cost of an allocation: Σ x·W(x) + Σ f·t + Σ B(b). */
export function planTotalCost(problem: LineProblem, flow: Float64Array, balked: Float64Array): number {
  const { n, m, travelCost } = problem;
  const inflow = new Float64Array(m);
  let total = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      const f = flow[i * m + j];
      if (f > 0) {
        inflow[j] += f;
        total += f * travelCost[i * m + j];
      }
    }
    total += sourceBalkingCost(problem, i, balked[i]);
  }
  for (let j = 0; j < m; j++) total += siteCost(problem, j, inflow[j]);
  return total;
}

/**
 * The chord interpolant through `breakpoints` of f evaluated at x, minus f(x): the piecewise
 * error at x (≥ 0 for convex f). Used by tests to bound how far the LP can be from the optimum.
 */
export function chordExcess(breakpoints: Float64Array, f: (x: number) => number, x: number): number {
  for (let k = 1; k < breakpoints.length; k++) {
    const a = breakpoints[k - 1];
    const b = breakpoints[k];
    if (x <= b || k === breakpoints.length - 1) {
      const fa = f(a);
      const fb = f(b);
      const chord = fa + ((fb - fa) * (x - a)) / (b - a);
      return chord - f(x);
    }
  }
  return 0;
}

/** Insert the midpoints of the segments touching x (the one holding it, both if x is a breakpoint). */
function refineAround(points: number[], x: number): void {
  const scale = points[points.length - 1] - points[0];
  const nearTolerance = 1e-9 * Math.max(1, scale);
  const additions: number[] = [];
  for (let k = 1; k < points.length; k++) {
    const a = points[k - 1];
    const b = points[k];
    if (x >= a - nearTolerance && x <= b + nearTolerance && b - a > 1e-12 * Math.max(1, scale)) additions.push(0.5 * (a + b));
  }
  for (const point of additions) points.push(point);
  points.sort((p, q) => p - q);
}

function initialSiteBreakpoints(capacity: number, top: number): number[] {
  const fractions = [0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.95, 0.975];
  const points = fractions.map((f) => f * capacity).filter((x) => x < top);
  points.push(top);
  return points;
}

/**
 * Solves the plan LP on `problem` (disallowed pairs already have Infinity travel cost) with the
 * per-site bounds. Returns feasible = false if the LP reports the constraints infeasible; the
 * caller (plan.ts) names sites and sources from its own pre-checks.
 */
export function solvePlanLp(problem: LineProblem, bounds: PlanBounds, options: PlanLpOptions = {}): PlanLpResult {
  const { tolerance, maxRounds, variableLimit } = { ...DEFAULTS, ...options };
  const { n, m, demand, outsideCost, outsideSpread, travelCost, sites } = problem;
  const siteToll = options.siteToll ?? new Float64Array(m);
  const warnings: string[] = [];

  // The largest inflow worth modelling at a site: its bound, the demand that can reach it, and
  // (artificially, moved up when reached) a point short of capacity where the wait is finite.
  const reach = new Float64Array(m);
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) if (Number.isFinite(travelCost[i * m + j])) reach[j] += demand[i];
  const hardTop = new Float64Array(m);
  const siteGrid: number[][] = [];
  for (let j = 0; j < m; j++) {
    hardTop[j] = Math.min(bounds.upper[j], reach[j]);
    const artificial = sites[j].capacity * 0.99;
    siteGrid.push(initialSiteBreakpoints(sites[j].capacity, Math.min(hardTop[j], artificial)));
  }
  const balkGrid: (number[] | null)[] = [];
  for (let i = 0; i < n; i++) {
    if (outsideCost[i] === Infinity || demand[i] <= 0) balkGrid.push(null);
    else if (outsideSpread[i] === 0) balkGrid.push([0, demand[i]]);
    else balkGrid.push(Array.from({ length: 5 }, (_, k) => (k / 4) * demand[i]));
  }

  let best: PlanLpResult | null = null;
  let bestTolled = Infinity;
  let lowerBound = -Infinity;
  let rounds = 0;
  let variables = 0;
  let stoppedAtVariableLimit = false;
  for (; rounds < maxRounds; rounds++) {
    const model = buildModel(problem, bounds, siteGrid, balkGrid, hardTop, siteToll, "chord");
    variables = Object.keys(model.variables).length;
    if (variables > variableLimit) {
      warnings.push(`plan LP: refinement stopped at ${variables} variables (limit ${variableLimit}).`);
      stoppedAtVariableLimit = true;
      break;
    }
    const upper = readSolution(problem, solver.Solve(model) as Solution);
    const lower = readSolution(problem, solver.Solve(buildModel(problem, bounds, siteGrid, balkGrid, hardTop, siteToll, "tangent")) as Solution);
    if (!upper || !lower) {
      // The tangent LP is a relaxation: if it is infeasible, so is the plan. The chord LP can
      // only fail where its artificial tops cut a feasible region; both cases are reported.
      return emptyResult(problem, siteGrid, balkGrid, rounds + 1, variables, ["plan LP: the constraints cannot all be met."]);
    }
    lowerBound = Math.max(lowerBound, lower.objective);
    const totalCost = planTotalCost(problem, upper.flow, upper.balked);
    // The LP minimises cost + tolls; the gap compares like with like.
    let tolled = totalCost;
    for (let j = 0; j < m; j++) tolled += siteToll[j] * upper.inflow[j];
    if (best === null || tolled < bestTolled) {
      bestTolled = tolled;
      best = {
        feasible: true,
        flow: upper.flow,
        balked: upper.balked,
        siteInflow: upper.inflow,
        totalCost,
        relativeGap: Infinity,
        siteBreakpoints: siteGrid.map((points) => Float64Array.from(points)),
        balkBreakpoints: balkGrid.map((points) => (points ? Float64Array.from(points) : null)),
        rounds: rounds + 1,
        variables,
        converged: false,
        stoppedAtVariableLimit: false,
        warnings,
      };
    }
    best.relativeGap = bestTolled !== 0 ? Math.max(0, (bestTolled - lowerBound) / Math.abs(bestTolled)) : 0;
    if (best.relativeGap <= tolerance) {
      best.converged = true;
      best.rounds = rounds + 1;
      return best;
    }
    // Refine next to both solutions: midpoints around the chord LP's inflow (whose chords are
    // too high there) and the tangent LP's inflow itself (where the tangents are too low).
    for (let j = 0; j < m; j++) {
      const points = siteGrid[j];
      const top = points[points.length - 1];
      if ((upper.inflow[j] >= top * (1 - 1e-9) || lower.inflow[j] > top) && top < hardTop[j]) {
        const capacity = sites[j].capacity;
        points.push(Math.min(hardTop[j], capacity - 0.25 * (capacity - top)));
      }
      refineAround(points, upper.inflow[j]);
      insertPoint(points, lower.inflow[j]);
    }
    for (let i = 0; i < n; i++) {
      const points = balkGrid[i];
      if (!points || outsideSpread[i] === 0) continue;
      refineAround(points, upper.balked[i]);
      insertPoint(points, lower.balked[i]);
    }
  }
  if (best === null) return { ...emptyResult(problem, siteGrid, balkGrid, rounds, variables, warnings), stoppedAtVariableLimit };
  best.rounds = rounds;
  best.stoppedAtVariableLimit = stoppedAtVariableLimit;
  best.warnings.push(`plan LP: relative gap ${best.relativeGap.toExponential(2)} above the tolerance ${tolerance} after ${rounds} rounds.`);
  return best;
}

interface LpAllocation {
  flow: Float64Array;
  balked: Float64Array;
  inflow: Float64Array;
  objective: number;
}

function readSolution(problem: LineProblem, solution: Solution): LpAllocation | null {
  if (!solution.feasible || !Number.isFinite(solution.result)) return null;
  const { n, m, demand } = problem;
  const flow = new Float64Array(n * m);
  const balked = new Float64Array(n);
  const inflow = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    let served = 0;
    for (let j = 0; j < m; j++) {
      const value = Math.max(0, numberOf(solution[`f${i}_${j}`]));
      flow[i * m + j] = value;
      inflow[j] += value;
      served += value;
    }
    balked[i] = Math.max(0, demand[i] - served);
  }
  return { flow, balked, inflow, objective: solution.result };
}

/** Adds x as a breakpoint inside the grid's range unless one is already (almost) there. */
function insertPoint(points: number[], x: number): void {
  const first = points[0];
  const last = points[points.length - 1];
  const closeness = 1e-9 * Math.max(1, last - first);
  if (!(x > first + closeness && x < last - closeness)) return;
  if (points.some((point) => Math.abs(point - x) <= closeness)) return;
  points.push(x);
  points.sort((p, q) => p - q);
}

function numberOf(value: number | boolean | undefined): number {
  return typeof value === "number" && Number.isFinite(value) ? value : 0;
}

function emptyResult(
  problem: LineProblem,
  siteGrid: number[][],
  balkGrid: (number[] | null)[],
  rounds: number,
  variables: number,
  warnings: string[],
): PlanLpResult {
  return {
    feasible: false,
    flow: new Float64Array(problem.n * problem.m),
    balked: new Float64Array(problem.n),
    siteInflow: new Float64Array(problem.m),
    totalCost: NaN,
    relativeGap: Infinity,
    siteBreakpoints: siteGrid.map((points) => Float64Array.from(points)),
    balkBreakpoints: balkGrid.map((points) => (points ? Float64Array.from(points) : null)),
    rounds,
    variables,
    converged: false,
    stoppedAtVariableLimit: false,
    warnings,
  };
}

/**
 * The separable LP: flow variables f{i}_{j} (cost t_ij), site segments s{j}_{k}, balking segments
 * b{i}_{k}. Rows: each source's demand (equality), each site's link Σ f − Σ s = 0, each segment's
 * length, each site's lower bound.
 *
 * "chord": segments between consecutive breakpoints with the chord's slope — above the convex
 * cost, so the LP value bounds its own solution's cost from above and the solution is feasible.
 * "tangent": the maximum of the tangents at the breakpoints, extended to the largest inflow the
 * site could take — below the cost everywhere, so the LP value is a lower bound on the optimum
 * (outer approximation: Kelley (1960) "The cutting-plane method for solving convex programs",
 * J. SIAM 8(4):703–712).
 */
function buildModel(
  problem: LineProblem,
  bounds: PlanBounds,
  siteGrid: number[][],
  balkGrid: (number[] | null)[],
  hardTop: Float64Array,
  siteToll: Float64Array,
  mode: "chord" | "tangent",
): Model {
  const { n, m, demand, travelCost } = problem;
  const constraints: Model["constraints"] = {};
  const variables: Model["variables"] = {};
  for (let i = 0; i < n; i++) constraints[`d${i}`] = { equal: demand[i] };
  for (let j = 0; j < m; j++) {
    constraints[`x${j}`] = { equal: 0 };
    if (bounds.lower[j] > 0) constraints[`lower${j}`] = { min: bounds.lower[j] };
    const cost = (x: number) => siteCost(problem, j, x);
    const slope = (x: number) => siteMarginalCost(problem, j, x);
    const segments = mode === "chord" ? chordSegments(siteGrid[j], cost) : tangentSegments(siteGrid[j], cost, slope, hardTop[j]);
    segments.forEach(([length, segmentSlope], k) => {
      const name = `s${j}_${k}`;
      constraints[name] = { max: length };
      const coefficients: Record<string, number> = { cost: segmentSlope, [`x${j}`]: -1, [name]: 1 };
      if (bounds.lower[j] > 0) coefficients[`lower${j}`] = 1;
      variables[name] = coefficients;
    });
  }
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      const travel = travelCost[i * m + j];
      if (Number.isFinite(travel) && hardTop[j] > 0) {
        variables[`f${i}_${j}`] = { cost: travel + siteToll[j], [`d${i}`]: 1, [`x${j}`]: 1 };
      }
    }
    const points = balkGrid[i];
    if (!points) continue;
    const cost = (b: number) => sourceBalkingCost(problem, i, b);
    const slope = (b: number) => sourceBalkingMarginalCost(problem, i, b);
    const segments = mode === "chord" ? chordSegments(points, cost) : tangentSegments(points, cost, slope, demand[i]);
    segments.forEach(([length, segmentSlope], k) => {
      const name = `b${i}_${k}`;
      constraints[name] = { max: length };
      variables[name] = { cost: segmentSlope, [`d${i}`]: 1, [name]: 1 };
    });
  }
  return { optimize: "cost", opType: "min", constraints, variables };
}

/** [length, slope] of the chords between consecutive breakpoints. */
function chordSegments(points: number[], cost: (x: number) => number): [number, number][] {
  const segments: [number, number][] = [];
  for (let k = 1; k < points.length; k++) {
    const a = points[k - 1];
    const b = points[k];
    if (b > a) segments.push([b - a, (cost(b) - cost(a)) / (b - a)]);
  }
  return segments;
}

/**
 * [length, slope] of the pieces of max_k tangent_k(x) on [0, end] (points[0] = 0 and cost(0) = 0,
 * so the envelope starts at 0): piece k has the slope at point k and runs between the
 * intersections of tangent k with its neighbours.
 */
function tangentSegments(points: number[], cost: (x: number) => number, slope: (x: number) => number, end: number): [number, number][] {
  const slopes = points.map(slope);
  const values = points.map(cost);
  const segments: [number, number][] = [];
  let start = 0;
  for (let k = 0; k < points.length; k++) {
    let stop = end;
    if (k + 1 < points.length && slopes[k + 1] > slopes[k]) {
      // Where tangent k meets tangent k+1; always between the two points for a convex cost.
      const crossing =
        (values[k + 1] - slopes[k + 1] * points[k + 1] - values[k] + slopes[k] * points[k]) / (slopes[k] - slopes[k + 1]);
      stop = Math.min(end, Math.max(points[k], Math.min(points[k + 1], crossing)));
    } else if (k + 1 < points.length) {
      continue; // equal slopes: the next tangent is the same line
    }
    if (stop > start) segments.push([stop - start, slopes[k]]);
    start = Math.max(start, stop);
    if (start >= end) break;
  }
  return segments;
}
