/**
 * Re-solving one service line under the choice rule or the optimum, for the what-if tools built
 * on top of a scenario (capacity advisor, balking sensitivity). Lines are independent problems
 * (PRODUCT.md), so a change at one site on one line needs only that line solved again.
 */
import { allocationTotalCost } from "./allocation-cost";
import type { LineBuild } from "./build-problem";
import { solveChoice } from "./equilibrium";
import { solveOptimum } from "./optimum";
import { NoSteadyStateError } from "./problem";

/** The rules the what-if tools re-solve: how patients respond (choice) and the best a hub could do (optimum). */
export type ResolvedRule = "choice" | "optimum";

export const RESOLVED_RULES: readonly ResolvedRule[] = ["choice", "optimum"];

export interface LineRuleOutcome {
  /** Σ flows × (wait + km/κ) + balkers' reservation costs, weeks-equivalent per week (routine referrals). */
  totalCost: number;
  /** Routine referrals/week leaving for the outside option. */
  balkedPerWeek: number;
  /** Routine referrals/week per site. */
  routineInflow: Float64Array;
  /** Routine wait per site (weeks): where a neighbouring what-if's solve can start. */
  siteWait: Float64Array;
  converged: boolean;
  iterations: number;
}

/**
 * Solves one built line under `rule`. Throws `NoSteadyStateError` when the line has none (the
 * what-if tools only ever add capacity or change prices, so a baseline with a steady state keeps it).
 */
export function solveLineRule(build: LineBuild, rule: ResolvedRule, warmStartWaits?: Float64Array): LineRuleOutcome {
  if (build.shortfalls.length > 0) throw new NoSteadyStateError(build.shortfalls);
  const { problem } = build;
  const routine = problem.demand.reduce((total, value) => total + value, 0);
  if (problem.m === 0 || routine === 0) {
    return {
      totalCost: 0,
      balkedPerWeek: 0,
      routineInflow: new Float64Array(problem.m),
      siteWait: Float64Array.from(problem.sites, (site) => site.wait(0)),
      converged: true,
      iterations: 0,
    };
  }
  const warm = warmStartWaits && warmStartWaits.length === problem.m && warmStartWaits.every(Number.isFinite) ? warmStartWaits : undefined;
  const solution = rule === "choice" ? solveChoice(problem, { warmStartWaits: warm }) : solveOptimum(problem, { warmStartWaits: warm });
  const { flow, balked } = solution.allocation;
  const routineInflow = new Float64Array(problem.m);
  for (let i = 0; i < problem.n; i++) for (let j = 0; j < problem.m; j++) routineInflow[j] += flow[i * problem.m + j];
  return {
    totalCost: allocationTotalCost(problem, solution.allocation, solution.siteWait),
    balkedPerWeek: balked.reduce((total, value) => total + value, 0),
    routineInflow,
    siteWait: solution.siteWait,
    converged: solution.diagnostics.converged,
    iterations: solution.diagnostics.iterations,
  };
}
