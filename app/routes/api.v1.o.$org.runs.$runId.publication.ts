/**
 * /api/v1/o/:org/runs/:runId/publication — whether a run is shared with provider managers and
 * patient-access officers.
 *     GET    → { published, publishedAt }
 *     PUT    → publish (planners, administrators)
 *     DELETE → withdraw (planners, administrators)
 * Each change is written to the audit log.
 */
import { apiError, requireApiMember } from "~/auth/api-guards.server";
import { getVisibleRun, PUBLISHER_ROLES, setRunPublished } from "~/models/publishing.server";
import { idParam, methodNotAllowed } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.runs.$runId.publication";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireApiMember(request, params.org);
  const run = await getVisibleRun({ organisationId: organisation.id, membership }, idParam(params.runId, "run"), { periods: false });
  if (!run) return apiError(404, "No such run in this organisation.");
  return Response.json({ runId: run.id, published: run.publishedAt !== null, publishedAt: run.publishedAt, publishedBy: run.publishedByName });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "PUT" && request.method !== "DELETE") return methodNotAllowed(["GET", "PUT", "DELETE"]);
  const { organisation, user } = await requireApiMember(request, params.org, PUBLISHER_ROLES);
  const runId = idParam(params.runId, "run");
  const published = request.method === "PUT";
  if (!(await setRunPublished(organisation.id, runId, user.id, published))) return apiError(404, "No such run in this organisation.");
  return Response.json({ runId, published });
}
