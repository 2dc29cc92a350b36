/**
 * GET  /api/v1/o/:org/scenarios/:id/runs — the scenario's runs, newest first (without payloads).
 * POST /api/v1/o/:org/scenarios/:id/runs — solve the scenario as stored now and keep the run
 *      (`{ "label"?: "…" }`); answers 201 with the run. Planners and administrators only.
 */
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { createRun, listRuns } from "~/models/runs.server";
import { getScenario } from "~/models/scenarios.server";
import { idParam, methodNotAllowed } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id.runs";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireApiMember(request, params.org);
  const id = idParam(params.id, "scenario");
  if (!(await getScenario(await getDb(), organisation.id, id))) return apiError(404, "No such scenario in this organisation.");
  return Response.json({ runs: await listRuns(organisation.id, id) });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["GET", "POST"]);
  const { organisation, user } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const id = idParam(params.id, "scenario");
  let label: string | undefined;
  const text = await request.text();
  if (text.trim() !== "") {
    try {
      const body = JSON.parse(text) as { label?: unknown };
      if (typeof body.label === "string") label = body.label.slice(0, 200);
    } catch {
      return apiError(400, 'The body must be JSON such as { "label": "baseline" }, or empty.');
    }
  }
  const outcome = await createRun(organisation.id, id, { userId: user.id, label });
  if (outcome === null) return apiError(404, "No such scenario in this organisation.");
  if (!outcome.ok) return apiError(outcome.status, outcome.error, outcome.issues);
  return Response.json({ run: outcome.run, url: `/o/${organisation.slug}/scenarios/${id}?run=${outcome.run.id}` }, { status: 201 });
}
