/**
 * The `choiceLogit` rule: the logit (stochastic user) equilibrium at scale θ (1/weeks).
 *
 * Each patient of source i picks an option with probability ∝ exp(−θ·cost): the sites at
 * g_ij = W_j(x_j) + t_ij and the outside option. With a sharp outside option (s = 0) the
 * outside option is simply one more alternative costing o. With a spread s > 0, each patient
 * compares the sites with their own reservation cost r ~ U[o(1−s), o(1+s)] and we average the
 * logit over r; the site split given that a patient stays public does not depend on r, so the
 * share who balk is P_out(V) = (softmin(b, V) − softmin(a, V))/(b − a) with V the sites'
 * inclusive cost (derivation in `outside-option.ts`). As θ → ∞ this is the Wardrop model.
 * Sources: Daganzo & Sheffi (1977) "On stochastic models of traffic assignment",
 * *Transportation Science* 11(3); Fisk (1980), *Transportation Research B* 14(3).
 *
 * Method: Newton on the site costs (`logit-newton.ts`), θ raised threefold per stage from a smooth start
 * up to the requested θ.
 *
 * Relative gap for this rule: the Wardrop gap of a logit equilibrium is positive by design, so
 * we report the gap of Fisk's program instead — (1/θ)·Σ_i d_i·KL(p_i ‖ p̂_i) / total cost, where
 * p_i is source i's split (sites and balking) in the allocation and p̂_i the logit response to
 * the costs that allocation produces. It is zero exactly at the logit equilibrium.
 */
import type { LineProblem } from "./problem";
import {
  type SolveOptions,
  type SolveResult,
  assertSteadyState,
  buildCostView,
  logitAllocation,
  normaliseOptions,
} from "./equilibrium";
import { allocationTotalCost } from "./allocation-cost";
import { allocationLoads } from "./flow-rows";
import { LogitWorkspace, evaluateLogit, initialTheta, logitContinuation } from "./logit-newton";
import { waitCurve } from "./site-cost-curve";

export function solveLogit(problem: LineProblem, theta: number, options: SolveOptions = {}): SolveResult {
  if (!(theta > 0) || !Number.isFinite(theta)) throw new RangeError(`logit scale θ must be a positive number, got ${theta}`);
  const settings = normaliseOptions(options);
  assertSteadyState(problem);
  const { n, m } = problem;
  const curves = problem.sites.map(waitCurve);
  const view = buildCostView(problem, curves, settings.siteToll);
  const w = new Float64Array(m);
  for (let j = 0; j < m; j++) w[j] = view.inverses[j].closed ? Infinity : (settings.warmStartWaits?.[j] ?? view.inverses[j].emptyCost);
  const workspace = new LogitWorkspace(n, m);
  const warnings: string[] = [];
  const path = logitContinuation(view, w, workspace, Math.min(initialTheta(view, w), theta), theta, 1e-13 * view.totalDemand, settings.maxIterations);
  const iterations = path.iterations;
  const allocation = logitAllocation(view, workspace);
  const load = allocationLoads(allocation, problem.n, problem.m);
  const siteWait = Float64Array.from(load, (x, j) => problem.sites[j].wait(Math.max(x, 0)));

  // Fisk gap: compare the split with the logit response to the waits it produces.
  const response = new LogitWorkspace(n, m);
  const responseCost = Float64Array.from(siteWait);
  evaluateLogit(view, theta, responseCost, response);
  let divergence = 0;
  for (let i = 0; i < n; i++) {
    const d = problem.demand[i];
    if (!(d > 0)) continue;
    const responseShare = new Map<number, number>();
    for (let k = response.rowStart[i]; k < response.rowStart[i + 1]; k++) {
      responseShare.set(response.columns[k], (response.served[i] * response.shares[k]) / d);
    }
    for (let j = 0; j < m; j++) {
      const p = allocation.flow[i * m + j] / d;
      if (p > 1e-20) divergence += d * p * Math.log(p / Math.max(responseShare.get(j) ?? 0, 1e-300));
    }
    const pOut = allocation.balked[i] / d;
    if (pOut > 1e-20) divergence += d * pOut * Math.log(pOut / Math.max(1 - response.served[i] / d, 1e-300));
  }
  const total = allocationTotalCost(problem, allocation, siteWait);
  const gap = total > 0 ? Math.max(divergence, 0) / theta / total : 0;
  const converged = gap <= settings.tolerance;
  if (!converged) warnings.push(`choiceLogit did not converge: relative gap ${gap.toExponential(2)} after ${iterations} iterations.`);
  return { allocation, siteWait, diagnostics: { converged, iterations, relativeGap: gap, warnings } };
}
