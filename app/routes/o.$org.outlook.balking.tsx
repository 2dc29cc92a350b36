/**
 * Balking outlook (patient-access officers, planners, administrators): referrals per week expected
 * to leave for private care by practice, service line and deprivation decile — on the map and in
 * tables — the practices whose patients travel furthest or balk most, and how total balking moves
 * with the private price and with added capacity (each point re-solved). CSV export.
 *
 * Access officers see published runs only (publishing.server.ts).
 */
import { Form } from "react-router";
import type { FeatureCollection } from "geojson";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { getDb } from "~/db/client.server";
import { DataTable, formatNumber, type DataColumn } from "~/components/data-table";
import { SensitivityChart } from "~/components/outlook-charts";
import { PlanningCautions } from "~/components/planning-cautions";
import { RegionMap } from "~/components/region-map";
import { RunContext } from "~/components/run-context";
import type { PracticeBalking } from "~/engine/balking-outlook";
import { getRegionMap } from "~/models/region-maps.server";
import { FilterSelect } from "~/components/filter-select";
import { RULE_LABELS } from "~/models/result-document";
import { balkingOutlookFor, openOutlookRun, runChoices, runContextOf, sensitivityFor } from "~/models/outlooks.server";
import { SolvePoolError } from "~/models/solve-pool.server";
import { listVisibleRuns } from "~/models/publishing.server";
import { BALKING_OUTLOOK_ROLES, balkingOutlookQuery, readPageQuery } from "./outlook-query.server";
import type { Route } from "./+types/o.$org.outlook.balking";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireRole(request, params.org, BALKING_OUTLOOK_ROLES);
  const query = readPageQuery(balkingOutlookQuery, new URL(request.url));
  const viewer = { organisationId: organisation.id, membership };
  const runs = await listVisibleRuns(viewer);
  // Period results are most of a run's size: read them only when a period is asked for.
  const opened = await openOutlookRun(viewer, query.run ?? null, { periods: query.period !== undefined });
  if (query.run !== undefined && !opened) throw notFound();
  if (!opened) return { slug: organisation.slug, runs: runChoices(runs), query, view: null };
  if (query.period !== undefined && !opened.scenario.periods?.some((period) => period.id === query.period)) {
    throw new Response(`period: this run has no period "${query.period}"`, { status: 400 });
  }
  if (query.line !== undefined && !opened.scenario.serviceLines.some((line) => line.id === query.line)) {
    throw new Response(`line: this run has no service line "${query.line}"`, { status: 400 });
  }
  const lines = query.line ? [query.line] : undefined;
  const outlook = balkingOutlookFor(opened, { rule: query.rule, lines, periodId: query.period });
  const sensitivity = await sensitivityFor(opened, { lines, rules: ["choice", "optimum"] }).catch((error: unknown) => {
    // Every solve worker busy: say so rather than wait without limit.
    if (error instanceof SolvePoolError) {
      throw new Response(error.message, { status: error.status, headers: error.retryAfterSeconds ? { "Retry-After": String(error.retryAfterSeconds) } : {} });
    }
    throw error;
  });
  const region = await getRegionMap(await getDb(), organisation.id);
  return {
    slug: organisation.slug,
    runs: runChoices(runs),
    query,
    view: {
      runId: opened.run.id,
      context: runContextOf(opened),
      rules: Object.keys(opened.run.result.lines[Object.keys(opened.run.result.lines)[0]]?.rules ?? {}),
      lines: opened.scenario.serviceLines.map((line) => ({ id: line.id, name: line.name ?? line.id })),
      periods: (opened.scenario.periods ?? []).map((period) => ({ id: period.id, label: period.label ?? period.id })),
      sites: opened.scenario.providers.map((provider) => ({ id: provider.id, name: provider.name ?? provider.id, lat: provider.lat, lon: provider.lon, sector: provider.sector })),
      outlook,
      sensitivity,
      region: region as FeatureCollection | null,
    },
  };
}

function fmt(value: number | null | undefined, decimals = 2): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : formatNumber(value, decimals);
}

function pct(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : `${(value * 100).toFixed(1)}%`;
}

const PRACTICE_COLUMNS: DataColumn<PracticeBalking>[] = [
  { id: "id", header: "Practice", value: (row) => row.sourceId },
  { id: "name", header: "Name", value: (row) => row.name },
  { id: "decile", header: "Deprivation decile", unit: "1 = most deprived", numeric: true, value: (row) => row.deprivationDecile, format: (value) => (value === null || value === undefined ? "–" : String(value)) },
  { id: "demand", header: "Demand", unit: "referrals/week", numeric: true, value: (row) => row.demandPerWeek, total: "sum" },
  { id: "balked", header: "Balked", unit: "referrals/week", numeric: true, value: (row) => row.balkedPerWeek, total: "sum" },
  { id: "share", header: "Balked share", unit: "of demand", numeric: true, value: (row) => row.balkedShare, format: (value) => pct(value as number) },
  { id: "km", header: "Mean travel", unit: "km", numeric: true, value: (row) => row.meanKm, format: (value) => fmt(value as number | null, 1) },
  { id: "wait", header: "Mean wait", unit: "weeks", numeric: true, value: (row) => row.meanWaitWeeks },
];

const CURVE_SERIES = [
  { key: "choice", label: "Patient choice", colour: "#0072B2" },
  { key: "optimum", label: "Central referral hub", colour: "#009E73" },
];

export default function BalkingOutlookPage({ loaderData }: Route.ComponentProps) {
  const { slug, runs, query, view } = loaderData;
  if (!view) {
    return (
      <div className="mx-auto max-w-7xl space-y-6 px-6 py-6">
        <h1 className="text-2xl font-semibold">Balking outlook</h1>
        <p className="rounded border border-rule bg-white p-4">
          {runs.length === 0 ? "No run has been published to you yet. A planner publishes a run when its outlook is ready to share." : "Choose a run."}
        </p>
        <PlanningCautions />
      </div>
    );
  }
  const { outlook, sensitivity } = view;
  const search = new URLSearchParams(
    Object.entries({ run: view.runId, rule: query.rule, line: query.line, period: query.period }).flatMap(([key, value]) => (value === undefined ? [] : [[key, String(value)]])),
  );
  const maxShare = Math.max(0.01, ...outlook.practices.map((practice) => practice.balkedShare));
  const curve = (points: typeof sensitivity.privateCost) => points.map((point) => ({ factor: point.factor, choice: point.balkedPerWeek.choice ?? null, optimum: point.balkedPerWeek.optimum ?? null }));
  return (
    <div className="mx-auto max-w-7xl space-y-6 px-6 py-6">
      <header>
        <h1 className="text-2xl font-semibold">Balking outlook</h1>
        <p className="text-sm text-ink-soft">
          Referrals per week expected to leave for private care (or go without) when the public system costs them more in waiting and travel than
          their private option.
        </p>
      </header>
      <Form method="get" className="no-print flex flex-wrap items-end gap-4 rounded border border-rule bg-white p-4 text-sm">
        <FilterSelect label="Run" name="run" value={view.runId} options={runs.map((run) => ({ value: run.id, label: run.label }))} />
        <FilterSelect label="Rule" name="rule" value={query.rule} options={view.rules.map((rule) => ({ value: rule, label: RULE_LABELS[rule] ?? rule }))} />
        <FilterSelect label="Service line" name="line" value={query.line} allLabel="All lines" options={view.lines.map((line) => ({ value: line.id, label: line.name }))} />
        {view.periods.length > 0 && (
          <label className="flex flex-col">
            Period
            <select name="period" defaultValue={query.period ?? ""} className="rounded border border-rule px-2 py-1">
              <option value="">Whole year (stationary)</option>
              {view.periods.map((period) => (
                <option key={period.id} value={period.id}>
                  {period.label}
                </option>
              ))}
            </select>
          </label>
        )}
        <button type="submit" className="rounded bg-accent px-4 py-1.5 font-semibold text-white">
          Show
        </button>
        <a href={`/api/v1/o/${slug}/outlook/balking?${search.toString()}&format=csv`} className="ml-auto text-accent underline" download>
          Export CSV
        </a>
      </Form>

      <p className="text-lg" data-testid="balking-total">
        <span className="font-semibold num">{fmt(outlook.totalBalkedPerWeek, 1)}</span> of {fmt(outlook.totalDemandPerWeek, 1)} referrals/week balk (
        {pct(outlook.totalDemandPerWeek > 0 ? outlook.totalBalkedPerWeek / outlook.totalDemandPerWeek : 0)}) under {RULE_LABELS[outlook.rule] ?? outlook.rule}.
      </p>

      <RegionMap
        region={view.region}
        practices={outlook.practices.map((practice) => ({
          id: practice.sourceId,
          name: practice.name ?? undefined,
          lat: practice.lat,
          lon: practice.lon,
          demand: practice.demandPerWeek,
          shade: practice.balkedShare,
        }))}
        sites={view.sites.map((site) => ({ ...site, utilisation: null }))}
        shading={{ label: "Share of referrals balking", unit: "", domain: [0, maxShare] }}
        height={420}
      />

      <div className="grid gap-4 md:grid-cols-2">
        <RankedList title="Patients travel furthest" rows={outlook.furthest} value={(row) => `${fmt(row.meanKm, 1)} km`} />
        <RankedList title="Most referrals balk" rows={outlook.mostBalking} value={(row) => `${pct(row.balkedShare)} (${fmt(row.balkedPerWeek)}/week)`} />
      </div>

      <section aria-label="Balking by deprivation decile" className="space-y-2">
        <h2 className="text-lg font-semibold">By deprivation decile</h2>
        <div className="overflow-x-auto rounded border border-rule bg-white">
          <table className="min-w-full text-sm" aria-label="Balking by deprivation decile">
            <thead className="bg-accent-soft/60 text-left">
              <tr>
                <th className="px-3 py-2">Decile (1 = most deprived)</th>
                <th className="px-3 py-2 num">Practices</th>
                <th className="px-3 py-2 num">Demand (referrals/week)</th>
                <th className="px-3 py-2 num">Balked (referrals/week)</th>
                <th className="px-3 py-2 num">Balked share</th>
                <th className="px-3 py-2 num">Mean travel (km)</th>
              </tr>
            </thead>
            <tbody>
              {outlook.byDecile.map((row) => (
                <tr key={row.decile} className="border-t border-rule" data-testid={`decile-${row.decile}`}>
                  <td className="px-3 py-2">{row.decile}</td>
                  <td className="px-3 py-2 num">{row.practices}</td>
                  <td className="px-3 py-2 num">{fmt(row.demandPerWeek, 1)}</td>
                  <td className="px-3 py-2 num">{fmt(row.balkedPerWeek)}</td>
                  <td className="px-3 py-2 num">{pct(row.balkedShare)}</td>
                  <td className="px-3 py-2 num">{fmt(row.meanKm, 1)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      </section>

      <section aria-label="Sensitivity of balking" className="space-y-2">
        <h2 className="text-lg font-semibold">Sensitivity (each point re-solved)</h2>
        <p className="text-sm text-ink-soft">
          Whole year, {sensitivity.lines.join(", ")}. Private cost: every practice's private-care cost multiplied by the factor. Capacity: every site's
          teams × rate per team multiplied by the factor.
        </p>
        <div className="grid gap-4 md:grid-cols-2">
          <SensitivityChart title="Balking against the private cost" xLabel="private cost factor" points={curve(sensitivity.privateCost)} series={CURVE_SERIES} />
          <SensitivityChart title="Balking against added capacity" xLabel="capacity factor" points={curve(sensitivity.capacity)} series={CURVE_SERIES} />
        </div>
        <table className="text-sm" aria-label="Sensitivity values">
          <thead className="text-left">
            <tr>
              <th className="px-2 py-1">Factor</th>
              <th className="px-2 py-1 num">Private cost: choice</th>
              <th className="px-2 py-1 num">Private cost: hub</th>
              <th className="px-2 py-1 num">Capacity: choice</th>
              <th className="px-2 py-1 num">Capacity: hub</th>
            </tr>
          </thead>
          <tbody>
            {sensitivity.privateCost.map((point, index) => {
              const capacity = sensitivity.capacity[index];
              return (
                <tr key={point.factor} className="border-t border-rule">
                  <td className="px-2 py-1">
                    ×{point.factor}
                    {capacity && capacity.factor !== point.factor ? ` / ×${capacity.factor}` : ""}
                  </td>
                  <td className="px-2 py-1 num">{fmt(point.balkedPerWeek.choice)}</td>
                  <td className="px-2 py-1 num">{fmt(point.balkedPerWeek.optimum)}</td>
                  <td className="px-2 py-1 num">{fmt(capacity?.balkedPerWeek.choice)}</td>
                  <td className="px-2 py-1 num">{fmt(capacity?.balkedPerWeek.optimum)}</td>
                </tr>
              );
            })}
          </tbody>
        </table>
      </section>

      <section aria-label="Balking by practice" className="space-y-2">
        <h2 className="text-lg font-semibold">By practice{query.line ? ` (${query.line})` : " (all lines)"}</h2>
        <DataTable label="Balking by practice" rows={outlook.practices} columns={PRACTICE_COLUMNS} rowId={(row) => row.sourceId} />
      </section>

      <RunContext context={view.context} />
    </div>
  );
}

function RankedList({ title, rows, value }: { title: string; rows: PracticeBalking[]; value: (row: PracticeBalking) => string }) {
  return (
    <section className="rounded border border-rule bg-white p-4 text-sm" aria-label={title}>
      <h2 className="mb-2 font-semibold">{title}</h2>
      {rows.length === 0 ? (
        <p className="text-ink-soft">None.</p>
      ) : (
        <ol className="list-decimal space-y-1 pl-5">
          {rows.map((row) => (
            <li key={row.sourceId}>
              {row.name ?? row.sourceId} <span className="text-xs text-ink-soft">{row.sourceId}{row.deprivationDecile !== null ? ` · decile ${row.deprivationDecile}` : ""}</span> —{" "}
              <span className="num">{value(row)}</span>
            </li>
          ))}
        </ol>
      )}
    </section>
  );
}

export function meta() {
  return [{ title: "Balking outlook · Equilibra" }];
}
