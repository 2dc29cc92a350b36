/**
 * POST /api/v1/o/:org/scenarios/:id/advisor — where N extra teams help most, for planners.
 * Body: { "extraTeams": 3, "lines"?: ["ortho"], "siteLimits"?: { "ZZS2": 1 }, "rules"?: ["choice", "optimum"] }
 * Answer: the greedy placement per rule (each step re-solved, with its gain in total cost), the
 * first step's ranking of every site line, and the exact check when the problem is small.
 */
import { z } from "zod";
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { NoSteadyStateError } from "~/engine/problem";
import { capacityAdviceFor } from "~/models/outlooks.server";
import { exportScenario, getScenario } from "~/models/scenarios.server";
import { scenarioSize } from "~/models/plan-gates.server";
import { SolvePoolError } from "~/models/solve-pool.server";
import { idParam, methodNotAllowed, readJsonBody, requireApiPlan } from "./api-support.server";
import { poolRefusal } from "./solve-refusal.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id.advisor";

/** The advisor re-solves a line per candidate and step: beyond this it is a batch job. */
const MAX_EXTRA_TEAMS = 20;

const advisorBody = z.object({
  extraTeams: z
    .number({ error: "extraTeams must be a whole number of teams" })
    .int({ error: "extraTeams must be a whole number of teams" })
    .min(1, { error: "extraTeams must be at least 1" })
    .max(MAX_EXTRA_TEAMS, { error: `extraTeams must be at most ${MAX_EXTRA_TEAMS}` }),
  lines: z.array(z.string()).min(1, { error: "lines must name at least one service line" }).optional(),
  siteLimits: z.record(z.string(), z.number().int({ error: "a site limit must be a whole number" }).min(0, { error: "a site limit must be ≥ 0" })).optional(),
  rules: z.array(z.enum(["choice", "optimum"], { error: "rules must list choice and/or optimum" })).min(1).optional(),
});

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["POST"]);
  const { organisation } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const id = idParam(params.id, "scenario");
  const parsed = advisorBody.safeParse(await readJsonBody(request));
  if (!parsed.success) {
    return apiError(400, "The request body is not valid.", parsed.error.issues.map((issue) => ({ path: issue.path.join(".") || "body", message: issue.message })));
  }
  const db = await getDb();
  const scenario = await getScenario(db, organisation.id, id);
  if (!scenario) return apiError(404, "No such scenario in this organisation.");
  const document = await exportScenario(db, organisation.id, id);
  // The advisor solves the scenario once per candidate site: it is a run as far as the plan goes.
  await requireApiPlan(organisation, ["runs", "problemSize"], scenarioSize(document));
  try {
    const advice = await capacityAdviceFor(document, `scenario:${id}:${scenario.updatedAt.toISOString()}`, parsed.data);
    return Response.json({ scenarioId: id, advice });
  } catch (error) {
    if (error instanceof RangeError) return apiError(400, error.message);
    if (error instanceof NoSteadyStateError) return apiError(422, error.message);
    if (error instanceof SolvePoolError) return poolRefusal(error);
    throw error;
  }
}

export async function loader() {
  return methodNotAllowed(["POST"]);
}
