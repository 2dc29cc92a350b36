/**
 * Publishing runs to the people around the planner.
 *
 * Administrators and planners see every run of their organisation; everyone else (provider
 * managers, patient-access officers, readers) sees only runs a planner has published. A provider
 * manager sees, within a published run, only the sites listed in their membership (`siteCodes`).
 * These rules are applied here, on the server, by every loader and API route that reads a run for
 * an outlook: a run or site outside someone's view is answered exactly like one that does not
 * exist (404), so an id typed into the address bar reveals nothing.
 */
import { and, desc, eq, isNotNull, sql } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { runs, scenarios, users, type Role } from "~/db/schema";
import type { ScenarioResult } from "~/engine/solve-scenario";
import { recordAudit } from "./audit.server";
import type { WholeRunAccess } from "./runs.server";
import type { Membership } from "./organisations.server";
import type { ScenarioDocument } from "./scenarios.server";

/** Roles that see unpublished runs and may publish. */
export const PUBLISHER_ROLES: readonly Role[] = ["administrator", "planner"];

export function seesUnpublished(role: Role): boolean {
  return PUBLISHER_ROLES.includes(role);
}

/** Whole runs a role may open through the workspace and the runs API (see runs.server.ts). */
export function wholeRunAccess(role: Role): WholeRunAccess {
  if (role === "provider_manager") return "none";
  return role === "access_officer" ? "published" : "all";
}

/** The site codes a member may see, or null for every site. */
export function siteScope(membership: Pick<Membership, "role" | "siteCodes">): string[] | null {
  return membership.role === "provider_manager" ? [...membership.siteCodes] : null;
}

export function canSeeSite(membership: Pick<Membership, "role" | "siteCodes">, siteId: string): boolean {
  const scope = siteScope(membership);
  return scope === null || scope.includes(siteId);
}

export interface VisibleRun {
  id: number;
  scenarioId: number;
  scenarioName: string;
  label: string | null;
  converged: boolean;
  createdAt: Date;
  publishedAt: Date | null;
  publishedByName: string | null;
}

export interface VisibleRunDetail extends VisibleRun {
  input: ScenarioDocument;
  result: ScenarioResult;
}

type Viewer = { organisationId: number; membership: Pick<Membership, "role" | "siteCodes"> };

const visibleRunColumns = {
  id: runs.id,
  scenarioId: runs.scenarioId,
  scenarioName: scenarios.name,
  label: runs.label,
  converged: runs.converged,
  createdAt: runs.createdAt,
  publishedAt: runs.publishedAt,
  publishedByName: users.name,
  publishedByLogin: users.login,
};

function toVisible(row: { publishedByName: string | null; publishedByLogin: string | null } & Omit<VisibleRun, "publishedByName">): VisibleRun {
  const { publishedByLogin, publishedByName, ...rest } = row;
  return { ...rest, publishedByName: row.publishedAt ? (publishedByName ?? publishedByLogin) : null };
}

/** Runs the viewer may open, newest first: every run for planners and administrators, published runs for others. */
export async function listVisibleRuns(viewer: Viewer, limit = 50): Promise<VisibleRun[]> {
  const db = await getDb();
  const conditions = [eq(runs.organisationId, viewer.organisationId)];
  if (!seesUnpublished(viewer.membership.role)) conditions.push(isNotNull(runs.publishedAt));
  const rows = await db
    .select(visibleRunColumns)
    .from(runs)
    .innerJoin(scenarios, eq(scenarios.id, runs.scenarioId))
    .leftJoin(users, eq(users.id, runs.publishedBy))
    .where(and(...conditions))
    .orderBy(desc(runs.publishedAt), desc(runs.createdAt), desc(runs.id))
    .limit(limit);
  return rows.map(toVisible);
}

/**
 * One run with its input and result if the viewer may open it; null otherwise (answer 404). With
 * `periods: false` the result's period-by-period part (most of its size) stays in the database.
 */
export async function getVisibleRun(viewer: Viewer, runId: number, options: { periods?: boolean } = {}): Promise<VisibleRunDetail | null> {
  if (!Number.isSafeInteger(runId)) return null;
  const db = await getDb();
  const conditions = [eq(runs.organisationId, viewer.organisationId), eq(runs.id, runId)];
  if (!seesUnpublished(viewer.membership.role)) conditions.push(isNotNull(runs.publishedAt));
  const [row] = await db
    .select({
      ...visibleRunColumns,
      input: runs.input,
      result: options.periods === false ? sql<Record<string, unknown>>`${runs.result} - 'periods'` : runs.result,
    })
    .from(runs)
    .innerJoin(scenarios, eq(scenarios.id, runs.scenarioId))
    .leftJoin(users, eq(users.id, runs.publishedBy))
    .where(and(...conditions));
  if (!row) return null;
  const { input, result, ...rest } = row;
  return { ...toVisible(rest), input: input as unknown as ScenarioDocument, result: result as unknown as ScenarioResult };
}

/**
 * The run an outlook opens when none is named: the most recently published one, or for planners
 * and administrators the newest run when nothing is published yet.
 */
export async function defaultRunId(viewer: Viewer): Promise<number | null> {
  const [first] = await listVisibleRuns(viewer, 1);
  return first?.id ?? null;
}

/** Publishes (or withdraws) a run; false when the organisation has no such run. Recorded in the audit log. */
export async function setRunPublished(organisationId: number, runId: number, userId: number, published: boolean): Promise<boolean> {
  if (!Number.isSafeInteger(runId)) return false;
  const db = await getDb();
  return db.transaction(async (tx) => {
    const updated = await tx
      .update(runs)
      .set(published ? { publishedAt: new Date(), publishedBy: userId } : { publishedAt: null, publishedBy: null })
      .where(and(eq(runs.id, runId), eq(runs.organisationId, organisationId)))
      .returning({ id: runs.id, scenarioId: runs.scenarioId });
    if (updated.length === 0) return false;
    await recordAudit(organisationId, userId, published ? "run.published" : "run.unpublished", `run:${runId}`, { scenarioId: updated[0].scenarioId }, tx);
    return true;
  });
}
