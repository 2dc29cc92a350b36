/**
 * GET /api/v1/o/:org/outlook/balking?run=&rule=&line=&period= — balking by practice, by practice
 * and line, by deprivation decile, and the furthest / most-balking practices.
 *     &format=csv — practice × line rows as CSV, headed by the run, data date, assumptions and cautions.
 * Access officers: published runs only.
 */
import { apiError, API_NOT_FOUND, requireApiMember } from "~/auth/api-guards.server";
import { recordAudit } from "~/models/audit.server";
import { balkingOutlookCsv } from "~/models/outlook-csv";
import { balkingOutlookFor, openOutlookRun, runContextOf } from "~/models/outlooks.server";
import { fileStem } from "./api-support.server";
import { BALKING_OUTLOOK_ROLES, balkingOutlookQuery, readApiQuery } from "./outlook-query.server";
import type { Route } from "./+types/api.v1.o.$org.outlook.balking";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership, user } = await requireApiMember(request, params.org, BALKING_OUTLOOK_ROLES);
  const query = readApiQuery(balkingOutlookQuery, new URL(request.url));
  const opened = await openOutlookRun({ organisationId: organisation.id, membership }, query.run ?? null, { periods: query.period !== undefined });
  if (!opened) return apiError(404, query.run !== undefined ? API_NOT_FOUND : "No run has been published to you yet.");
  const issues = [];
  if (query.line !== undefined && !opened.scenario.serviceLines.some((line) => line.id === query.line)) issues.push({ path: "line", message: `this run has no service line "${query.line}"` });
  if (query.period !== undefined && !opened.scenario.periods?.some((period) => period.id === query.period)) issues.push({ path: "period", message: `this run has no period "${query.period}"` });
  if (query.format !== undefined && query.format !== "csv") issues.push({ path: "format", message: "format must be csv, or left out for JSON" });
  if (issues.length > 0) return apiError(400, "The query string is not valid.", issues);
  const outlook = balkingOutlookFor(opened, { rule: query.rule, lines: query.line ? [query.line] : undefined, periodId: query.period });
  const context = runContextOf(opened);
  if (query.format === "csv") {
    const csv = balkingOutlookCsv(outlook, {
      title: "balking outlook",
      scenarioName: context.scenarioName,
      runLabel: context.runLabel ?? `run ${context.runId}`,
      dataDate: context.dataDate,
      kmPerWeek: context.assumptions.kmPerWeek,
      circuity: context.assumptions.circuity,
    });
    await recordAudit(organisation.id, user.id, "outlook.exported", `run:${opened.run.id}`, { view: "balking", rule: query.rule, line: query.line ?? null, period: query.period ?? null, format: "csv" });
    const file = `${fileStem(context.scenarioName)}-run-${opened.run.id}-balking.csv`;
    return new Response(csv, { headers: { "Content-Type": "text/csv; charset=utf-8", "Content-Disposition": `attachment; filename="${file}"` } });
  }
  return Response.json({
    run: { id: context.runId, scenarioName: context.scenarioName, label: context.runLabel, ranAt: context.ranAt, publishedAt: context.publishedAt, dataDate: context.dataDate },
    assumptions: context.assumptions,
    cautions: opened.run.result.cautions,
    outlook,
  });
}
