/**
 * `npm run bench`: every rule on generated instances (demo-like 40×7×4, large 500×40, national
 * 7,000×400), with wall time, iterations, relative gap and the process's peak memory, and beside
 * `choice` and `optimum` a textbook Frank–Wolfe baseline on the same instance in the same
 * process: the gap it reaches in the time our solver took, and the time it needs to reach 1e-4
 * (capped at BENCH_FW_LIMIT_S seconds, default 60).
 *
 * Environment: BENCH_ONLY=demo|large|national to run one instance; BENCH_FW_LIMIT_S to change
 * the Frank–Wolfe cap.
 */
import type { LineProblem, SolveDiagnostics } from "../../app/engine/problem";
import { solveChoice } from "../../app/engine/equilibrium";
import { solveLogit } from "../../app/engine/logit";
import { solveOptimum } from "../../app/engine/optimum";
import { solveCapacityShare, solveNearest } from "../../app/engine/fixed-rules";
import { solvePlan } from "../../app/engine/plan";
import { marginalCostCurve, waitCurve } from "../../app/engine/site-cost-curve";
import { DEMO_LIKE, LARGE, NATIONAL, type RegionSpec, generateRegion } from "./generate";
import { frankWolfe, gapWithin } from "./frank-wolfe";

type Rule = { name: string; solve: (problem: LineProblem) => { diagnostics: SolveDiagnostics } };

const rules: Rule[] = [
  { name: "choice", solve: (p) => solveChoice(p) },
  { name: "choiceLogit θ=2", solve: (p) => solveLogit(p, 2) },
  { name: "optimum", solve: (p) => solveOptimum(p) },
  { name: "nearest", solve: (p) => solveNearest(p) },
  { name: "capacityShare", solve: (p) => solveCapacityShare(p) },
  // The product's plan (the dual method, direct multipliers) under a utilisation ceiling that binds.
  { name: "plan u≤0.8", solve: (p) => solvePlan(p, { method: "dual", maxUtilisation: 0.8 }) },
];
/** Small instances only: the same plan by the toll iteration (repeated optima), as a baseline. */
const planBaselines: Rule[] = [
  { name: "plan iterate", solve: (p) => solvePlan(p, { method: "dual", multipliers: "iterate", maxUtilisation: 0.8 }) },
];

const fwLimitMs = Number(process.env.BENCH_FW_LIMIT_S ?? 60) * 1000;
const peakMb = (): number => process.resourceUsage().maxRSS / 1024;

function timeRule(rule: Rule, problems: LineProblem[], repeats: number): { ms: number; iterations: number; gap: number; converged: boolean; perLineMs: number[] } {
  let best: { ms: number; iterations: number; gap: number; converged: boolean; perLineMs: number[] } | null = null;
  for (let r = 0; r < repeats; r++) {
    let iterations = 0;
    let gap = 0;
    let converged = true;
    const perLineMs: number[] = [];
    const started = performance.now();
    for (const problem of problems) {
      const lineStart = performance.now();
      const { diagnostics } = rule.solve(problem);
      perLineMs.push(performance.now() - lineStart);
      iterations += diagnostics.iterations;
      gap = Math.max(gap, diagnostics.relativeGap);
      converged &&= diagnostics.converged;
    }
    const ms = performance.now() - started;
    if (!best || ms < best.ms) best = { ms, iterations, gap, converged, perLineMs };
  }
  return best as NonNullable<typeof best>;
}

const pad = (text: string, width: number): string => text.padEnd(width);
const fmt = (value: number): string => (Number.isFinite(value) ? value.toExponential(1) : String(value));

function benchInstance(spec: RegionSpec): void {
  const generated = performance.now();
  const problems = generateRegion(spec);
  console.log(`\n## ${spec.name} (${problems.length} line(s), generated in ${(performance.now() - generated).toFixed(0)} ms)`);
  const small = spec.sources * spec.sites <= 50_000;
  // Warm the JIT on this instance's shapes so small instances report steady-state times.
  if (small) for (const rule of rules) timeRule(rule, problems, 1);
  console.log(
    "| rule | wall ms | iterations | rel. gap | converged | peak RSS MB | FW gap in same time | FW time to 1e-4 |\n" +
      "| --- | ---: | ---: | ---: | --- | ---: | ---: | ---: |",
  );
  for (const rule of spec.sources * spec.sites <= 1_000 ? [...rules, ...planBaselines] : rules) {
    const result = timeRule(rule, problems, small ? 3 : 1);
    let fwGap = "";
    let fwTime = "";
    if (rule.name === "choice" || rule.name === "optimum") {
      // Baseline on the first line, against our time on that line.
      const problem = problems[0];
      const curves = problem.sites.map(rule.name === "choice" ? waitCurve : marginalCostCurve);
      const trace = frankWolfe(problem, curves, { target: 1e-4, timeLimitMs: fwLimitMs });
      fwGap = fmt(gapWithin(trace, result.perLineMs[0]));
      fwTime = trace.msToTarget === null ? `not within ${fwLimitMs / 1000} s` : `${trace.msToTarget.toFixed(0)} ms (${(trace.msToTarget / result.perLineMs[0]).toFixed(0)}× ours)`;
    }
    console.log(
      `| ${pad(rule.name, 15)} | ${result.ms.toFixed(1)} | ${result.iterations} | ${fmt(result.gap)} | ${result.converged} | ${peakMb().toFixed(0)} | ${fwGap} | ${fwTime} |`,
    );
  }
}

const only = process.env.BENCH_ONLY;
for (const spec of [DEMO_LIKE, LARGE, NATIONAL]) {
  if (only && !spec.name.startsWith(only)) continue;
  benchInstance(spec);
}
