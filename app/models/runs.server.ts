/**
 * Runs: a scenario solved on the server and kept — a snapshot of its inputs (the exchange-format
 * document as it was), the engine's result with its diagnostics (converged, iterations, relative
 * gap per rule and line), who ran it and when. A run never changes after it is stored, so any run
 * can be reopened later and read exactly as it was, whatever happened to the scenario since.
 *
 * The engine runs outside any transaction (PGlite has one connection, and a transaction would hold
 * it for the whole solve) and off the event loop, on the solve pool's worker threads.
 */
import { and, desc, eq, isNotNull, sql, type SQL } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { runs, users } from "~/db/schema";
import type { ScenarioResult } from "~/engine/solve-scenario";
import { recordAudit } from "./audit.server";
import { exportScenario, type ScenarioDocument } from "./scenarios.server";
import type { SolveChoices, SolveJsonOutcome, SolveOutcome } from "./solve-document";
import { solvePool, SolvePoolError } from "./solve-pool.server";

export { solveDocument, type SolveChoices, type SolveJsonOutcome, type SolveOutcome } from "./solve-document";

export type RunRecord = typeof runs.$inferSelect;

/**
 * Which whole runs (every site and practice) a member may open: planners, administrators and
 * readers all of them; access officers only published runs; provider managers none — they read
 * their own sites' figures through the outlook pages (app/models/publishing.server.ts).
 */
export type WholeRunAccess = "all" | "published" | "none";

function accessCondition(access: WholeRunAccess): SQL | undefined {
  if (access === "none") return sql`false`;
  return access === "published" ? isNotNull(runs.publishedAt) : undefined;
}

/** A run without its (large) input and result, for lists. */
export interface RunSummary {
  id: number;
  scenarioId: number;
  label: string | null;
  converged: boolean;
  durationMs: number;
  createdBy: number | null;
  /** The login of who ran it (null when that person has since been deleted). */
  createdByLogin: string | null;
  createdAt: Date;
  priceOfAnarchy: number | null;
}

/** Why the pool gave no answer: every worker busy and the queue full (503), too slow (504), a worker died (500). */
export type PoolRefusal = { ok: false; status: 500 | 503 | 504; error: string; issues: { path: string; message: string }[]; retryAfterSeconds?: number };

/** A solve on the server's worker pool: what `solveDocument` answers, or the pool's refusal. */
export type PooledSolveOutcome = SolveOutcome | PoolRefusal;

function refusalOf(error: unknown): PoolRefusal {
  if (error instanceof SolvePoolError) return { ok: false, status: error.status, error: error.message, issues: [], retryAfterSeconds: error.retryAfterSeconds };
  throw error;
}

/**
 * Validates and solves an exchange-format document on a worker thread, so the web server keeps
 * answering other requests meanwhile; never throws for bad input or a busy server.
 */
export async function solveDocumentInPool(input: unknown, choices: SolveChoices = {}): Promise<PooledSolveOutcome> {
  return solvePool()
    .run("solve", { input, choices: { rules: choices.rules, periods: choices.periods } })
    .catch(refusalOf);
}

/** `solveDocumentInPool` with the result as JSON text, for answering over HTTP without re-serialising. */
export async function solveDocumentToJsonInPool(input: unknown, choices: SolveChoices = {}): Promise<SolveJsonOutcome | PoolRefusal> {
  return solvePool()
    .run("solveToJson", { input, choices: { rules: choices.rules, periods: choices.periods } })
    .catch(refusalOf);
}

function summary(
  row: Pick<RunRecord, "id" | "scenarioId" | "label" | "converged" | "durationMs" | "createdBy" | "createdAt">,
  priceOfAnarchy: unknown,
  createdByLogin: string | null,
): RunSummary {
  return {
    id: row.id,
    scenarioId: row.scenarioId,
    label: row.label,
    converged: row.converged,
    durationMs: row.durationMs,
    createdBy: row.createdBy,
    createdByLogin,
    createdAt: row.createdAt,
    priceOfAnarchy: typeof priceOfAnarchy === "number" ? priceOfAnarchy : null,
  };
}

/** Every rule converged on every line (and period). */
function allConverged(result: ScenarioResult): boolean {
  const lines = [result.lines, ...(result.periods ?? []).map((period) => period.lines)];
  return lines.every((byLine) => Object.values(byLine).every((line) => Object.values(line.rules).every((rule) => rule?.converged !== false)));
}

/**
 * Solves the scenario as stored now and keeps the run. Null when the scenario is not in this
 * organisation; `{ ok: false }` (nothing stored) when the model has no answer.
 */
export async function createRun(
  organisationId: number,
  scenarioId: number,
  options: { userId: number | null; label?: string | null } & SolveChoices,
): Promise<null | { ok: true; run: RunSummary } | Extract<PooledSolveOutcome, { ok: false }>> {
  const db = await getDb();
  const document = await exportScenario(db, organisationId, scenarioId);
  if (!document) return null;
  const outcome = await solveDocumentInPool(document, { rules: options.rules, periods: options.periods });
  if (!outcome.ok) return outcome;
  const [row] = await db
    .insert(runs)
    .values({
      organisationId,
      scenarioId,
      label: options.label?.trim() || null,
      input: document as unknown as Record<string, unknown>,
      result: outcome.result as unknown as Record<string, unknown>,
      converged: allConverged(outcome.result),
      durationMs: outcome.durationMs,
      createdBy: options.userId,
    })
    .returning();
  await recordAudit(organisationId, options.userId, "run.created", `scenario:${scenarioId}`, { runId: row.id, durationMs: Math.round(outcome.durationMs) });
  const [who] = options.userId === null ? [] : await db.select({ login: users.login }).from(users).where(eq(users.id, options.userId));
  return { ok: true, run: summary(row, outcome.result.priceOfAnarchy, who?.login ?? null) };
}

/** The columns behind a `RunSummary` (without its creator's login). */
const summaryColumns = {
  id: runs.id,
  scenarioId: runs.scenarioId,
  label: runs.label,
  converged: runs.converged,
  durationMs: runs.durationMs,
  createdBy: runs.createdBy,
  createdAt: runs.createdAt,
};

/** A scenario's runs, newest first, without their payloads. */
export async function listRuns(organisationId: number, scenarioId: number, access: WholeRunAccess = "all"): Promise<RunSummary[]> {
  const db = await getDb();
  const rows = await db
    .select({
      ...summaryColumns,
      createdByLogin: users.login,
      // Read inside the database: results run to hundreds of kilobytes.
      priceOfAnarchy: sql<number | null>`(${runs.result} ->> 'priceOfAnarchy')::float8`,
    })
    .from(runs)
    .leftJoin(users, eq(users.id, runs.createdBy))
    .where(and(eq(runs.organisationId, organisationId), eq(runs.scenarioId, scenarioId), accessCondition(access)))
    .orderBy(desc(runs.createdAt), desc(runs.id));
  return rows.map((row) => summary(row, row.priceOfAnarchy, row.createdByLogin));
}

export interface RunDetail extends RunSummary {
  input: ScenarioDocument;
  result: ScenarioResult;
}

/**
 * One run with its input snapshot and result; null when not in this organisation. With
 * `periods: false` the result's period-by-period part (most of its size) is left in the database.
 */
export async function getRun(
  organisationId: number,
  runId: number,
  options: { periods?: boolean; access?: WholeRunAccess } = {},
): Promise<RunDetail | null> {
  if (!Number.isSafeInteger(runId)) return null;
  const db = await getDb();
  const [found] = await db
    .select({
      run: {
        ...summaryColumns,
        input: runs.input,
        result: options.periods === false ? sql<Record<string, unknown>>`${runs.result} - 'periods'` : runs.result,
      },
      login: users.login,
    })
    .from(runs)
    .leftJoin(users, eq(users.id, runs.createdBy))
    .where(and(eq(runs.id, runId), eq(runs.organisationId, organisationId), accessCondition(options.access ?? "all")));
  if (!found) return null;
  const row = found.run;
  const result = row.result as unknown as ScenarioResult;
  return { ...summary(row, result.priceOfAnarchy, found.login), input: row.input as unknown as ScenarioDocument, result };
}
