/**
 * Node only (the CLI): solves some of a scenario's rules on a worker thread while the calling
 * thread solves the others, so a large scenario uses two cores. The worker runs
 * `rule-thread-entry.ts` from source (`typescript-worker.ts`).
 *
 * Which thread solves what: each starts with its own heavy rule (the calling thread `optimum`,
 * the worker `choice`), then both take the remaining rules from one shared queue, heaviest first,
 * whichever is free first (`rule-queue.ts`: one counter in shared memory). Static halves left one
 * core idle for up to a second, as the two heavy rules' times vary by instance and machine load.
 *
 * The worker receives the validated scenario and computes the road km of every line together with
 * the caller, in shared memory (not copied) — so nothing is validated or computed twice — and it
 * answers with its rules' reports already written as JSON text (`result-json.ts`): cloning a
 * text is far cheaper than cloning millions of small objects, and the writing is done on its core.
 * Results of the two threads are joined by `mergeScenarioResults`.
 */
import type { RuleKey } from "./problem";
import type { RenderedRuleReport } from "./result-json";
import type { RuleQueue } from "./rule-queue";
import type { Scenario } from "./scenario";
import type { DistanceWork } from "./shared-distances";
import type { ScenarioResult } from "./solve-scenario";
// Only type imports besides these: the command line starts the worker before it loads the engine.
import { Worker } from "node:worker_threads";
import { startTypeScriptWorker } from "./typescript-worker";

export interface RuleThreadRequest {
  /** The scenario as `parseScenario` returned it (already checked). */
  scenario: Scenario;
  /** Road km per line, computed by both threads together in shared memory (`shared-distances.ts`). */
  distances: DistanceWork;
  /** The worker's own rules, solved before it takes any from the queue. */
  rules: RuleKey[];
  /** Rules shared with the calling thread (its counter is in shared memory, so both see each take). */
  queue: RuleQueue;
  /** JSON.stringify's gap for the reports' text ("" for compact output). */
  gap: string;
}

export type RuleThreadReply = { ok: true; result: ScenarioResult<RenderedRuleReport> | null } | { ok: false; message: string };

/**
 * Starts the worker at once (its start-up overlaps the caller's own work) and posts the request
 * when `send` is called. `result` resolves with the worker's part of the result, or rejects when
 * the worker fails; `stop` ends the worker early (when the caller's own part failed). The worker
 * exits after answering.
 */
export function startRuleThread(): {
  send: (request: RuleThreadRequest) => void;
  result: Promise<ScenarioResult<RenderedRuleReport> | null>;
  stop: () => void;
} {
  // From the command line's bundle (cli-launcher.mjs) the entry is a bundled module beside this
  // code; from source (tests, tsx) it is the TypeScript file, run through tsx's loader.
  const bundled = import.meta.url.endsWith(".mjs");
  const worker = bundled
    ? new Worker(new URL("./rule-thread-entry.mjs", import.meta.url))
    : startTypeScriptWorker(new URL("./rule-thread-entry.ts", import.meta.url).href);
  const result = new Promise<ScenarioResult<RenderedRuleReport> | null>((resolve, reject) => {
    worker.once("message", (reply: RuleThreadReply) => {
      void worker.terminate();
      if (reply.ok) resolve(reply.result);
      else reject(new Error(reply.message));
    });
    worker.once("error", reject);
    worker.once("exit", (code) => reject(new Error(`the solver thread stopped (exit code ${code}) before answering`)));
  });
  // A rejection nobody awaits (after `stop`) must not end the process.
  result.catch(() => undefined);
  return { send: (request) => worker.postMessage(request), result, stop: () => void worker.terminate() };
}
