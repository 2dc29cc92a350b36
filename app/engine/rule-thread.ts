/**
 * Node only (the CLI): solves some of a scenario's rules on a worker thread while the calling
 * thread solves the others, so a large scenario uses two cores. The worker runs
 * `rule-thread-entry.ts` from source (`typescript-worker.ts`).
 * Results of the two threads are joined by `mergeScenarioResults`.
 */
import type { RuleKey } from "./problem";
import type { ScenarioResult } from "./solve-scenario";
import { startTypeScriptWorker } from "./typescript-worker";

export interface RuleThreadRequest {
  /** The scenario document as read (the worker validates it again, as the caller does). */
  document: unknown;
  rules: RuleKey[];
}

export type RuleThreadReply = { ok: true; result: ScenarioResult } | { ok: false; message: string };

/**
 * Starts the worker at once (its start-up overlaps the caller's own work). `result` resolves with
 * the worker's part of the result, or rejects when the worker fails; `stop` ends the worker early
 * (when the caller's own part failed). The worker exits after answering.
 */
export function solveRulesOnThread(request: RuleThreadRequest): { result: Promise<ScenarioResult>; stop: () => void } {
  const entry = new URL("./rule-thread-entry.ts", import.meta.url).href;
  const worker = startTypeScriptWorker(entry);
  worker.postMessage(request);
  const result = new Promise<ScenarioResult>((resolve, reject) => {
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
  return { result, stop: () => void worker.terminate() };
}
