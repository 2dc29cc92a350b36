/**
 * The API's answer when a solve gave no result: the status and message from the model or the solve
 * pool, the issues when there are any, and `Retry-After` when the server was only busy (503).
 */
import { apiError } from "~/auth/api-guards.server";
import type { PoolRefusal, SolveOutcome } from "~/models/runs.server";
import type { SolvePoolError } from "~/models/solve-pool.server";

type Refusal = Extract<SolveOutcome, { ok: false }> | PoolRefusal;

export function solveRefusal(outcome: Refusal): Response {
  const response = apiError(outcome.status, outcome.error, outcome.issues.length > 0 ? outcome.issues : undefined);
  if ("retryAfterSeconds" in outcome && outcome.retryAfterSeconds !== undefined) response.headers.set("Retry-After", String(outcome.retryAfterSeconds));
  return response;
}

/** The same answer for work other than a plain solve (sensitivity, the capacity advisor). */
export function poolRefusal(error: SolvePoolError): Response {
  return solveRefusal({ ok: false, status: error.status, error: error.message, issues: [], retryAfterSeconds: error.retryAfterSeconds });
}
