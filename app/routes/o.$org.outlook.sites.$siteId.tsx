/**
 * One site's outlook, period by period through the year: referrals per week by priority under the
 * chosen rule, utilisation, waits, the share within the standard, teams on duty and teams needed
 * for the target — a chart and a table per service line — and the site's inflow under every rule.
 *
 * A site outside the viewer's scope answers 404, exactly like one that does not exist.
 */
import { Form, Link } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { formatNumber } from "~/components/data-table";
import { PeriodInflowChart } from "~/components/outlook-charts";
import { RunContext } from "~/components/run-context";
import { FilterSelect, TeamsTargetFields } from "~/components/filter-select";
import { RULE_LABELS } from "~/models/result-document";
import { openOutlookRun, runContextOf, siteOutlookFor } from "~/models/outlooks.server";
import { readPageQuery, SITE_OUTLOOK_ROLES, siteOutlookQuery } from "./outlook-query.server";
import type { Route } from "./+types/o.$org.outlook.sites.$siteId";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireRole(request, params.org, SITE_OUTLOOK_ROLES);
  const query = readPageQuery(siteOutlookQuery, new URL(request.url));
  const opened = await openOutlookRun({ organisationId: organisation.id, membership }, query.run ?? null);
  if (!opened) throw notFound();
  const outlook = siteOutlookFor(opened, membership, {
    siteId: params.siteId,
    targetShareWithin: query.target / 100,
    standardWeeks: query.standard,
    lines: query.line ? [query.line] : undefined,
  });
  if (!outlook) throw notFound();
  const provider = opened.scenario.providers.find((candidate) => candidate.id === params.siteId)!;
  const lines = opened.scenario.serviceLines.filter((line) => provider.lines[line.id] && outlook.rows.some((row) => row.lineId === line.id));
  return {
    slug: organisation.slug,
    query,
    runId: opened.run.id,
    site: { id: provider.id, name: provider.name ?? provider.id, sector: provider.sector },
    context: runContextOf(opened),
    lines: lines.map((line) => ({ id: line.id, name: line.name ?? line.id, standardWeeks: outlook.standardWeeks[line.id] })),
    periods: outlook.periods,
    rows: outlook.rows,
    targetShareWithin: outlook.targetShareWithin,
  };
}

function fmt(value: number | null | undefined, decimals = 1): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : formatNumber(value, decimals);
}

function pct(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : `${(value * 100).toFixed(1)}%`;
}

export default function SiteDetailPage({ loaderData }: Route.ComponentProps) {
  const { slug, query, runId, site, context, lines, periods, rows, targetShareWithin } = loaderData;
  const back = new URLSearchParams({ run: String(runId), rule: query.rule, target: String(query.target), ...(query.standard !== undefined ? { standard: String(query.standard) } : {}) });
  const rules = [...new Set(rows.map((row) => row.rule))];
  return (
    <div className="mx-auto max-w-7xl space-y-6 px-6 py-6">
      <header className="space-y-1">
        <p className="no-print text-sm">
          <Link to={`/o/${slug}/outlook/sites?${back.toString()}`} className="text-accent underline">
            ← All sites
          </Link>
        </p>
        <h1 className="text-2xl font-semibold">
          {site.name} <span className="text-base font-normal text-ink-soft">{site.id} · {site.sector}</span>
        </h1>
        <p className="text-sm text-ink-soft">
          {RULE_LABELS[query.rule] ?? query.rule} · teams needed for {(targetShareWithin * 100).toFixed(1)}% of routine patients within the standard ·{" "}
          <a href={`/api/v1/o/${slug}/outlook/sites/${site.id}?${back.toString()}&format=csv`} className="no-print text-accent underline" download>
            Export CSV
          </a>
        </p>
      </header>
      <Form method="get" className="no-print flex flex-wrap items-end gap-4 rounded border border-rule bg-white p-4 text-sm">
        <input type="hidden" name="run" value={runId} />
        <FilterSelect label="Rule" name="rule" value={query.rule} options={rules.map((rule) => ({ value: rule, label: RULE_LABELS[rule] ?? rule }))} />
        <TeamsTargetFields target={query.target} standard={query.standard} />
        <button type="submit" className="rounded bg-accent px-4 py-1.5 font-semibold text-white">
          Recompute teams needed
        </button>
      </Form>
      {lines.map((line) => {
        const lineRows = rows.filter((row) => row.lineId === line.id && row.rule === query.rule);
        return (
          <section key={line.id} className="space-y-3" aria-label={`${line.name} outlook`}>
            <h2 className="text-lg font-semibold">
              {line.name} <span className="text-sm font-normal text-ink-soft">standard for teams needed: {line.standardWeeks} weeks</span>
            </h2>
            <PeriodInflowChart
              title={`${site.id} ${line.id} inflow`}
              points={lineRows.map((row) => ({
                period: row.periodLabel,
                urgent: row.urgentInflow ?? 0,
                routine: row.routineInflow ?? 0,
                teamsAvailable: row.teamsAvailable,
                teamsNeeded: row.teamsNeeded,
              }))}
            />
            <div className="overflow-x-auto rounded border border-rule bg-white">
              <table className="min-w-full text-sm" aria-label={`${line.name} by period`}>
                <thead className="bg-accent-soft/60 text-left">
                  <tr>
                    <th className="px-3 py-2">Period</th>
                    <th className="px-3 py-2 num">Weeks</th>
                    <th className="px-3 py-2 num">Urgent (referrals/week)</th>
                    <th className="px-3 py-2 num">Routine (referrals/week)</th>
                    <th className="px-3 py-2 num">Utilisation</th>
                    <th className="px-3 py-2 num">Routine wait (weeks)</th>
                    <th className="px-3 py-2 num">Urgent wait (weeks)</th>
                    <th className="px-3 py-2 num">Within standard</th>
                    <th className="px-3 py-2 num">Teams on duty</th>
                    <th className="px-3 py-2 num">Teams needed</th>
                  </tr>
                </thead>
                <tbody>
                  {lineRows.map((row) => (
                    <tr key={row.periodId} className="border-t border-rule" data-testid={`period-${line.id}-${row.periodId}`}>
                      <td className="px-3 py-2">{row.periodLabel}</td>
                      <td className="px-3 py-2 num">{fmt(row.weeks, 2)}</td>
                      <td className="px-3 py-2 num">{fmt(row.urgentInflow, 2)}</td>
                      <td className="px-3 py-2 num">{fmt(row.routineInflow, 2)}</td>
                      <td className={`px-3 py-2 num ${row.utilisation !== null && row.utilisation >= 0.85 ? "bg-warn-soft font-semibold text-warn" : ""}`}>{pct(row.utilisation)}</td>
                      <td className="px-3 py-2 num">{fmt(row.routineWaitWeeks, 2)}</td>
                      <td className="px-3 py-2 num">{fmt(row.urgentWaitWeeks, 2)}</td>
                      <td className="px-3 py-2 num">{pct(row.shareWithinStandard)}</td>
                      <td className="px-3 py-2 num">{fmt(row.teamsAvailable, 2)}</td>
                      <td className={`px-3 py-2 num ${row.teamsNeeded !== null && row.teamsNeeded > row.teamsAvailable + 1e-9 ? "font-semibold text-bad" : ""}`}>
                        {row.teamsNeeded ?? "–"}
                        {row.teamsNeededByStage ? (
                          <span className="block text-xs text-ink-soft">
                            {Object.entries(row.teamsNeededByStage)
                              .map(([stage, teams]) => `${stage} ${teams}`)
                              .join(", ")}
                          </span>
                        ) : null}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
            {lineRows.some((row) => row.note) && (
              <ul className="list-disc pl-5 text-xs text-ink-soft">
                {[...new Set(lineRows.map((row) => row.note).filter(Boolean))].map((note) => (
                  <li key={note}>{note}</li>
                ))}
              </ul>
            )}
            <details className="rounded border border-rule bg-white p-3 text-sm">
              <summary className="cursor-pointer font-semibold">Inflow under every rule (referrals/week)</summary>
              <table className="mt-2 min-w-full text-sm" aria-label={`${line.name} inflow by rule`}>
                <thead className="text-left">
                  <tr>
                    <th className="px-2 py-1">Period</th>
                    {rules.map((rule) => (
                      <th key={rule} className="px-2 py-1 num">
                        {RULE_LABELS[rule] ?? rule}
                      </th>
                    ))}
                  </tr>
                </thead>
                <tbody>
                  {periods.map((period) => (
                    <tr key={period.id} className="border-t border-rule">
                      <td className="px-2 py-1">{period.label}</td>
                      {rules.map((rule) => (
                        <td key={rule} className="px-2 py-1 num">
                          {fmt(rows.find((row) => row.lineId === line.id && row.periodId === period.id && row.rule === rule)?.inflow, 2)}
                        </td>
                      ))}
                    </tr>
                  ))}
                </tbody>
              </table>
            </details>
          </section>
        );
      })}
      <RunContext context={context} />
    </div>
  );
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `${data?.site.name ?? "Site"} outlook · Equilibra` }];
}
