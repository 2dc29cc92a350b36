/**
 * GET /api/v1/o/:org/runs/:runId — one run: its input snapshot, result and diagnostics.
 *     ?format=csv&file=results-sites.csv | results-practices.csv — the results as CSV, headed by
 *     the assumptions, data date and planning cautions.
 */
import { apiError, requireApiMember } from "~/auth/api-guards.server";
import { recordAudit } from "~/models/audit.server";
import { resultToCsvFiles } from "~/models/csv-export";
import type { ResultDocument } from "~/models/result-document";
import { wholeRunAccess } from "~/models/publishing.server";
import { getRun } from "~/models/runs.server";
import { idParam } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.runs.$runId";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, user, membership } = await requireApiMember(request, params.org);
  const runId = idParam(params.runId, "run");
  const run = await getRun(organisation.id, runId, { access: wholeRunAccess(membership.role) });
  if (!run) return apiError(404, "No such run in this organisation.");
  const search = new URL(request.url).searchParams;
  if (search.get("format") !== "csv") return Response.json({ run });
  const files = resultToCsvFiles(run.result as unknown as ResultDocument, {
    scenarioName: run.input.name ?? `Scenario ${run.scenarioId}`,
    dataDate: run.input.dataDate ?? null,
    kmPerWeek: run.input.kmPerWeek,
    circuity: run.input.circuity,
    runLabel: run.label ?? `run ${run.id}`,
    ranAt: run.createdAt.toISOString(),
  });
  const file = search.get("file") ?? "";
  if (!(file in files)) return apiError(400, `Choose a file with ?file=: one of ${Object.keys(files).join(", ")}.`);
  await recordAudit(organisation.id, user.id, "run.exported", `run:${run.id}`, { file });
  return new Response(files[file], {
    headers: { "Content-Type": "text/csv; charset=utf-8", "Content-Disposition": `attachment; filename="run-${run.id}-${file}"` },
  });
}
