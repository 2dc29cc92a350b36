/**
 * `npm run solve -- FILE.json [--compact]`: reads a scenario in the exchange format, solves every
 * rule on every line (and period), and prints the result JSON (`equilibra/result@1`) on stdout.
 *
 * Exit codes (README.md, "The command line"):
 *   0  solved; the result is on stdout.
 *   2  the input cannot be used: no file named, the file cannot be read, it is not JSON, or the
 *      scenario is invalid — stderr names the file and each offending field path and value.
 *   3  no steady state (demand above capacity with no outside option): stderr names each line,
 *      its sites and the shortfall in referrals/week. When the scenario itself is fine and only
 *      some periods lack a steady state, the result is still printed (those periods say so).
 *   1  an unexpected failure inside the engine (a defect: please report it).
 */
import { readFileSync } from "node:fs";
import { NoSteadyStateError, type RuleKey, ScenarioInputError } from "./problem";
import type { RenderedRuleReport } from "./result-json";
import { startRuleThread } from "./rule-thread";
import type { ScenarioResult } from "./solve-scenario";

/**
 * The engine, loaded after the second thread has been started, so that loading it (~0.3 s with
 * the TypeScript loader, most of it the schema library) overlaps the worker's own start-up. First
 * what checking the scenario and posting it to the worker need; the solvers after that, while the
 * worker is already computing road km.
 */
async function loadChecks() {
  const [scenario, distances, order, queue] = await Promise.all([
    import("./scenario"),
    import("./shared-distances"),
    import("./rule-order"),
    import("./rule-queue"),
  ]);
  return { ...scenario, ...distances, ...order, ...queue };
}

async function loadSolvers() {
  const [json, share, solve] = await Promise.all([import("./result-json"), import("./solve-thread-share"), import("./solve-scenario")]);
  return { ...json, ...share, ...solve };
}

const USAGE = "Usage: npm run solve -- FILE.json [--compact]";

function fail(code: number, message: string): number {
  process.stderr.write(`${message}\n`);
  return code;
}

/**
 * From this many practice–site pairs a scenario is solved on two threads: below it, starting a
 * worker (about 0.3 s with the TypeScript loader) costs more than it saves. The environment
 * variable EQUILIBRA_SOLVE_PARALLEL_PAIRS changes it (the tests set 1 to use the thread on small files).
 */
const PARALLEL_PAIRS = Number(process.env.EQUILIBRA_SOLVE_PARALLEL_PAIRS ?? 200_000);
/**
 * Each thread's own heavy rule, solved first (choice and optimum take about as long); the other
 * rules are shared out as the threads become free, in this order — the longest first, so that
 * the two threads end close together (capacityShare's report, with every practice–site flow, is
 * the largest text to write).
 */
const MAIN_THREAD_RULES: readonly RuleKey[] = ["optimum"];
const SECOND_THREAD_RULES: readonly RuleKey[] = ["choice"];
const SHARED_RULE_ORDER: readonly RuleKey[] = ["choiceLogit", "plan", "capacityShare", "nearest"];

async function main(args: readonly string[]): Promise<number> {
  const compact = args.includes("--compact");
  const files = args.filter((arg) => !arg.startsWith("--"));
  const unknown = args.filter((arg) => arg.startsWith("--") && arg !== "--compact");
  if (unknown.length > 0) return fail(2, `Unknown option ${unknown.join(", ")}.\n${USAGE}`);
  if (files.length !== 1) return fail(2, `${files.length === 0 ? "No scenario file given." : "Give exactly one scenario file."}\n${USAGE}`);
  const file = files[0];

  let text: string;
  try {
    text = readFileSync(file, "utf8");
  } catch (error) {
    const reason = error instanceof Error && "code" in error ? String(error.code) : String(error);
    return fail(2, `Cannot read scenario file "${file}": ${reason === "ENOENT" ? "no such file" : reason}.`);
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (error) {
    return fail(2, `Scenario file "${file}" could not be parsed as JSON: ${error instanceof Error ? error.message : String(error)}`);
  }

  const gap = compact ? "" : "  ";
  // A large scenario: the rules shared between two cores. The worker starts now, so that its
  // start-up overlaps the checks below; it is stopped if the scenario turns out to be bad.
  const large = (json as { sources?: unknown[]; providers?: unknown[] } | null);
  const pairs = Array.isArray(large?.sources) && Array.isArray(large?.providers) ? large.sources.length * large.providers.length : 0;
  const thread = pairs >= PARALLEL_PAIRS ? startRuleThread() : null;
  const { computeSharedDistances, distanceWork, parseScenario, RULE_ORDER, ruleQueue, rulesToRun } = await loadChecks();
  try {
    const scenario = parseScenario(json);
    const rules = rulesToRun(scenario);
    let result: ScenarioResult<RenderedRuleReport>;
    if (thread) {
      // The worker gets the checked scenario at once, before this thread loads the solvers; both
      // threads compute the road km together (the worker starts on them meanwhile).
      const work = distanceWork(scenario);
      const shared = [...SHARED_RULE_ORDER, ...RULE_ORDER.filter((rule) => !SHARED_RULE_ORDER.includes(rule))].filter(
        (rule) => rules.includes(rule) && !MAIN_THREAD_RULES.includes(rule) && !SECOND_THREAD_RULES.includes(rule),
      );
      const queue = ruleQueue(shared);
      thread.send({ scenario, distances: work, rules: rules.filter((rule) => SECOND_THREAD_RULES.includes(rule)), queue, gap });
      const { mergeScenarioResults, solveOwnAndQueued } = await loadSolvers();
      const distances = computeSharedDistances(scenario, work);
      const own = solveOwnAndQueued(scenario, distances, rules.filter((rule) => MAIN_THREAD_RULES.includes(rule)), queue, gap);
      const other = await thread.result;
      result = mergeScenarioResults([own, other].filter((part) => part !== null));
    } else {
      result = (await loadSolvers()).solveScenarioAsJson(scenario, {}, gap);
    }
    const { resultJsonChunks } = await loadSolvers();
    for (const chunk of resultJsonChunks(result, gap)) process.stdout.write(chunk);
    process.stdout.write("\n");
    const periodsWithout = (result.periods ?? []).flatMap((period) =>
      Object.values(period.lines).flatMap((line) => line.noSteadyState ?? []),
    );
    if (periodsWithout.length > 0) {
      return fail(3, `Scenario file "${file}" solved, but some periods have no steady state:\n${new NoSteadyStateError(periodsWithout).message}`);
    }
    return 0;
  } catch (error) {
    thread?.stop();
    if (error instanceof ScenarioInputError) {
      return fail(2, `Invalid scenario in "${file}" (${error.issues.length} ${error.issues.length === 1 ? "issue" : "issues"}):\n${error.issues.map((issue) => `  ${issue.path}: ${issue.message}`).join("\n")}`);
    }
    if (error instanceof NoSteadyStateError) return fail(3, `Scenario file "${file}" has no steady state:\n${error.message}`);
    return fail(1, `Equilibra's engine failed on "${file}" (a defect, please report it): ${error instanceof Error ? (error.stack ?? error.message) : String(error)}`);
  }
}

// A reader that stops early (`npm run solve -- FILE | head`) is not a failure of the solve.
process.stdout.on("error", (error: NodeJS.ErrnoException) => {
  if (error.code !== "EPIPE") throw error;
  process.exit(process.exitCode ?? 0);
});
const exitCode = await main(process.argv.slice(2));
process.exitCode = exitCode;
// Exit once stdout and stderr have taken everything written (the callbacks run after the writes
// before them), without tearing down the solver thread and the heaps (~0.07 s on a national file).
process.stderr.write("", () => process.stdout.write("", () => process.exit(exitCode)));
