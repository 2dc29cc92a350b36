/**
 * A stored run as the workspace page shows it: its input snapshot and its stationary result
 * slimmed to what the page reads (`slimResult`), the result as JSON text (see `json-text.ts`). A run
 * never changes once stored, so this view is kept in memory per run id and reopening a run reads
 * none of its result (hundreds of kilobytes of JSON) from the database again. The cache is per
 * process and bounded; a deleted run's entry is never reached, because callers come here only with
 * a run from the member's own listing.
 */
import { toJsonText, type JsonText } from "./json-text";
import { getRun, type RunSummary, type WholeRunAccess } from "./runs.server";
import { slimResult, type ResultDocument } from "./result-document";
import type { ScenarioDocument } from "./scenarios.server";

export interface WorkspaceRun {
  input: ScenarioDocument;
  result: JsonText<ResultDocument>;
  priceOfAnarchy: number | null;
}

/** About 0.3 MB each for the demo region: a few dozen recently opened runs stay in memory. */
const CACHE_LIMIT = 32;
const cache = new Map<number, WorkspaceRun>();

/**
 * The input and slimmed result of `run`, an entry of `listRuns` for this organisation and access
 * (so the member may open it); null when it has gone since it was listed.
 */
export async function getWorkspaceRun(organisationId: number, run: Pick<RunSummary, "id">, access: WholeRunAccess): Promise<WorkspaceRun | null> {
  const cached = cache.get(run.id);
  if (cached) {
    // Re-insert: a Map keeps insertion order, so the first key is the least recently used.
    cache.delete(run.id);
    cache.set(run.id, cached);
    return cached;
  }
  // The page compares rules on the stationary result; the period-by-period outlook is another screen.
  const stored = await getRun(organisationId, run.id, { periods: false, access });
  if (!stored) return null;
  const result = slimResult(stored.result as unknown as ResultDocument);
  const view: WorkspaceRun = { input: stored.input, result: toJsonText(result), priceOfAnarchy: result.priceOfAnarchy };
  cache.set(run.id, view);
  while (cache.size > CACHE_LIMIT) cache.delete(cache.keys().next().value as number);
  return view;
}
