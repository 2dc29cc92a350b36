/**
 * The `optimum` rule: the allocation (and choice of who is treated publicly) with the least total
 * cost Σ f·(wait + travel) + Σ balkers' reservation costs (PRODUCT.md) — what a central referral
 * hub that knew every patient's reservation cost would do.
 *
 * Wardrop's second principle (Wardrop 1952; Beckmann, McGuire & Winsten 1956, *Studies in the
 * Economics of Transportation*): the optimum is the user equilibrium of the same network with
 * every site's wait replaced by its marginal cost M_j(x) = d[x·W_j(x)]/dx = W_j(x) + x·W_j'(x).
 * The balking term needs no change: the b lowest-reservation patients balk, their cost
 * B(b) = d·∫ r dF up to F⁻¹(b/d) has slope F⁻¹(b/d), the marginal balker's reservation, which is
 * exactly the cost a balker faces in the choice model. x·W(x) is convex for M/M/c (Lee & Cohen
 * 1983; Grassmann 1983), so the optimum is unique in the site loads.
 *
 * Single-site check (Edelson & Hildebrand 1975, "Congestion tolls for Poisson queuing processes",
 * *Econometrica* 43(1)): M/M/1 with μ = 8/wk, demand 10/wk, a sharp outside cost of 1 week:
 * M(x) = 1 gives x = μ(1 − 1/√(1 + oμ)) = 16/3, wait 0.25, total cost 6 (choice: 10).
 */
import type { LineProblem } from "./problem";
import { type SolveOptions, type SolveResult, solveWardropOnCurves } from "./equilibrium";
import { SiteInverse, marginalCostCurve, waitCurve } from "./site-cost-curve";

export function solveOptimum(problem: LineProblem, options: SolveOptions = {}): SolveResult {
  const curves = problem.sites.map(marginalCostCurve);
  // Warm starts arrive as waits; the solver iterates on marginal costs, so translate through the inflow.
  let warmStartWaits = options.warmStartWaits;
  if (warmStartWaits) {
    const waits = warmStartWaits;
    warmStartWaits = Float64Array.from(problem.sites, (site, j) => {
      if (!(waits[j] < Infinity) || !(site.capacity > 0)) return waits[j];
      const x = new SiteInverse(waitCurve(site)).load(waits[j]);
      return x > 0 ? curves[j].cost(x) : waits[j];
    });
  }
  const outcome = solveWardropOnCurves(problem, curves, { ...options, warmStartWaits }, "optimum");
  const siteWait = Float64Array.from(outcome.load, (x, j) => problem.sites[j].wait(Math.max(x, 0)));
  return { allocation: outcome.allocation, siteWait, diagnostics: outcome.diagnostics };
}
