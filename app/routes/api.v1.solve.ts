/**
 * POST /api/v1/solve — an exchange-format scenario in, the result (`equilibra/result@1`) out.
 * Nothing is stored. Any signed-in person or live API token may solve, within a plan: a token
 * within its organisation's plan (API access, runs, problem size); a session within the plan of
 * any organisation the person belongs to.
 * Query options: `periods=0` solves only the stationary problem (not the scenario's periods);
 * `rules=choice,optimum` solves only those rules.
 * The solve runs on a worker thread (`app/models/solve-pool.server.ts`): 503 with `Retry-After` when
 * every worker is busy and the queue is full, 504 past the time limit.
 */
import { apiError, requireApiUser } from "~/auth/api-guards.server";
import type { RuleKey } from "~/engine/problem";
import { planRefusalForPerson, scenarioSize } from "~/models/plan-gates.server";
import { solveDocumentToJsonInPool } from "~/models/runs.server";
import { methodNotAllowed, readJsonBody, requireApiPlan } from "./api-support.server";
import { solveRefusal } from "./solve-refusal.server";
import type { Route } from "./+types/api.v1.solve";

const RULE_KEYS: readonly RuleKey[] = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"];

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["POST"]);
  const { user, token } = await requireApiUser(request);
  const search = new URL(request.url).searchParams;
  const periods = search.get("periods");
  if (periods !== null && periods !== "0" && periods !== "1") return apiError(400, 'periods must be 0 or 1.');
  const rulesText = search.get("rules");
  const rules = rulesText ? rulesText.split(",").map((rule) => rule.trim()) : undefined;
  const unknown = rules?.filter((rule) => !RULE_KEYS.includes(rule as RuleKey)) ?? [];
  if (unknown.length > 0) return apiError(400, `Unknown rule ${unknown.join(", ")}: use ${RULE_KEYS.join(", ")}.`);
  const body = await readJsonBody(request);
  const size = scenarioSize(body);
  if (token) {
    // One read of the plan for API access, runs and size together (this route is the busiest).
    await requireApiPlan(token.organisation, ["api", "runs", "problemSize"], size);
  } else {
    const refusal = await planRefusalForPerson(user.id, ["runs", "problemSize"], size);
    if (refusal) return apiError(403, refusal.message);
  }
  const outcome = await solveDocumentToJsonInPool(body, { periods: periods === null ? undefined : periods === "1", rules: rules as RuleKey[] | undefined });
  if (!outcome.ok) return solveRefusal(outcome);
  // The worker serialised the result already (the same text Response.json would write).
  return new Response(outcome.resultJson, { headers: { "Content-Type": "application/json", "X-Solve-Milliseconds": outcome.durationMs.toFixed(1) } });
}

export async function loader() {
  return methodNotAllowed(["POST"]);
}
