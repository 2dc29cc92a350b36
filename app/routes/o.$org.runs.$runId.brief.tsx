/**
 * The decision brief of a run: a printable board paper — the planner's recommendation, the rules
 * compared, the map, equity (cost and balking by deprivation decile), each site's inflow under
 * each rule, and the assumptions, data date and cautions. The browser's "Print → Save as PDF"
 * produces the paper: the print stylesheet drops the controls and the app's frame, sets A4 pages
 * and keeps tables and figures from splitting across pages where they fit.
 *
 * Planners and administrators write the recommendation and publish the run from here. The brief
 * shows every site, so provider managers (who see only their own sites) are not offered it.
 */
import { data, Form, Link, useNavigation } from "react-router";
import type { FeatureCollection } from "geojson";
import { z } from "zod";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { getDb } from "~/db/client.server";
import { formatNumber } from "~/components/data-table";
import { RunContext } from "~/components/run-context";
import { StaticRegionMap } from "~/components/static-region-map";
import type { Role } from "~/db/schema";
import { balkingOutlook } from "~/engine/balking-outlook";
import { parseScenario } from "~/engine/scenario";
import { getRegionMap } from "~/models/region-maps.server";
import { RULE_LABELS, siteRows, summariseRules, UTILISATION_WARNING, type ResultDocument } from "~/models/result-document";
import { getVisibleRun, seesUnpublished, setRunPublished } from "~/models/publishing.server";
import { runContextOf } from "~/models/outlooks.server";
import { RECOMMENDATION_MAX_LENGTH } from "~/models/recommendation";
import { getRunBrief, saveRecommendation } from "~/models/run-briefs.server";
import type { Route } from "./+types/o.$org.runs.$runId.brief";

const BRIEF_ROLES: readonly Role[] = ["administrator", "planner", "access_officer", "reader"];

const briefForm = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("recommendation"),
    recommendation: z.string().max(RECOMMENDATION_MAX_LENGTH, { error: `The recommendation must be at most ${RECOMMENDATION_MAX_LENGTH} characters.` }),
  }),
  z.object({ intent: z.literal("publish") }),
  z.object({ intent: z.literal("unpublish") }),
]);

function runIdOf(value: string): number {
  return /^\d+$/.test(value) ? Number(value) : Number.NaN;
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireRole(request, params.org, BRIEF_ROLES);
  const run = await getVisibleRun({ organisationId: organisation.id, membership }, runIdOf(params.runId), { periods: false });
  if (!run) throw notFound();
  const scenario = parseScenario(run.input);
  const opened = { run, scenario, dataDate: run.input.dataDate ?? null };
  const result = run.result as unknown as ResultDocument;
  const [brief, region] = await Promise.all([getRunBrief(organisation.id, run.id), getRegionMap(await getDb(), organisation.id)]);

  const deciles = scenario.sources.map((source) => ({ id: source.id, deprivationDecile: source.deprivationDecile ?? null }));
  const summaries = summariseRules(result, { sources: deciles });
  const balking = balkingOutlook(scenario, run.result, { rule: "choice" });
  const flows = new Map<string, number>();
  for (const line of Object.values(run.result.lines)) {
    for (const source of line.rules.choice?.sources ?? []) {
      for (const [siteId, value] of Object.entries(source.flows)) flows.set(`${source.id}\u0000${siteId}`, (flows.get(`${source.id}\u0000${siteId}`) ?? 0) + value);
    }
  }
  const inflowBySite = new Map<string, { inflow: number; capacity: number }>();
  for (const line of Object.values(run.result.lines)) {
    for (const provider of line.rules.choice?.providers ?? []) {
      const entry = inflowBySite.get(provider.id) ?? { inflow: 0, capacity: 0 };
      entry.inflow += provider.inflow;
      entry.capacity += provider.capacity;
      inflowBySite.set(provider.id, entry);
    }
  }
  return {
    slug: organisation.slug,
    canEdit: seesUnpublished(membership.role),
    runId: run.id,
    scenarioId: run.scenarioId,
    context: runContextOf(opened),
    recommendation: brief.recommendation,
    recommendationUpdatedAt: brief.updatedAt?.toISOString() ?? null,
    lines: scenario.serviceLines.map((line) => ({ id: line.id, name: line.name ?? line.id, standardWeeks: line.standardWeeks })),
    summaries,
    siteRows: siteRows(result),
    siteNames: Object.fromEntries(scenario.providers.map((provider) => [provider.id, provider.name ?? provider.id])),
    balkingByDecile: balking.byDecile,
    // Utilisation warnings are the ⚠ marks of the site table; the rest are listed.
    warnings: run.result.warnings.filter((warning) => !/utilisation .* is at or above/.test(warning)),
    map: {
      region: region as FeatureCollection | null,
      practices: balking.practices.map((practice) => ({ id: practice.sourceId, name: practice.name ?? undefined, lat: practice.lat, lon: practice.lon, demand: practice.demandPerWeek, shade: practice.balkedShare })),
      sites: scenario.providers.map((provider) => {
        const load = inflowBySite.get(provider.id);
        return { id: provider.id, name: provider.name ?? undefined, lat: provider.lat, lon: provider.lon, sector: provider.sector, utilisation: load && load.capacity > 0 ? load.inflow / load.capacity : null };
      }),
      flows: [...flows.entries()].map(([key, value]) => {
        const [sourceId, siteId] = key.split("\u0000");
        return { sourceId, siteId, value };
      }),
      maxShare: Math.max(0.01, ...balking.practices.map((practice) => practice.balkedShare)),
    },
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireRole(request, params.org, ["administrator", "planner"]);
  const runId = runIdOf(params.runId);
  const parsed = briefForm.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ error: parsed.error.issues[0]?.message ?? "The form is not valid.", notice: null }, { status: 400 });
  const input = parsed.data;
  if (input.intent === "recommendation") {
    if (!(await saveRecommendation(organisation.id, runId, user.id, input.recommendation))) throw notFound();
    return { error: null, notice: "Recommendation saved." };
  }
  if (!(await setRunPublished(organisation.id, runId, user.id, input.intent === "publish"))) throw notFound();
  return { error: null, notice: input.intent === "publish" ? "Published to provider managers and patient-access officers." : "Withdrawn: only planners and administrators see this run now." };
}

function fmt(value: number | null | undefined, decimals = 2): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : formatNumber(value, decimals);
}

function pct(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : `${(value * 100).toFixed(1)}%`;
}

/** A4 pages, no app frame, figures and tables kept whole where they fit. */
const PRINT_STYLES = `
@page { size: A4; margin: 14mm 12mm; }
@media print {
  body { font-size: 10pt; }
  header.no-print, footer, .no-print { display: none !important; }
  main { max-width: none !important; padding: 0 !important; }
  .brief section { break-inside: auto; }
  .brief h2 { break-after: avoid; }
  .brief table, .brief figure, .brief .keep { break-inside: avoid; }
  .brief tr { break-inside: avoid; }
  .brief a { color: inherit; text-decoration: none; }
}`;

export default function DecisionBrief({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, canEdit, runId, scenarioId, context, recommendation, recommendationUpdatedAt, lines, summaries, siteNames, balkingByDecile, warnings, map } = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  const rules = summaries.map((summary) => summary.rule);
  const deciles = [...new Set(summaries.flatMap((summary) => summary.costByDecile.map((entry) => entry.decile)))].sort((a, b) => a - b);
  return (
    <article className="brief mx-auto max-w-5xl space-y-6 bg-white px-8 py-8 print:px-0 print:py-0">
      <style>{PRINT_STYLES}</style>
      <div className="no-print flex flex-wrap items-center gap-3 text-sm">
        <Link to={`/o/${slug}/runs`} className="text-accent underline">
          ← Runs
        </Link>
        {canEdit && (
          <Link to={`/o/${slug}/scenarios/${scenarioId}?run=${runId}`} className="text-accent underline">
            Open in the workspace
          </Link>
        )}
        <button type="button" onClick={() => window.print()} className="ml-auto rounded bg-accent px-4 py-1.5 font-semibold text-white">
          Print or save as PDF
        </button>
        {canEdit && (
          <Form method="post">
            <input type="hidden" name="intent" value={context.publishedAt ? "unpublish" : "publish"} />
            <button type="submit" disabled={busy} className="rounded border border-rule px-4 py-1.5">
              {context.publishedAt ? "Withdraw publication" : "Publish to provider managers and access officers"}
            </button>
          </Form>
        )}
      </div>
      {actionData?.notice && <p className="no-print rounded bg-accent-soft p-2 text-sm" role="status">{actionData.notice}</p>}
      {actionData?.error && <p className="no-print rounded bg-warn-soft p-2 text-sm" role="alert">{actionData.error}</p>}

      <header className="border-b border-rule pb-4">
        <p className="text-sm uppercase tracking-wide text-ink-soft">Decision brief</p>
        <h1 className="text-3xl font-semibold">{context.scenarioName}</h1>
        <p className="mt-1 text-sm">
          {context.runLabel ?? `Run ${context.runId}`} · solved {context.ranAt.slice(0, 10)} · data date {context.dataDate ?? "not stated"} ·{" "}
          {context.publishedAt ? `published ${context.publishedAt.slice(0, 10)}` : "not published"}
        </p>
      </header>

      <section aria-labelledby="recommendation">
        <h2 id="recommendation" className="text-xl font-semibold">
          Recommendation
        </h2>
        {recommendation ? (
          <div className="keep mt-2 whitespace-pre-wrap" data-testid="recommendation">
            {recommendation}
          </div>
        ) : (
          <p className="mt-2 text-ink-soft">No recommendation has been written for this run yet.</p>
        )}
        {recommendationUpdatedAt && <p className="mt-1 text-xs text-ink-soft">Last edited {recommendationUpdatedAt.slice(0, 10)}.</p>}
        {canEdit && (
          <Form method="post" className="no-print mt-3 space-y-2">
            <input type="hidden" name="intent" value="recommendation" />
            <label className="block text-sm font-semibold" htmlFor="recommendation-text">
              The planner's recommendation (printed as written)
            </label>
            <textarea
              id="recommendation-text"
              name="recommendation"
              defaultValue={recommendation}
              rows={6}
              maxLength={RECOMMENDATION_MAX_LENGTH}
              className="w-full rounded border border-rule p-2 text-sm"
            />
            <button type="submit" disabled={busy} className="rounded bg-accent px-4 py-1.5 text-sm font-semibold text-white">
              Save recommendation
            </button>
          </Form>
        )}
      </section>

      <section aria-labelledby="comparison">
        <h2 id="comparison" className="text-xl font-semibold">
          Comparison of referral rules
        </h2>
        <p className="text-sm text-ink-soft">All service lines together ({lines.map((line) => line.name).join(", ")}); the whole year as one stationary solve.</p>
        <table className="mt-2 w-full text-sm" aria-label="Comparison of referral rules">
          <thead className="border-b border-rule text-left">
            <tr>
              <th className="py-1 pr-2">Rule</th>
              <th className="py-1 pr-2 num">Total cost (weeks-eq./week)</th>
              <th className="py-1 pr-2 num">Price of anarchy</th>
              <th className="py-1 pr-2 num">Mean wait (weeks)</th>
              <th className="py-1 pr-2 num">Within standard</th>
              <th className="py-1 pr-2 num">Mean travel (km)</th>
              <th className="py-1 pr-2 num">Seen (referrals/week)</th>
              <th className="py-1 pr-2 num">Balked (referrals/week)</th>
              <th className="py-1 num">Cost spread (weeks-eq.)</th>
            </tr>
          </thead>
          <tbody>
            {summaries.map((row) => (
              <tr key={row.rule} className="border-b border-rule" data-testid={`rule-${row.rule}`}>
                <td className="py-1 pr-2">{RULE_LABELS[row.rule] ?? row.rule}</td>
                <td className="py-1 pr-2 num">{fmt(row.totalCost, 1)}</td>
                <td className="py-1 pr-2 num">{fmt(row.priceOfAnarchy, 3)}</td>
                <td className="py-1 pr-2 num">{fmt(row.meanWaitWeeks)}</td>
                <td className="py-1 pr-2 num">{pct(row.shareWithinStandard)}</td>
                <td className="py-1 pr-2 num">{fmt(row.meanKm, 1)}</td>
                <td className="py-1 pr-2 num">{fmt(row.servedPerWeek, 1)}</td>
                <td className="py-1 pr-2 num">{fmt(row.balkedPerWeek, 1)}</td>
                <td className="py-1 num">{fmt(row.costSpread)}</td>
              </tr>
            ))}
          </tbody>
        </table>
        <p className="mt-1 text-xs text-ink-soft">
          Total cost: waiting + travel (km ÷ κ) + balkers' private-care cost, in weeks-equivalent per week. Price of anarchy: total cost over the
          central hub's minimum (1 = no loss).
        </p>
      </section>

      <section aria-labelledby="map">
        <h2 id="map" className="text-xl font-semibold">
          Map: patient choice
        </h2>
        <StaticRegionMap
          title="Referral flows under patient choice, practices shaded by the share of referrals balking"
          region={map.region}
          practices={map.practices}
          sites={map.sites}
          flows={map.flows}
          shading={{ label: "Share balking", unit: "", domain: [0, map.maxShare] }}
        />
      </section>

      <section aria-labelledby="equity">
        <h2 id="equity" className="text-xl font-semibold">
          Equity
        </h2>
        {deciles.length === 0 ? (
          <p className="text-sm text-ink-soft">No practice has a deprivation decile: equity by decile cannot be shown.</p>
        ) : (
          <table className="mt-2 w-full text-sm" aria-label="Equity by deprivation decile">
            <thead className="border-b border-rule text-left">
              <tr>
                <th className="py-1 pr-2">Deprivation decile (1 = most deprived)</th>
                {rules.map((rule) => (
                  <th key={rule} className="py-1 pr-2 num">
                    Mean cost: {RULE_LABELS[rule] ?? rule}
                  </th>
                ))}
                <th className="py-1 num">Balked under choice</th>
              </tr>
            </thead>
            <tbody>
              {deciles.map((decile) => {
                const balking = balkingByDecile.find((row) => row.decile === decile);
                return (
                  <tr key={decile} className="border-b border-rule" data-testid={`equity-${decile}`}>
                    <td className="py-1 pr-2">{decile}</td>
                    {summaries.map((summary) => (
                      <td key={summary.rule} className="py-1 pr-2 num">
                        {fmt(summary.costByDecile.find((entry) => entry.decile === decile)?.meanCost)}
                      </td>
                    ))}
                    <td className="py-1 num">{balking ? `${fmt(balking.balkedPerWeek)}/week (${pct(balking.balkedShare)})` : "–"}</td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        )}
        <p className="mt-1 text-xs text-ink-soft">Mean cost per referral in weeks-equivalent (waiting + travel, balkers at their private-care cost).</p>
      </section>

      <section aria-labelledby="sites">
        <h2 id="sites" className="text-xl font-semibold">
          Inflow per site
        </h2>
        <table className="mt-2 w-full text-sm" aria-label="Inflow per site">
          <thead className="border-b border-rule text-left">
            <tr>
              <th className="py-1 pr-2">Site</th>
              <th className="py-1 pr-2">Line</th>
              {rules.map((rule) => (
                <th key={rule} className="py-1 pr-2 num">
                  {RULE_LABELS[rule] ?? rule} (referrals/week, utilisation)
                </th>
              ))}
            </tr>
          </thead>
          <tbody>
            {loaderData.siteRows.map((row) => (
              <tr key={`${row.site}-${row.line}`} className="border-b border-rule">
                <td className="py-1 pr-2">
                  {siteNames[row.site] ?? row.site} <span className="text-xs text-ink-soft">{row.site}</span>
                </td>
                <td className="py-1 pr-2">{row.line}</td>
                {rules.map((rule) => {
                  const cell = row.byRule[rule];
                  const warn = cell?.utilisation != null && cell.utilisation >= UTILISATION_WARNING;
                  return (
                    <td key={rule} className={`py-1 pr-2 num ${warn ? "font-semibold text-warn" : ""}`}>
                      {cell ? `${fmt(cell.inflow, 1)} · ${pct(cell.utilisation)}${warn ? " ⚠" : ""}` : "–"}
                    </td>
                  );
                })}
              </tr>
            ))}
          </tbody>
        </table>
        <p className="mt-1 text-xs text-ink-soft">⚠ utilisation at or above 85%: waits rise steeply near capacity, the more so the fewer teams a site has.</p>
      </section>

      {warnings.length > 0 && (
        <section aria-labelledby="warnings">
          <h2 id="warnings" className="text-xl font-semibold">
            Warnings from the model
          </h2>
          <ul className="mt-2 list-disc pl-5 text-sm">
            {warnings.slice(0, 20).map((warning) => (
              <li key={warning}>{warning}</li>
            ))}
            {warnings.length > 20 && <li>… and {warnings.length - 20} more (see the workspace).</li>}
          </ul>
        </section>
      )}

      <section aria-labelledby="assumptions">
        <h2 id="assumptions" className="text-xl font-semibold">
          Assumptions, data date and cautions
        </h2>
        <RunContext context={context} />
      </section>
    </article>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `Decision brief: ${data?.context.scenarioName ?? "run"} · Equilibra` }];
}
