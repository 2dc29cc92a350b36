/**
 * Runs: a scenario solved on the server and kept — a snapshot of its inputs (the exchange-format
 * document as it was), the engine's result with its diagnostics (converged, iterations, relative
 * gap per rule and line), who ran it and when. A run never changes after it is stored, so any run
 * can be reopened later and read exactly as it was, whatever happened to the scenario since.
 *
 * The engine runs outside any transaction: PGlite has one connection, and a transaction would hold
 * it for the whole solve.
 */
import { and, desc, eq, isNotNull, sql, type SQL } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { runs, users } from "~/db/schema";
import { NoSteadyStateError, ScenarioInputError, type RuleKey } from "~/engine/problem";
import { parseScenario } from "~/engine/scenario";
import { solveScenario, type ScenarioResult } from "~/engine/solve-scenario";
import { recordAudit } from "./audit.server";
import { exportScenario, type ScenarioDocument } from "./scenarios.server";

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

/** What a solve produced, or why the model has no answer (an input error or no steady state). */
export type SolveOutcome =
  | { ok: true; result: ScenarioResult; durationMs: number }
  | { ok: false; status: 400 | 422; error: string; issues: { path: string; message: string }[] };

export interface SolveChoices {
  /** Only these rules (default: every rule that applies). */
  rules?: RuleKey[];
  /** Solve the scenario's periods too (default true); the stationary problem is always solved. */
  periods?: boolean;
}

/** Validates and solves an exchange-format document; never throws for bad input. */
export function solveDocument(input: unknown, choices: SolveChoices = {}): SolveOutcome {
  let scenario;
  try {
    scenario = parseScenario(input);
  } catch (error) {
    if (error instanceof ScenarioInputError) return { ok: false, status: 400, error: "The scenario is not valid.", issues: error.issues };
    throw error;
  }
  const started = performance.now();
  try {
    const result = solveScenario(scenario, { rules: choices.rules, periods: choices.periods });
    return { ok: true, result, durationMs: performance.now() - started };
  } catch (error) {
    if (error instanceof NoSteadyStateError) {
      return {
        ok: false,
        status: 422,
        error: error.message,
        issues: error.shortfalls.map((shortfall) => ({
          path: `serviceLines.${shortfall.lineId}`,
          message: `demand ${shortfall.demand.toFixed(2)}/week exceeds capacity ${shortfall.capacity.toFixed(2)}/week at ${shortfall.siteIds.join(", ")} by ${shortfall.shortfall.toFixed(2)} with no outside option`,
        })),
      };
    }
    throw error;
  }
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
): Promise<null | { ok: true; run: RunSummary } | Extract<SolveOutcome, { ok: false }>> {
  const db = await getDb();
  const document = await exportScenario(db, organisationId, scenarioId);
  if (!document) return null;
  const outcome = solveDocument(document, { rules: options.rules, periods: options.periods });
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

/** A scenario's runs, newest first, without their payloads. */
export async function listRuns(organisationId: number, scenarioId: number, access: WholeRunAccess = "all"): Promise<RunSummary[]> {
  const db = await getDb();
  const rows = await db
    .select({
      id: runs.id,
      scenarioId: runs.scenarioId,
      label: runs.label,
      converged: runs.converged,
      durationMs: runs.durationMs,
      createdBy: runs.createdBy,
      createdAt: runs.createdAt,
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
        id: runs.id,
        scenarioId: runs.scenarioId,
        label: runs.label,
        converged: runs.converged,
        durationMs: runs.durationMs,
        createdBy: runs.createdBy,
        createdAt: runs.createdAt,
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
