/**
 * The scenario workspace: the map, the input tables, import and export, the assumptions, runs
 * (stored on the server, reopened from the history), what-ifs solved in the browser, and the rules
 * compared side by side with the assumptions, data date and cautions beside them.
 *
 * Everyone in the organisation reads; planners and administrators edit. Every change goes through
 * the JSON API (`/api/v1/o/:org/…`) with fetchers, so the page and outside callers share one path.
 */
import { memo, useCallback, useDeferredValue, useEffect, useMemo, useState } from "react";
import { Link, useFetcher, useNavigate } from "react-router";
import type { FeatureCollection } from "geojson";
import { EDITOR_ROLES } from "~/auth/api-guards.server";
import { requireMembership } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { getDb } from "~/db/client.server";
import { PlanningCautions } from "~/components/planning-cautions";
import { RegionMap, type MapFlow, type MapPractice, type MapSite, type PracticeShading } from "~/components/region-map";
import { CSV_FILE_NAMES } from "~/models/csv-import";
import { getRegionMap } from "~/models/region-maps.server";
import { RULE_LABELS, rulesIn, type ResultDocument } from "~/models/result-document";
import { wholeRunAccess } from "~/models/publishing.server";
import { listRuns } from "~/models/runs.server";
import { fromJsonText, sameJson, toJsonText } from "~/models/json-text";
import { getWorkspaceRun } from "~/models/workspace-run.server";
import { addSite, moveSite, practiceDemand, removeSite, type ScenarioDoc } from "~/models/scenario-document";
import { exportScenario, getScenario } from "~/models/scenarios.server";
import { AssumptionsList } from "./scenario-workspace/assumptions";
import { RuleComparison } from "./scenario-workspace/comparison";
import { ImportPanel } from "./scenario-workspace/import-panel";
import { CapacitiesTable, PracticesTable, ServiceLinesTable, SitesTable } from "./scenario-workspace/input-tables";
import { WhatIfPanel } from "./scenario-workspace/what-if-panel";
import type { Route } from "./+types/o.$org.scenarios.$id";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireMembership(request, params.org);
  const id = /^\d+$/.test(params.id) ? Number(params.id) : Number.NaN;
  const db = await getDb();
  const access = wholeRunAccess(membership.role);
  const scenario = await getScenario(db, organisation.id, id);
  if (!scenario) throw notFound();
  const [document, runs, region] = await Promise.all([exportScenario(db, organisation.id, id), listRuns(organisation.id, id, access), getRegionMap(db, organisation.id)]);
  const runParam = new URL(request.url).searchParams.get("run");
  // The listing holds only this scenario's runs that the member may open.
  const wanted = runParam && /^\d+$/.test(runParam) ? Number(runParam) : null;
  const run = runParam ? runs.find((entry) => entry.id === wanted) : runs[0];
  if (runParam && !run) throw notFound("There is no such run of this scenario.");
  const opened = run ? await getWorkspaceRun(organisation.id, run, access) : null;
  if (run && !opened) throw notFound("There is no such run of this scenario.");
  return {
    organisation: { slug: organisation.slug, name: organisation.name },
    canEdit: EDITOR_ROLES.includes(membership.role),
    scenario: {
      id: scenario.id,
      name: scenario.name,
      description: scenario.description,
      dataDate: scenario.dataDate,
      parentId: scenario.parentId,
      archived: scenario.archivedAt !== null,
      updatedAt: scenario.updatedAt.toISOString(),
    },
    document: document as ScenarioDoc,
    runs: runs.map((entry) => ({ ...entry, createdAt: entry.createdAt.toISOString() })),
    run: run && opened
      ? {
          id: run.id,
          label: run.label,
          createdAt: run.createdAt.toISOString(),
          createdByLogin: run.createdByLogin,
          converged: run.converged,
          durationMs: run.durationMs,
          // Most runs are of the scenario as it still is: the page then reuses `document`.
          input: sameJson(opened.input, document) ? null : (opened.input as ScenarioDoc),
          result: opened.result,
          priceOfAnarchy: opened.priceOfAnarchy,
        }
      : null,
    // The map draws it only after hydration; as text it costs the page one string.
    region: region ? toJsonText(region as FeatureCollection) : null,
  };
}

type Tab = "practices" | "sites" | "capacities" | "lines" | "import";

// Re-rendered only when their own props change (see the handlers in `Workspace`).
const MemoRegionMap = memo(RegionMap);
const MemoPracticesTable = memo(PracticesTable);
const MemoSitesTable = memo(SitesTable);
const MemoCapacitiesTable = memo(CapacitiesTable);
const MemoServiceLinesTable = memo(ServiceLinesTable);
const MemoImportPanel = memo(ImportPanel);
type Shading = "balking" | "wait";

interface ApiReply {
  error?: { message: string; issues?: { path: string; message: string }[] };
  run?: { id: number };
  url?: string;
}

export default function Workspace({ loaderData }: Route.ComponentProps) {
  const { organisation, canEdit, scenario, document, runs, run } = loaderData;
  const runResult = useMemo(() => (run ? fromJsonText(run.result) : null), [run?.result]);
  const region = useMemo(() => (loaderData.region ? fromJsonText(loaderData.region) : null), [loaderData.region]);
  const api = `/api/v1/o/${organisation.slug}/scenarios/${scenario.id}`;
  const navigate = useNavigate();
  const saver = useFetcher<ApiReply>();
  const runner = useFetcher<ApiReply>();
  const [pending, setPending] = useState<ScenarioDoc | null>(null);
  const doc = pending ?? document;
  const [tab, setTab] = useState<Tab>("practices");
  const [lineId, setLineId] = useState<string | null>(doc.serviceLines[0]?.id ?? null);
  const [rule, setRule] = useState("choice");
  const [shading, setShading] = useState<Shading>("balking");
  const [whatIf, setWhatIf] = useState<{ result: ResultDocument; elapsedMs?: number } | null>(null);
  const [withPeriods, setWithPeriods] = useState(false);

  // The stored document wins once the save has come back (or failed).
  useEffect(() => {
    if (saver.state === "idle") setPending(null);
  }, [saver.state, document]);
  useEffect(() => {
    if (runner.state === "idle" && runner.data?.run) navigate(`?run=${runner.data.run.id}`, { replace: false });
  }, [runner.state, runner.data, navigate]);

  // Stable handlers and memoised props: a what-if answer re-renders the comparison and the map,
  // not the input tables (thousands of cells) that did not change.
  const submitSave = saver.submit;
  const save = useCallback(
    (next: ScenarioDoc) => {
      setPending(next);
      submitSave(next as never, { method: "put", action: api, encType: "application/json" });
    },
    [submitSave, api],
  );
  const removeSiteAndSave = useCallback((siteId: string) => save(removeSite(doc, siteId)), [save, doc]);
  const moveSiteAndSave = useCallback((siteId: string, lat: number, lon: number) => save(moveSite(doc, siteId, lat, lon)), [save, doc]);
  const addSiteAndSave = useCallback((lat: number, lon: number) => save(addSite(doc, { lat, lon }).doc), [save, doc]);

  const showWhatIf = useCallback((result: ResultDocument | null, elapsedMs?: number) => setWhatIf(result ? { result, elapsedMs } : null), []);
  const shown: ResultDocument | null = whatIf?.result ?? runResult;
  const availableRules = shown ? rulesIn(shown) : [];
  const activeRule = availableRules.includes(rule) ? rule : (availableRules[0] ?? "choice");
  const selectedLines = useMemo(() => (lineId ? [lineId] : doc.serviceLines.map((line) => line.id)), [lineId, doc.serviceLines]);

  // Like the comparison's charts, the map follows a new result in a second, interruptible render.
  const mapResult = useDeferredValue(shown);
  const mapData = useMemo(() => buildMapData(doc, mapResult, activeRule, selectedLines, shading), [doc, mapResult, activeRule, selectedLines, shading]);
  const siteNames = useMemo(() => Object.fromEntries(doc.providers.map((site) => [site.id, site.name ?? site.id])), [doc.providers]);
  const saveError = saver.state === "idle" ? saver.data?.error : undefined;
  const runError = runner.state === "idle" ? runner.data?.error : undefined;

  return (
    <div className="space-y-8">
      <header className="flex flex-wrap items-start justify-between gap-4">
        <div>
          <p className="text-sm">
            <Link to={`/o/${organisation.slug}/scenarios`} className="text-accent underline">
              Scenarios
            </Link>
          </p>
          <h1 className="text-2xl font-semibold">{scenario.name}</h1>
          <p className="text-sm text-ink-soft">
            Data date {scenario.dataDate ?? "not stated"} · {doc.sources.length} practices · {doc.providers.length} sites · {doc.serviceLines.length} service lines
            {scenario.parentId && (
              <>
                {" "}
                · what-if copy of{" "}
                <Link className="underline" to={`/o/${organisation.slug}/scenarios/${scenario.parentId}`}>
                  scenario #{scenario.parentId}
                </Link>
              </>
            )}
            {scenario.archived && " · archived"}
          </p>
          {scenario.description && <p className="mt-1 max-w-3xl text-sm">{scenario.description}</p>}
        </div>
        <div className="flex flex-wrap items-center gap-2 text-sm">
          {canEdit && (
            <Link to="settings" className="rounded border border-rule px-3 py-1 hover:bg-accent-soft">
              Settings and assumptions
            </Link>
          )}
          <details className="relative">
            <summary className="cursor-pointer rounded border border-rule px-3 py-1 hover:bg-accent-soft">Export inputs</summary>
            <ul className="absolute right-0 z-10 mt-1 w-64 rounded border border-rule bg-white p-2 shadow">
              <li>
                <a className="underline" href={`${api}/export?format=json`} download>
                  Scenario JSON (exchange format)
                </a>
              </li>
              {(["practices", "sites", "capacities", "serviceLines", "travelKm"] as const).map((kind) => (
                <li key={kind}>
                  <a className="underline" href={`${api}/export?format=csv&file=${CSV_FILE_NAMES[kind]}`} download>
                    {CSV_FILE_NAMES[kind]}
                  </a>
                </li>
              ))}
            </ul>
          </details>
        </div>
      </header>

      {saver.state !== "idle" && <p role="status" className="text-sm text-ink-soft">Saving…</p>}
      {saveError && (
        <div role="alert" className="rounded border border-bad bg-warn-soft px-3 py-2 text-sm">
          <p className="font-semibold text-bad">{saveError.message} The change was not saved.</p>
          <ul className="list-disc pl-5">
            {saveError.issues?.map((issue) => (
              <li key={`${issue.path}${issue.message}`}>
                <code>{issue.path}</code>: {issue.message}
              </li>
            ))}
          </ul>
        </div>
      )}

      <section aria-labelledby="runs-heading" className="flex flex-wrap items-center gap-3 rounded border border-rule bg-white px-4 py-3">
        <h2 id="runs-heading" className="text-base font-semibold">
          Runs
        </h2>
        {canEdit && (
          <button
            type="button"
            disabled={runner.state !== "idle" || saver.state !== "idle"}
            onClick={() => runner.submit({ label: null, periods: withPeriods }, { method: "post", action: `${api}/runs`, encType: "application/json" })}
            className="rounded bg-accent px-4 py-1.5 text-sm text-white disabled:opacity-50"
          >
            {runner.state !== "idle" ? "Running…" : "Run all rules"}
          </button>
        )}
        {canEdit && doc.periods && doc.periods.length > 0 && (
          <label className="text-sm">
            <input type="checkbox" checked={withPeriods} onChange={(event) => setWithPeriods(event.target.checked)} className="mr-1" />
            also solve the {doc.periods.length} periods of the year (slower)
          </label>
        )}
        {runs.length > 0 ? (
          <label className="text-sm">
            Showing
            <select
              aria-label="Run to show"
              value={run?.id ?? ""}
              onChange={(event) => navigate(`?run=${event.target.value}`)}
              className="ml-2 rounded border border-rule px-2 py-1"
            >
              {runs.map((entry) => (
                <option key={entry.id} value={entry.id}>
                  Run {entry.id}
                  {entry.label ? ` “${entry.label}”` : ""} — {new Date(entry.createdAt).toLocaleString("en-GB")} by {entry.createdByLogin ?? "someone"}
                  {entry.converged ? "" : " (not converged)"}
                </option>
              ))}
            </select>
          </label>
        ) : (
          <span className="text-sm text-ink-soft">No runs yet.{canEdit ? " Run the scenario to compare the rules." : ""}</span>
        )}
        {run && (
          <span className="text-xs text-ink-soft" data-testid="run-summary">
            Run {run.id}: {run.converged ? "every rule converged" : "some rules did not converge"}, solved in {run.durationMs.toFixed(0)} ms. Price of anarchy{" "}
            {typeof run.priceOfAnarchy === "number" ? run.priceOfAnarchy.toFixed(3) : "–"}.{" "}
            <a className="underline" href={`/api/v1/o/${organisation.slug}/runs/${run.id}?format=csv&file=results-sites.csv`} download>
              Results by site (CSV)
            </a>{" "}
            ·{" "}
            <a className="underline" href={`/api/v1/o/${organisation.slug}/runs/${run.id}?format=csv&file=results-practices.csv`} download>
              by practice (CSV)
            </a>
          </span>
        )}
        {runError && (
          <p role="alert" className="w-full text-sm text-bad">
            {runError.message}
          </p>
        )}
      </section>

      <section aria-label="Map and assumptions" className="grid gap-6 lg:grid-cols-[1fr_20rem]">
        <div className="min-w-0 space-y-2">
          <div className="flex flex-wrap items-center gap-3 text-sm">
            <label>
              Service line
              <select aria-label="Service line" value={lineId ?? ""} onChange={(event) => setLineId(event.target.value || null)} className="ml-2 rounded border border-rule px-2 py-1">
                {doc.serviceLines.map((line) => (
                  <option key={line.id} value={line.id}>
                    {line.name ?? line.id}
                  </option>
                ))}
                <option value="">All lines</option>
              </select>
            </label>
            {shown && (
              <>
                <label>
                  Rule
                  <select aria-label="Rule shown on the map" value={activeRule} onChange={(event) => setRule(event.target.value)} className="ml-2 rounded border border-rule px-2 py-1">
                    {availableRules.map((key) => (
                      <option key={key} value={key}>
                        {RULE_LABELS[key] ?? key}
                      </option>
                    ))}
                  </select>
                </label>
                <label>
                  Shade practices by
                  <select aria-label="Shade practices by" value={shading} onChange={(event) => setShading(event.target.value as Shading)} className="ml-2 rounded border border-rule px-2 py-1">
                    <option value="balking">share lost to private care</option>
                    <option value="wait">mean wait</option>
                  </select>
                </label>
              </>
            )}
            {whatIf && <span className="rounded bg-warn-soft px-2 py-0.5 text-xs font-semibold text-warn">showing the what-if, not saved</span>}
          </div>
          <MemoRegionMap
            region={region}
            practices={mapData.practices}
            sites={mapData.sites}
            flows={mapData.flows}
            shading={mapData.shading}
            editable={canEdit}
            onMoveSite={canEdit ? moveSiteAndSave : undefined}
            onAddSite={canEdit ? addSiteAndSave : undefined}
          />
        </div>
        <aside aria-labelledby="assumptions-heading" className="rounded border border-rule bg-white p-4">
          <h2 id="assumptions-heading" className="mb-2 text-base font-semibold">
            Assumptions
          </h2>
          <AssumptionsList doc={doc} />
          {canEdit && (
            <p className="mt-3 text-sm">
              <Link to="settings" className="text-accent underline">
                Change the assumptions
              </Link>
            </p>
          )}
        </aside>
      </section>

      <section aria-labelledby="inputs-heading" className="space-y-3">
        <h2 id="inputs-heading" className="text-lg font-semibold">
          Inputs
        </h2>
        <div role="tablist" aria-label="Inputs" className="flex flex-wrap gap-1 border-b border-rule">
          {(
            [
              ["practices", "Practices"],
              ["sites", "Sites"],
              ["capacities", "Capacities"],
              ["lines", "Service lines"],
              ...(canEdit ? [["import", "Import"] as const] : []),
            ] as const
          ).map(([key, label]) => (
            <button
              key={key}
              type="button"
              role="tab"
              aria-selected={tab === key}
              onClick={() => setTab(key)}
              className={`rounded-t px-3 py-1.5 text-sm ${tab === key ? "border border-b-white border-rule bg-white font-semibold" : "text-ink-soft hover:text-ink"}`}
            >
              {label}
            </button>
          ))}
        </div>
        <div role="tabpanel">
          {tab === "practices" && <MemoPracticesTable doc={doc} editable={canEdit} onChange={save} />}
          {tab === "sites" && <MemoSitesTable doc={doc} editable={canEdit} onChange={save} onRemove={removeSiteAndSave} />}
          {tab === "capacities" && <MemoCapacitiesTable doc={doc} editable={canEdit} onChange={save} />}
          {tab === "lines" && <MemoServiceLinesTable doc={doc} editable={canEdit} onChange={save} />}
          {tab === "import" && canEdit && <MemoImportPanel doc={document} importUrl={`${api}/import`} />}
        </div>
      </section>

      <section aria-labelledby="what-if-heading" className="space-y-3 rounded border border-rule bg-white p-4">
        <h2 id="what-if-heading" className="text-lg font-semibold">
          What-ifs
        </h2>
        <WhatIfPanel
          doc={document}
          scenarioId={scenario.id}
          createUrl={`/api/v1/o/${organisation.slug}/scenarios`}
          canSave={canEdit}
          onResult={showWhatIf}
        />
      </section>

      <section aria-labelledby="comparison-heading" className="space-y-3">
        <h2 id="comparison-heading" className="text-lg font-semibold">
          Rules compared
        </h2>
        {shown ? (
          <RuleComparison
            result={shown}
            label={whatIf ? "the what-if (not saved)" : run ? `run ${run.id} (${new Date(run.createdAt).toLocaleString("en-GB")})` : ""}
            lineIds={selectedLines}
            doc={whatIf || !run ? doc : (run.input ?? document)}
            siteNames={siteNames}
          />
        ) : (
          <div className="space-y-3">
            <p className="text-ink-soft">No results yet. {canEdit ? "Run the scenario, or move a what-if slider." : "A planner can run the scenario."}</p>
            <PlanningCautions />
          </div>
        )}
      </section>
    </div>
  );
}

/** Undefined = no result for the site; an overloaded site (no finite utilisation) shows as the warning colour. */
function siteUtilisation(utilisation: Map<string, number | null>, id: string): number | undefined {
  if (!utilisation.has(id)) return undefined;
  return utilisation.get(id) ?? Infinity;
}

function buildMapData(doc: ScenarioDoc, result: ResultDocument | null, rule: string, lineIds: string[], shading: Shading) {
  const balked = new Map<string, number>();
  const demand = new Map<string, number>();
  const waitSum = new Map<string, number>();
  const served = new Map<string, number>();
  const flowTotals = new Map<string, number>();
  const utilisation = new Map<string, number | null>();
  if (result) {
    for (const lineId of lineIds) {
      const ruleResult = result.lines[lineId]?.rules[rule];
      if (!ruleResult) continue;
      for (const source of ruleResult.sources) {
        const sourceServed = Object.values(source.flows).reduce((total, flow) => total + flow, 0);
        balked.set(source.id, (balked.get(source.id) ?? 0) + source.balked);
        demand.set(source.id, (demand.get(source.id) ?? 0) + (source.demand ?? sourceServed + source.balked));
        if (source.meanWaitWeeks !== null && sourceServed > 0) {
          waitSum.set(source.id, (waitSum.get(source.id) ?? 0) + source.meanWaitWeeks * sourceServed);
          served.set(source.id, (served.get(source.id) ?? 0) + sourceServed);
        }
        for (const [siteId, flow] of Object.entries(source.flows)) flowTotals.set(`${source.id}\u0000${siteId}`, (flowTotals.get(`${source.id}\u0000${siteId}`) ?? 0) + flow);
      }
      for (const provider of ruleResult.providers) {
        const previous = utilisation.get(provider.id);
        // Over several lines a site is shown by its busiest line.
        utilisation.set(provider.id, provider.utilisation === null || previous === null ? null : Math.max(previous ?? 0, provider.utilisation));
      }
    }
  }
  const shadeOf = (id: string): number | null => {
    if (!result) return null;
    if (shading === "balking") {
      const total = demand.get(id) ?? 0;
      return total > 0 ? (balked.get(id) ?? 0) / total : null;
    }
    const weight = served.get(id) ?? 0;
    return weight > 0 ? (waitSum.get(id) ?? 0) / weight : null;
  };
  const practices: MapPractice[] = doc.sources.map((source) => ({
    id: source.id,
    name: source.name,
    lat: source.lat,
    lon: source.lon,
    demand: lineIds.length === 1 ? practiceDemand(source, lineIds[0]) : lineIds.reduce((total, id) => total + practiceDemand(source, id), 0),
    shade: shadeOf(source.id),
  }));
  const sites: MapSite[] = doc.providers.map((site) => ({ id: site.id, name: site.name, lat: site.lat, lon: site.lon, sector: site.sector, utilisation: siteUtilisation(utilisation, site.id) }));
  const flows: MapFlow[] = [...flowTotals.entries()].map(([key, value]) => {
    const [sourceId, siteId] = key.split("\u0000");
    return { sourceId, siteId, value };
  });
  const shades = practices.map((practice) => practice.shade).filter((value): value is number => typeof value === "number");
  const shadingLegend: PracticeShading | null =
    result && shades.length > 0
      ? shading === "balking"
        ? { label: "Share lost to private care", unit: "", domain: [0, Math.max(0.01, ...shades)] }
        : { label: "Mean wait", unit: "weeks", domain: [Math.min(...shades), Math.max(...shades)] }
      : null;
  return { practices, sites, flows, shading: shadingLegend };
}

export function meta({ data }: Route.MetaArgs) {
  return [{ title: `${data?.scenario.name ?? "Scenario"} · Equilibra` }];
}
