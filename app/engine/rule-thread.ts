/**
 * Node only (the CLI): solves some of a scenario's rules on a worker thread while the calling
 * thread solves the others, so a large scenario uses two cores. The worker runs
 * `rule-thread-entry.ts` from source through tsx's loader (the CLI itself runs under tsx).
 * Results of the two threads are joined by `mergeScenarioResults`.
 */
import { createRequire } from "node:module";
import { readFileSync } from "node:fs";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { Worker } from "node:worker_threads";
import type { RuleKey } from "./problem";
import type { ScenarioResult } from "./solve-scenario";

const BOOTSTRAP = `
const { workerData } = require("node:worker_threads");
import(workerData.tsxApi).then((tsx) => { tsx.register(); return import(workerData.entry); });
`;

/** tsx's ES-module `register` API (its default entry does not load TypeScript in worker threads). */
function tsxApiUrl(): string {
  const manifestPath = createRequire(import.meta.url).resolve("tsx/package.json");
  const manifest = JSON.parse(readFileSync(manifestPath, "utf8")) as { exports?: Record<string, { import?: { default?: string } }> };
  const target = manifest.exports?.["./esm/api"]?.import?.default;
  if (!target) throw new Error(`tsx at ${path.dirname(manifestPath)} has no "./esm/api" import export.`);
  return pathToFileURL(path.join(path.dirname(manifestPath), target)).href;
}

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
  const worker = new Worker(BOOTSTRAP, { eval: true, workerData: { tsxApi: tsxApiUrl(), entry } });
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
