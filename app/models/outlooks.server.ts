/**
 * The outlooks a run offers the people around the planner — site inflow (provider managers),
 * balking and its sensitivity (patient-access officers) — and the capacity advisor (planners),
 * each computed by the engine from the run's own input snapshot and result, and scoped to what
 * the viewer may see (`publishing.server.ts`).
 *
 * Re-solving work (sensitivity curves, the advisor) takes from a fraction of a second to a few
 * seconds on a region of the demo's size, so it runs on the solve pool's worker threads; runs never
 * change, so results are kept in a small in-memory cache keyed by the run (or the scenario's last
 * change) and the options.
 */
import type { CapacityAdvice, CapacityAdvisorOptions } from "~/engine/capacity-advisor";
import { balkingOutlook, type BalkingOutlook, type BalkingOutlookOptions } from "~/engine/balking-outlook";
import { parseScenario, type Scenario } from "~/engine/scenario";
import type { BalkingSensitivity, SensitivityOptions } from "~/engine/sensitivity";
import { siteOutlook, type SiteOutlook, type SiteOutlookOptions } from "~/engine/site-outlook";
import type { Membership } from "./organisations.server";
import { canSeeSite, defaultRunId, getVisibleRun, listVisibleRuns, siteScope, type VisibleRunDetail } from "./publishing.server";
import { solvePool } from "./solve-pool.server";

export interface OutlookRun {
  run: VisibleRunDetail;
  scenario: Scenario;
  dataDate: string | null;
}

type Viewer = { organisationId: number; membership: Pick<Membership, "role" | "siteCodes"> };

/**
 * The run named (or the default one) with its scenario parsed; null when the viewer may not open
 * it. `periods: false` leaves the period-by-period results (most of a run's size) unread.
 */
export async function openOutlookRun(viewer: Viewer, runId: number | null, options: { periods?: boolean } = {}): Promise<OutlookRun | null> {
  const id = runId ?? (await defaultRunId(viewer));
  if (id === null) return null;
  const run = await getVisibleRun(viewer, id, options);
  if (!run) return null;
  return { run, scenario: parseScenario(run.input), dataDate: run.input.dataDate ?? null };
}

/** The sites of the run the viewer may see, in the scenario's order. */
export function visibleSites(opened: OutlookRun, membership: Pick<Membership, "role" | "siteCodes">) {
  return opened.scenario.providers
    .filter((provider) => canSeeSite(membership, provider.id))
    .map((provider) => ({ id: provider.id, name: provider.name ?? provider.id, sector: provider.sector, lines: Object.keys(provider.lines) }));
}

/**
 * The site outlook limited to the viewer's sites (and to `siteId` when given). Null when `siteId`
 * is outside the viewer's scope or not in the run — the caller answers 404 either way.
 */
export function siteOutlookFor(
  opened: OutlookRun,
  membership: Pick<Membership, "role" | "siteCodes">,
  options: Omit<SiteOutlookOptions, "siteIds"> & { siteId?: string },
): SiteOutlook | null {
  const { siteId, ...rest } = options;
  if (siteId !== undefined && (!canSeeSite(membership, siteId) || !opened.scenario.providers.some((provider) => provider.id === siteId))) return null;
  const scope = siteScope(membership);
  const siteIds = siteId !== undefined ? [siteId] : (scope ?? undefined);
  return siteOutlook(opened.scenario, opened.run.result, { ...rest, siteIds });
}

export function balkingOutlookFor(opened: OutlookRun, options: BalkingOutlookOptions): BalkingOutlook {
  return balkingOutlook(opened.scenario, opened.run.result, options);
}

const CACHE_LIMIT = 24;
const cache = new Map<string, Promise<unknown>>();

/**
 * The answer for `key`, computed once. The promise itself is kept, so requests arriving while the
 * first is still solving share its answer; a failure (a busy server, say) is forgotten, not cached.
 */
function remembered<T>(key: string, compute: () => Promise<T>): Promise<T> {
  const known = cache.get(key) as Promise<T> | undefined;
  if (known) {
    // Re-insert: Map keeps insertion order, so the oldest entry is the least recently used.
    cache.delete(key);
    cache.set(key, known);
    return known;
  }
  const value = compute();
  cache.set(key, value);
  value.catch(() => {
    if (cache.get(key) === value) cache.delete(key);
  });
  while (cache.size > CACHE_LIMIT) cache.delete(cache.keys().next().value as string);
  return value;
}

/** Solved on a worker thread (`solve-pool.server.ts`); rejects with `SolvePoolError` when the server is busy. */
export function sensitivityFor(opened: OutlookRun, options: SensitivityOptions): Promise<BalkingSensitivity> {
  return remembered(`sensitivity:${opened.run.id}:${JSON.stringify(options)}`, () => solvePool().run("sensitivity", { document: opened.run.input, options }));
}

/**
 * The advisor on a scenario document (a scenario as stored now, or a run's snapshot), keyed by
 * `version`, solved on a worker thread; rejects with the engine's RangeError or NoSteadyStateError
 * for options or a model it cannot take, and with `SolvePoolError` when the server is busy.
 */
export function capacityAdviceFor(document: unknown, version: string, options: CapacityAdvisorOptions): Promise<CapacityAdvice> {
  return remembered(`advice:${version}:${JSON.stringify(options)}`, () => solvePool().run("advice", { document, options }));
}

/** What a page shows beside the figures (see `app/components/run-context.tsx`), as plain JSON. */
export function runContextOf(opened: OutlookRun) {
  const { run } = opened;
  return {
    scenarioName: run.scenarioName,
    runId: run.id,
    runLabel: run.label,
    ranAt: run.createdAt.toISOString(),
    publishedAt: run.publishedAt?.toISOString() ?? null,
    publishedByName: run.publishedByName,
    dataDate: opened.dataDate,
    assumptions: run.result.assumptions,
  };
}

/** The visible runs for a run picker, as plain JSON. */
export function runChoices(runs: Awaited<ReturnType<typeof listVisibleRuns>>) {
  return runs.map((run) => ({
    id: run.id,
    label: `${run.scenarioName} · ${run.label ?? `run ${run.id}`} · ${run.createdAt.toISOString().slice(0, 10)}${run.publishedAt ? " · published" : ""}`,
  }));
}
