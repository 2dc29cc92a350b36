/**
 * GET /api/v1/o/:org/scenarios/:id/export — the inputs as a download:
 *   ?format=json (default)                 the exchange-format document;
 *   ?format=csv&file=practices.csv         one of practices.csv, sites.csv, capacities.csv,
 *                                          service-lines.csv, travel-km.csv (when a matrix is stored).
 * Every member may export; each export is written to the audit log.
 */
import { apiError, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import type { Scenario } from "~/engine/scenario";
import { recordAudit } from "~/models/audit.server";
import { scenarioToCsvFiles } from "~/models/csv-export";
import { exportScenario } from "~/models/scenarios.server";
import { fileStem, idParam } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id.export";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, user } = await requireApiMember(request, params.org);
  const id = idParam(params.id, "scenario");
  const document = await exportScenario(await getDb(), organisation.id, id);
  if (!document) return apiError(404, "No such scenario in this organisation.");
  const search = new URL(request.url).searchParams;
  const format = search.get("format") ?? "json";
  const stem = fileStem(document.name ?? "scenario");
  if (format === "json") {
    await recordAudit(organisation.id, user.id, "scenario.exported", `scenario:${id}`, { format });
    return new Response(`${JSON.stringify(document, null, 2)}\n`, {
      headers: { "Content-Type": "application/json; charset=utf-8", "Content-Disposition": `attachment; filename="${stem}.json"` },
    });
  }
  if (format !== "csv") return apiError(400, `Unknown format "${format}": use json or csv.`);
  const files = scenarioToCsvFiles(document as Scenario);
  const file = search.get("file") ?? "";
  if (!(file in files)) return apiError(400, `Choose a file with ?file=: one of ${Object.keys(files).join(", ")}.`);
  await recordAudit(organisation.id, user.id, "scenario.exported", `scenario:${id}`, { format, file });
  return new Response(files[file], {
    headers: { "Content-Type": "text/csv; charset=utf-8", "Content-Disposition": `attachment; filename="${stem}-${file}"` },
  });
}
