/**
 * The audit log: who changed or exported what, per organisation. Entries are written in the same
 * transaction as the change they describe when one is open, so that a rolled-back change leaves
 * no entry behind.
 */
import { desc, eq } from "drizzle-orm";
import { getDb, type Database } from "~/db/client.server";
import { auditLog } from "~/db/schema";

export type AuditEntry = typeof auditLog.$inferSelect;

export async function recordAudit(
  organisationId: number,
  userId: number | null,
  action: string,
  target: string | null,
  detail: Record<string, unknown> = {},
  executor?: Database,
): Promise<void> {
  const db = executor ?? (await getDb());
  await db.insert(auditLog).values({ organisationId, userId, action, target, detail });
}

export async function listAudit(organisationId: number, limit = 200): Promise<AuditEntry[]> {
  const db = await getDb();
  return db
    .select()
    .from(auditLog)
    .where(eq(auditLog.organisationId, organisationId))
    .orderBy(desc(auditLog.at), desc(auditLog.id))
    .limit(limit);
}
