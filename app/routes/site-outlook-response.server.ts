/**
 * The site outlook API's answer, shared by the list and one-site routes: the same scoping, JSON
 * shape and CSV export. (Not a route: `app/routes.ts` lists routes.)
 */
import { apiError, API_NOT_FOUND, requireApiMember } from "~/auth/api-guards.server";
import { recordAudit } from "~/models/audit.server";
import { siteOutlookCsv } from "~/models/outlook-csv";
import { openOutlookRun, runContextOf, siteOutlookFor } from "~/models/outlooks.server";
import { fileStem } from "./api-support.server";
import { readApiQuery, SITE_OUTLOOK_ROLES, siteOutlookQuery } from "./outlook-query.server";

export async function siteOutlookResponse(request: Request, slug: string | undefined, siteId: string | undefined): Promise<Response> {
  const { organisation, membership, user } = await requireApiMember(request, slug, SITE_OUTLOOK_ROLES);
  const query = readApiQuery(siteOutlookQuery, new URL(request.url));
  const opened = await openOutlookRun({ organisationId: organisation.id, membership }, query.run ?? null);
  if (!opened) return apiError(404, query.run !== undefined ? API_NOT_FOUND : "No run has been published to you yet.");
  if (query.line !== undefined && !opened.scenario.serviceLines.some((line) => line.id === query.line)) {
    return apiError(400, "The query string is not valid.", [{ path: "line", message: `this run has no service line "${query.line}"` }]);
  }
  const outlook = siteOutlookFor(opened, membership, {
    siteId,
    targetShareWithin: query.target / 100,
    standardWeeks: query.standard,
    lines: query.line ? [query.line] : undefined,
  });
  if (!outlook) return apiError(404, API_NOT_FOUND);
  const rows = outlook.rows.filter((row) => row.rule === query.rule);
  const context = runContextOf(opened);
  if (query.format === "csv") {
    const csv = siteOutlookCsv(
      { ...outlook, rows },
      {
        title: "site inflow outlook",
        scenarioName: context.scenarioName,
        runLabel: context.runLabel ?? `run ${context.runId}`,
        dataDate: context.dataDate,
        kmPerWeek: context.assumptions.kmPerWeek,
        circuity: context.assumptions.circuity,
      },
    );
    await recordAudit(organisation.id, user.id, "outlook.exported", `run:${opened.run.id}`, { view: "sites", site: siteId ?? null, rule: query.rule, format: "csv" });
    const file = `${fileStem(context.scenarioName)}-run-${opened.run.id}-sites${siteId ? `-${siteId}` : ""}.csv`;
    return new Response(csv, { headers: { "Content-Type": "text/csv; charset=utf-8", "Content-Disposition": `attachment; filename="${file}"` } });
  }
  if (query.format !== undefined) return apiError(400, "The query string is not valid.", [{ path: "format", message: "format must be csv, or left out for JSON" }]);
  return Response.json({
    run: { id: context.runId, scenarioName: context.scenarioName, label: context.runLabel, ranAt: context.ranAt, publishedAt: context.publishedAt, dataDate: context.dataDate },
    assumptions: context.assumptions,
    cautions: opened.run.result.cautions,
    rule: query.rule,
    targetShareWithin: outlook.targetShareWithin,
    standardWeeks: outlook.standardWeeks,
    periods: outlook.periods,
    rows,
  });
}
