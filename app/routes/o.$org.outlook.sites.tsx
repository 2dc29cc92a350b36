/**
 * Site inflow outlook (provider managers, planners, administrators): for each site the viewer may
 * see and each service line, the year at a glance under one rule — mean and peak weekly inflow,
 * peak utilisation, the lowest share within the standard, teams on duty and teams needed for a
 * chosen share — with a link to the site's period-by-period detail and a CSV export of every row.
 *
 * Provider managers see published runs only, and only their own sites (publishing.server.ts).
 */
import { Form, Link } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { formatNumber } from "~/components/data-table";
import { PlanningCautions } from "~/components/planning-cautions";
import { RunContext } from "~/components/run-context";
import { summariseSiteOutlook } from "~/engine/site-outlook";
import { FilterSelect, TeamsTargetFields } from "~/components/filter-select";
import { RULE_LABELS } from "~/models/result-document";
import { openOutlookRun, runChoices, runContextOf, siteOutlookFor, visibleSites } from "~/models/outlooks.server";
import { listVisibleRuns } from "~/models/publishing.server";
import { readPageQuery, SITE_OUTLOOK_ROLES, siteOutlookQuery } from "./outlook-query.server";
import type { Route } from "./+types/o.$org.outlook.sites";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireRole(request, params.org, SITE_OUTLOOK_ROLES);
  const query = readPageQuery(siteOutlookQuery, new URL(request.url));
  const viewer = { organisationId: organisation.id, membership };
  const runs = await listVisibleRuns(viewer);
  const opened = await openOutlookRun(viewer, query.run ?? null);
  if (query.run !== undefined && !opened) throw notFound();
  const base = { slug: organisation.slug, runs: runChoices(runs), query, siteCodes: membership.role === "provider_manager" ? membership.siteCodes : null };
  if (!opened) return { ...base, outlook: null };
  const outlook = siteOutlookFor(opened, membership, {
    targetShareWithin: query.target / 100,
    standardWeeks: query.standard,
    lines: query.line ? [query.line] : undefined,
  });
  const rules = Object.keys(opened.run.result.lines[Object.keys(opened.run.result.lines)[0]]?.rules ?? {});
  const rows = (outlook?.rows ?? []).filter((row) => row.rule === query.rule);
  return {
    ...base,
    outlook: {
      runId: opened.run.id,
      context: runContextOf(opened),
      rules,
      lines: opened.scenario.serviceLines.map((line) => ({ id: line.id, name: line.name ?? line.id })),
      sites: visibleSites(opened, membership),
      periods: outlook?.periods ?? [],
      standardWeeks: outlook?.standardWeeks ?? {},
      summaries: summariseSiteOutlook(rows),
    },
  };
}

function fmt(value: number | null | undefined, decimals = 1): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : formatNumber(value, decimals);
}

function pct(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : `${(value * 100).toFixed(1)}%`;
}

export default function SiteOutlookPage({ loaderData }: Route.ComponentProps) {
  const { slug, runs, query, outlook, siteCodes } = loaderData;
  const search = new URLSearchParams(
    Object.entries({ run: outlook?.runId, rule: query.rule, line: query.line, target: query.target, standard: query.standard }).flatMap(([key, value]) =>
      value === undefined ? [] : [[key, String(value)]],
    ),
  );
  return (
    <div className="mx-auto max-w-7xl space-y-6 px-6 py-6">
      <header>
        <h1 className="text-2xl font-semibold">Site inflow outlook</h1>
        <p className="text-sm text-ink-soft">
          Expected referrals per week at each site through the year, by priority, with the teams needed for a chosen share seen within the waiting standard.
          {siteCodes ? ` You see your sites: ${siteCodes.join(", ") || "none assigned"}.` : ""}
        </p>
      </header>
      {!outlook ? (
        <p className="rounded border border-rule bg-white p-4">
          {runs.length === 0 ? "No run has been published to you yet. A planner publishes a run when its outlook is ready to share." : "Choose a run."}
        </p>
      ) : (
        <>
          <Form method="get" className="no-print flex flex-wrap items-end gap-4 rounded border border-rule bg-white p-4 text-sm">
            <FilterSelect label="Run" name="run" value={outlook.runId} options={runs.map((run) => ({ value: run.id, label: run.label }))} />
            <FilterSelect label="Rule" name="rule" value={query.rule} options={outlook.rules.map((rule) => ({ value: rule, label: RULE_LABELS[rule] ?? rule }))} />
            <FilterSelect label="Service line" name="line" value={query.line} allLabel="All lines" options={outlook.lines.map((line) => ({ value: line.id, label: line.name }))} />
            <TeamsTargetFields target={query.target} standard={query.standard} />
            <button type="submit" className="rounded bg-accent px-4 py-1.5 font-semibold text-white">
              Show
            </button>
            <a href={`/api/v1/o/${slug}/outlook/sites?${search.toString()}&format=csv`} className="ml-auto text-accent underline" download>
              Export CSV (every period)
            </a>
          </Form>

          {outlook.sites.length === 0 ? (
            <p className="rounded border border-rule bg-white p-4">None of your sites is in this run.</p>
          ) : (
            <div className="overflow-x-auto rounded border border-rule bg-white">
              <table className="min-w-full text-sm" aria-label="Sites at a glance">
                <caption className="p-3 text-left text-sm">
                  {RULE_LABELS[query.rule] ?? query.rule} · teams needed for {query.target}% of routine patients within{" "}
                  {Object.entries(outlook.standardWeeks)
                    .map(([line, weeks]) => `${weeks} weeks (${line})`)
                    .join(", ")}
                </caption>
                <thead className="bg-accent-soft/60 text-left">
                  <tr>
                    <th className="px-3 py-2">Site</th>
                    <th className="px-3 py-2">Line</th>
                    <th className="px-3 py-2 num">Mean inflow (referrals/week)</th>
                    <th className="px-3 py-2 num">Peak inflow (referrals/week)</th>
                    <th className="px-3 py-2">Peak period</th>
                    <th className="px-3 py-2 num">Peak utilisation</th>
                    <th className="px-3 py-2 num">Lowest share within standard</th>
                    <th className="px-3 py-2 num">Fewest teams on duty</th>
                    <th className="px-3 py-2 num">Most teams needed</th>
                    <th className="px-3 py-2">Periods short of teams</th>
                  </tr>
                </thead>
                <tbody>
                  {outlook.summaries.map((row) => (
                    <tr key={`${row.siteId}-${row.lineId}`} className="border-t border-rule" data-testid={`summary-${row.siteId}-${row.lineId}`}>
                      <td className="px-3 py-2">
                        <Link to={`/o/${slug}/outlook/sites/${row.siteId}?${search.toString()}`} className="text-accent underline">
                          {row.siteName ?? row.siteId}
                        </Link>{" "}
                        <span className="text-xs text-ink-soft">{row.siteId}</span>
                      </td>
                      <td className="px-3 py-2">{row.lineName}</td>
                      <td className="px-3 py-2 num">{fmt(row.meanInflow)}</td>
                      <td className="px-3 py-2 num">{fmt(row.peakInflow)}</td>
                      <td className="px-3 py-2">{row.peakPeriod ?? "–"}</td>
                      <td className={`px-3 py-2 num ${row.peakUtilisation !== null && row.peakUtilisation >= 0.85 ? "bg-warn-soft font-semibold text-warn" : ""}`}>{pct(row.peakUtilisation)}</td>
                      <td className="px-3 py-2 num">{pct(row.lowestShareWithinStandard)}</td>
                      <td className="px-3 py-2 num">{fmt(row.fewestTeamsAvailable, 2)}</td>
                      <td className="px-3 py-2 num">{row.mostTeamsNeeded ?? "–"}</td>
                      <td className="px-3 py-2">{row.shortPeriods.length > 0 ? row.shortPeriods.join(", ") : "none"}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
          <p className="text-xs text-ink-soft">
            Utilisation at or above 85% is flagged: waits rise steeply near capacity, the more so the fewer teams a site has. Teams needed hold the inflow
            fixed; under patient choice a site with more teams draws more patients (the planners' capacity advisor re-solves for that).
          </p>
          <RunContext context={outlook.context} />
        </>
      )}
      {!outlook && <PlanningCautions />}
    </div>
  );
}

export function meta() {
  return [{ title: "Site inflow outlook · Equilibra" }];
}
