/**
 * GET   /api/v1/o/:org/scenarios/:id — the scenario's details and its inputs as an exchange-format document.
 * PUT   /api/v1/o/:org/scenarios/:id — replace the inputs with a complete exchange-format document
 *       (one transaction: a bad document changes nothing). Planners and administrators only.
 * PATCH /api/v1/o/:org/scenarios/:id — `{ "name"?, "description"?, "dataDate"?, "archived"? }`.
 */
import { z } from "zod";
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { ScenarioInputError } from "~/engine/problem";
import { archiveScenario, exportScenario, getScenario, renameScenario } from "~/models/scenarios.server";
import { replaceScenarioInputs, updateScenarioDetails } from "~/models/scenario-edits.server";
import { scenarioSize } from "~/models/plan-gates.server";
import { idParam, methodNotAllowed, readJsonBody, requireApiPlan } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id";

const patchSchema = z.object({
  name: z.string().optional(),
  description: z.string().max(10_000, "must be at most 10,000 characters").optional(),
  dataDate: z.string().max(40, "must be a short date such as 2025-03-31").nullable().optional(),
  archived: z.boolean().optional(),
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireApiMember(request, params.org);
  const id = idParam(params.id, "scenario");
  const db = await getDb();
  const scenario = await getScenario(db, organisation.id, id);
  if (!scenario) return apiError(404, "No such scenario in this organisation.");
  const document = await exportScenario(db, organisation.id, id);
  return Response.json({
    id: scenario.id,
    name: scenario.name,
    description: scenario.description,
    dataDate: scenario.dataDate,
    parentId: scenario.parentId,
    archivedAt: scenario.archivedAt,
    updatedAt: scenario.updatedAt,
    scenario: document,
  });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "PUT" && request.method !== "PATCH") return methodNotAllowed(["GET", "PUT", "PATCH"]);
  const { organisation, user } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const id = idParam(params.id, "scenario");
  const body = await readJsonBody(request);
  if (request.method === "PUT") {
    // Workspace edits and what-if saves send the whole document: its size is what the plan limits.
    await requireApiPlan(organisation, ["problemSize"], scenarioSize(body));
    try {
      const replaced = await replaceScenarioInputs(organisation.id, id, body, { userId: user.id, reason: "api" });
      if (!replaced) return apiError(404, "No such scenario in this organisation.");
      return Response.json({ id, updated: true });
    } catch (error) {
      if (error instanceof ScenarioInputError) return apiError(400, "The scenario is not valid; nothing was changed.", error.issues);
      throw error;
    }
  }
  const parsed = patchSchema.safeParse(body);
  if (!parsed.success) {
    return apiError(400, "The changes are not valid.", parsed.error.issues.map((issue) => ({ path: issue.path.join("."), message: issue.message })));
  }
  const db = await getDb();
  const scenario = await getScenario(db, organisation.id, id);
  if (!scenario) return apiError(404, "No such scenario in this organisation.");
  const { name, description, dataDate, archived } = parsed.data;
  // Restoring an archived scenario counts against the scenario limit again.
  if (archived === false && scenario.archivedAt) await requireApiPlan(organisation, ["scenarios"]);
  try {
    if (name !== undefined) await renameScenario(db, organisation.id, id, name);
  } catch (error) {
    if (error instanceof ScenarioInputError) return apiError(400, "The name is not valid.", error.issues);
    throw error;
  }
  if (description !== undefined || dataDate !== undefined) await updateScenarioDetails(organisation.id, id, { description, dataDate }, user.id);
  if (archived !== undefined) await archiveScenario(db, organisation.id, id, archived);
  return Response.json({ id, updated: true });
}
