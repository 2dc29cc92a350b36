/**
 * GET  /api/v1/o/:org/scenarios/:id/runs — the scenario's runs, newest first (without payloads).
 * POST /api/v1/o/:org/scenarios/:id/runs — solve the scenario as stored now and keep the run
 *      (`{ "label"?: "…", "periods"?: false, "rules"?: ["choice", "optimum"] }`); answers 201 with the
 *      run. Every rule that applies and every period by default. Planners and administrators only.
 */
import { z } from "zod";
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { wholeRunAccess } from "~/models/publishing.server";
import { createRun, listRuns } from "~/models/runs.server";
import { scenarioSize } from "~/models/plan-gates.server";
import { exportScenario, getScenario } from "~/models/scenarios.server";
import { idParam, methodNotAllowed, requireApiPlan } from "./api-support.server";
import { solveRefusal } from "./solve-refusal.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id.runs";

const RULE_KEYS = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"] as const;

const runBodySchema = z.object({
  label: z.string().max(200, "must be at most 200 characters").nullable().optional(),
  periods: z.boolean({ error: "must be true or false" }).optional(),
  rules: z.array(z.enum(RULE_KEYS, { error: `must be one of ${RULE_KEYS.join(", ")}` })).min(1, "must name at least one rule").optional(),
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireApiMember(request, params.org);
  const id = idParam(params.id, "scenario");
  if (!(await getScenario(await getDb(), organisation.id, id))) return apiError(404, "No such scenario in this organisation.");
  return Response.json({ runs: await listRuns(organisation.id, id, wholeRunAccess(membership.role)) });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["GET", "POST"]);
  const { organisation, user } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const id = idParam(params.id, "scenario");
  let body: unknown = {};
  const text = await request.text();
  if (text.trim() !== "") {
    try {
      body = JSON.parse(text);
    } catch {
      return apiError(400, 'The body must be JSON such as { "label": "baseline" }, or empty.');
    }
  }
  const parsed = runBodySchema.safeParse(body);
  if (!parsed.success) {
    return apiError(400, "The run options are not valid.", parsed.error.issues.map((issue) => ({ path: issue.path.join("."), message: issue.message })));
  }
  const document = await exportScenario(await getDb(), organisation.id, id);
  if (!document) return apiError(404, "No such scenario in this organisation.");
  await requireApiPlan(organisation, ["runs", "problemSize"], scenarioSize(document));
  const outcome = await createRun(organisation.id, id, { userId: user.id, label: parsed.data.label ?? undefined, periods: parsed.data.periods, rules: parsed.data.rules });
  if (outcome === null) return apiError(404, "No such scenario in this organisation.");
  if (!outcome.ok) return solveRefusal(outcome);
  return Response.json({ run: outcome.run, url: `/o/${organisation.slug}/scenarios/${id}?run=${outcome.run.id}` }, { status: 201 });
}
