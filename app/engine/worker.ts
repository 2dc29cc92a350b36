/**
 * The engine as a Web Worker, so what-ifs solve in the browser without blocking the page:
 *
 *   const worker = new Worker(new URL("../engine/worker.ts", import.meta.url), { type: "module" });
 *   worker.postMessage({ id: 1, scenario });            // exchange-format JSON, unchecked
 *   worker.onmessage = ({ data }) => …                  // a WorkerResponse with the same id
 *
 * Uses only engine code (no React, router or database). Every failure comes back as a message
 * of its kind, never as an uncaught error in the worker: "invalidInput" with one issue per field
 * path, "noSteadyState" naming lines, sites and shortfalls, "internal" for a defect.
 */
import { NoSteadyStateError, ScenarioInputError, type RuleKey } from "./problem";
import { parseScenario } from "./scenario";
import { solveScenario, type ScenarioResult } from "./solve-scenario";

export interface WorkerRequest {
  /** Echoed back so the page can match answers to questions (and drop stale ones). */
  id: number | string;
  scenario: unknown;
  rules?: RuleKey[];
  periods?: boolean;
}

export type WorkerResponse =
  | { id: number | string; ok: true; result: ScenarioResult; elapsedMs: number }
  | { id: number | string; ok: false; kind: "invalidInput"; message: string; issues: { path: string; message: string }[] }
  | {
      id: number | string;
      ok: false;
      kind: "noSteadyState";
      message: string;
      shortfalls: NoSteadyStateError["shortfalls"];
    }
  | { id: number | string; ok: false; kind: "internal"; message: string };

/** Answers one request; pure apart from reading the clock, so it is tested without a worker. */
export function handleWorkerRequest(request: WorkerRequest): WorkerResponse {
  const id = request?.id ?? 0;
  const started = performance.now();
  try {
    const scenario = parseScenario(request?.scenario);
    const result = solveScenario(scenario, { rules: request.rules, periods: request.periods });
    return { id, ok: true, result, elapsedMs: performance.now() - started };
  } catch (error) {
    if (error instanceof ScenarioInputError) return { id, ok: false, kind: "invalidInput", message: error.message, issues: error.issues };
    if (error instanceof NoSteadyStateError) return { id, ok: false, kind: "noSteadyState", message: error.message, shortfalls: error.shortfalls };
    return { id, ok: false, kind: "internal", message: error instanceof Error ? error.message : String(error) };
  }
}

/** The slice of a dedicated worker's global scope used here (the DOM lib types `self` as a Window). */
interface WorkerScope {
  onmessage: ((event: MessageEvent<WorkerRequest>) => void) | null;
  postMessage(message: WorkerResponse): void;
}

// Attach only inside a worker: importing this module elsewhere (tests, the server) has no effect.
const isWorker = typeof (globalThis as { WorkerGlobalScope?: unknown }).WorkerGlobalScope === "function";
if (isWorker) {
  const scope = self as unknown as WorkerScope;
  scope.onmessage = (event) => scope.postMessage(handleWorkerRequest(event.data));
}
