/**
 * GET  /api/v1/o/:org/scenarios — the organisation's scenarios (add ?archived=1 for archived ones too).
 * POST /api/v1/o/:org/scenarios — create a scenario from an exchange-format document, either bare
 *      or wrapped as `{ "scenario": {…}, "name": "…", "parentId": 12 }` (a what-if copy records its
 *      parent). Planners and administrators only.
 */
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { ScenarioInputError } from "~/engine/problem";
import { recordAudit } from "~/models/audit.server";
import { scenarioSize } from "~/models/plan-gates.server";
import { importScenario, listScenarios } from "~/models/scenarios.server";
import { methodNotAllowed, readJsonBody, requireApiPlan } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireApiMember(request, params.org);
  const includeArchived = new URL(request.url).searchParams.get("archived") === "1";
  const scenarios = await listScenarios(await getDb(), organisation.id, { includeArchived });
  return Response.json({ scenarios });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["GET", "POST"]);
  const { organisation, user } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const body = await readJsonBody(request);
  const wrapped = typeof body === "object" && body !== null && "scenario" in body ? (body as { scenario: unknown; name?: unknown; parentId?: unknown }) : null;
  const document = wrapped ? wrapped.scenario : body;
  const name = typeof wrapped?.name === "string" ? wrapped.name : undefined;
  const parentId = typeof wrapped?.parentId === "number" ? wrapped.parentId : undefined;
  await requireApiPlan(organisation, ["scenarios", "problemSize"], scenarioSize(document));
  try {
    const id = await importScenario(await getDb(), organisation.id, document, { name, parentId, createdBy: user.id });
    await recordAudit(organisation.id, user.id, "scenario.created", `scenario:${id}`, { via: "api", parentId: parentId ?? null });
    return Response.json({ id, url: `/o/${organisation.slug}/scenarios/${id}` }, { status: 201 });
  } catch (error) {
    if (error instanceof ScenarioInputError) return apiError(400, "The scenario is not valid.", error.issues);
    throw error;
  }
}
