/**
 * `npm run bench`: every rule on generated instances (demo-like 40×7×4, large 500×40, national
 * 7,000×400), with wall time, iterations, relative gap and the process's peak memory, and beside
 * `choice` and `optimum` a textbook Frank–Wolfe baseline on the same instance in the same
 * process: the gap it reaches in the time our solver took, and the time it needs to reach 1e-4
 * (capped at BENCH_FW_LIMIT_S seconds, default 60).
 *
 * Then the whole `npm run solve` process on the national instance written as an exchange-format file.
 *
 * Environment: BENCH_ONLY=demo|large|national|cli to run one part; BENCH_FW_LIMIT_S to change
 * the Frank–Wolfe cap.
 */
import type { LineProblem, SolveDiagnostics } from "../../app/engine/problem";
import { solveChoice } from "../../app/engine/equilibrium";
import { solveLogit } from "../../app/engine/logit";
import { solveOptimum } from "../../app/engine/optimum";
import { solveCapacityShare, solveNearest } from "../../app/engine/fixed-rules";
import { solvePlan } from "../../app/engine/plan";
import { marginalCostCurve, waitCurve } from "../../app/engine/site-cost-curve";
import { spawnSync } from "node:child_process";
import { existsSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import os, { tmpdir } from "node:os";
import { join } from "node:path";
import { DEMO_LIKE, LARGE, NATIONAL, type RegionSpec, generateRegion, generateScenarioDocument } from "./generate";
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

interface Timing {
  ms: number;
  /** CPU time of this process over the same span: on a shared machine, closer to what the solve costs than the wall time. */
  cpuMs: number;
  iterations: number;
  gap: number;
  converged: boolean;
  perLineMs: number[];
}

const cpuNow = (): number => {
  const { user, system } = process.cpuUsage();
  return (user + system) / 1000;
};

function timeRule(rule: Rule, problems: LineProblem[], repeats: number): Timing {
  let best: Timing | null = null;
  for (let r = 0; r < repeats; r++) {
    let iterations = 0;
    let gap = 0;
    let converged = true;
    const perLineMs: number[] = [];
    const cpuStarted = cpuNow();
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
    const cpuMs = cpuNow() - cpuStarted;
    if (!best || ms < best.ms) best = { ms, cpuMs, iterations, gap, converged, perLineMs };
  }
  return best as Timing;
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
    "| rule | wall ms | cpu ms | iterations | rel. gap | converged | peak RSS MB | FW gap in same time | FW time to 1e-4 |\n" +
      "| --- | ---: | ---: | ---: | ---: | --- | ---: | ---: | ---: |",
  );
  for (const rule of spec.sources * spec.sites <= 1_000 ? [...rules, ...planBaselines] : rules) {
    // Best of 3 on small instances, of 2 on large ones (the first run includes the JIT's warm-up;
    // the command-line row below shows a cold process).
    const result = timeRule(rule, problems, small ? 3 : 2);
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
      `| ${pad(rule.name, 15)} | ${result.ms.toFixed(1)} | ${result.cpuMs.toFixed(0)} | ${result.iterations} | ${fmt(result.gap)} | ${result.converged} | ${peakMb().toFixed(0)} | ${fwGap} | ${fwTime} |`,
    );
  }
  if (spec.sources * spec.sites <= 1_000) {
    // What a what-if in the browser waits for: every rule, one after the other, on every line.
    const allRules: Rule = {
      name: "all six rules",
      solve: (problem) => {
        let last = rules[0].solve(problem);
        for (const rule of rules.slice(1)) last = rule.solve(problem);
        return last;
      },
    };
    const result = timeRule(allRules, problems, 3);
    console.log(`| ${pad(allRules.name, 15)} | ${result.ms.toFixed(1)} | ${result.cpuMs.toFixed(0)} | | | | ${peakMb().toFixed(0)} | | target < 50 ms |`);
  }
}

/**
 * The whole `npm run solve` process on the national instance as an exchange-format file: start-up,
 * validation, every rule that applies (choice, optimum, nearest, capacityShare), the result JSON
 * written to /dev/null. Wall time, and the child's CPU time and peak memory from GNU time when
 * installed. Baseline in the same run: the same command on an invalid file (start-up and exit only).
 */
function benchCommandLine(): void {
  const directory = mkdtempSync(join(tmpdir(), "equilibra-bench-"));
  const file = join(directory, "national.json");
  writeFileSync(file, JSON.stringify(generateScenarioDocument(NATIONAL)));
  const invalid = join(directory, "invalid.json");
  writeFileSync(invalid, JSON.stringify({ schema: "equilibra/scenario@1" }));
  const gnuTime = existsSync("/usr/bin/time");
  // As from a shell: without the npm_* variables of `npm run bench` (an npm run inside another
  // reads them as configuration, ~0.1 s more per start).
  const env = Object.fromEntries(Object.entries(process.env).filter(([key]) => !key.toLowerCase().startsWith("npm_")));
  const run = (input: string) => {
    const command = `${gnuTime ? "/usr/bin/time -f '%U %S %M' " : ""}npm run -s solve -- ${input} --compact > /dev/null`;
    const started = performance.now();
    const child = spawnSync("sh", ["-c", command], { encoding: "utf8", env });
    const ms = performance.now() - started;
    const [user, system, rssKb] = (child.stderr.trim().split("\n").at(-1) ?? "").split(" ").map(Number);
    const usage = gnuTime && Number.isFinite(rssKb) ? { cpuMs: (user + system) * 1000, rssMb: rssKb / 1024 } : null;
    return { ms, code: child.status, usage };
  };
  // Untimed: the first run after a source change builds the command line's bundle (cli-launcher.mjs).
  run(invalid);
  const baseline = run(invalid);
  // Several runs: the machine is shared, and one run can be a second off either way.
  const runs = Number(process.env.BENCH_CLI_RUNS ?? 3);
  const wholes = Array.from({ length: runs }, () => run(file));
  rmSync(directory, { recursive: true, force: true });
  const cell = (value: number | undefined, digits = 0) => (value === undefined ? "n/a" : value.toFixed(digits));
  const median = [...wholes].sort((a, b) => a.ms - b.ms)[Math.floor(runs / 2)];
  console.log(`\n## npm run solve on the national file (${NATIONAL.sources}×${NATIONAL.sites}, exit ${wholes.map((whole) => whole.code).join(", ")})`);
  console.log("| command | wall ms | cpu ms (all threads) | peak RSS MB |\n| --- | ---: | ---: | ---: |");
  wholes.forEach((whole, index) => {
    console.log(`| whole solve, run ${index + 1} of ${runs} (target < 3000 ms) | ${whole.ms.toFixed(0)} | ${cell(whole.usage?.cpuMs)} | ${cell(whole.usage?.rssMb)} |`);
  });
  console.log(`| whole solve, median of ${runs} | ${median.ms.toFixed(0)} | ${cell(median.usage?.cpuMs)} | ${cell(median.usage?.rssMb)} |`);
  console.log(`| baseline: invalid file, start-up only | ${baseline.ms.toFixed(0)} | ${cell(baseline.usage?.cpuMs)} | ${cell(baseline.usage?.rssMb)} |`);
}

const only = process.env.BENCH_ONLY;
console.log(`Machine: ${os.cpus().length} cores, load average ${os.loadavg().map((value) => value.toFixed(2)).join(" / ")} (1/5/15 min) at start.`);
for (const spec of [DEMO_LIKE, LARGE, NATIONAL]) {
  if (only && !spec.name.startsWith(only)) continue;
  benchInstance(spec);
}
if (!only || only === "cli") benchCommandLine();
console.log(`\nLoad average at the end: ${os.loadavg().map((value) => value.toFixed(2)).join(" / ")}.`);
