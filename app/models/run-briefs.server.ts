/**
 * The planner's recommendation for a run's decision brief. The run itself never changes once
 * stored; its recommendation may be reworded until the board meets, and every change is audited.
 */
import { and, eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { runBriefs, runs } from "~/db/schema";
import { recordAudit } from "./audit.server";
import { RECOMMENDATION_MAX_LENGTH } from "./recommendation";


export interface RunBrief {
  recommendation: string;
  updatedAt: Date | null;
  updatedBy: number | null;
}

export async function getRunBrief(organisationId: number, runId: number): Promise<RunBrief> {
  const db = await getDb();
  const [row] = await db
    .select()
    .from(runBriefs)
    .where(and(eq(runBriefs.runId, runId), eq(runBriefs.organisationId, organisationId)));
  return row ? { recommendation: row.recommendation, updatedAt: row.updatedAt, updatedBy: row.updatedBy } : { recommendation: "", updatedAt: null, updatedBy: null };
}

/** Stores the recommendation; false when the organisation has no such run. */
export async function saveRecommendation(organisationId: number, runId: number, userId: number, recommendation: string): Promise<boolean> {
  const text = recommendation.trim();
  if (text.length > RECOMMENDATION_MAX_LENGTH) {
    throw new RangeError(`The recommendation is ${text.length} characters; the limit is ${RECOMMENDATION_MAX_LENGTH}.`);
  }
  const db = await getDb();
  return db.transaction(async (tx) => {
    const [run] = await tx
      .select({ id: runs.id })
      .from(runs)
      .where(and(eq(runs.id, runId), eq(runs.organisationId, organisationId)));
    if (!run) return false;
    const now = new Date();
    await tx
      .insert(runBriefs)
      .values({ runId, organisationId, recommendation: text, updatedBy: userId, updatedAt: now })
      .onConflictDoUpdate({ target: runBriefs.runId, set: { recommendation: text, updatedBy: userId, updatedAt: now } });
    await recordAudit(organisationId, userId, "run.recommendation_saved", `run:${runId}`, { characters: text.length }, tx);
    return true;
  });
}
