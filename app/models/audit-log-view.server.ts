/**
 * What administrators read in the audit log: entries with the person's name, filtered by kind of
 * action (publishing, exports, role changes, API tokens), and each API token's holder and last use.
 */
import { and, desc, eq, like, or, type SQL } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { apiTokens, auditLog, users } from "~/db/schema";

/** Kinds of entry an administrator filters by, and the action names each covers. */
export const AUDIT_KINDS = {
  publishing: { label: "Publishing", patterns: ["run.published", "run.unpublished", "run.recommendation_saved"] },
  exports: { label: "Exports", patterns: ["%.exported"] },
  roles: { label: "Members and roles", patterns: ["member.%", "invitation.%"] },
  tokens: { label: "API tokens", patterns: ["api_token.%"] },
} as const;

export type AuditKind = keyof typeof AUDIT_KINDS;

export function isAuditKind(value: string | null): value is AuditKind {
  return value !== null && Object.hasOwn(AUDIT_KINDS, value);
}

export interface AuditRow {
  id: number;
  at: Date;
  action: string;
  target: string | null;
  detail: Record<string, unknown>;
  who: string | null;
}

export async function listAuditEntries(organisationId: number, options: { kind?: AuditKind; limit?: number } = {}): Promise<AuditRow[]> {
  const db = await getDb();
  const conditions: SQL[] = [eq(auditLog.organisationId, organisationId)];
  if (options.kind) {
    const patterns = AUDIT_KINDS[options.kind].patterns.map((pattern) => (pattern.includes("%") ? like(auditLog.action, pattern) : eq(auditLog.action, pattern)));
    conditions.push(or(...patterns) as SQL);
  }
  const rows = await db
    .select({ id: auditLog.id, at: auditLog.at, action: auditLog.action, target: auditLog.target, detail: auditLog.detail, name: users.name, login: users.login })
    .from(auditLog)
    .leftJoin(users, eq(users.id, auditLog.userId))
    .where(and(...conditions))
    .orderBy(desc(auditLog.at), desc(auditLog.id))
    .limit(options.limit ?? 300);
  return rows.map(({ name, login, ...row }) => ({ ...row, who: name ?? login }));
}

export interface TokenUse {
  id: number;
  name: string;
  holder: string;
  createdAt: Date;
  lastUsedAt: Date | null;
  revokedAt: Date | null;
}

/** Every API token of the organisation (never the secret), with its holder and last use. */
export async function listTokenUse(organisationId: number): Promise<TokenUse[]> {
  const db = await getDb();
  const rows = await db
    .select({ id: apiTokens.id, name: apiTokens.name, createdAt: apiTokens.createdAt, lastUsedAt: apiTokens.lastUsedAt, revokedAt: apiTokens.revokedAt, holderName: users.name, holderLogin: users.login })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(eq(apiTokens.organisationId, organisationId))
    .orderBy(desc(apiTokens.lastUsedAt), desc(apiTokens.id));
  return rows.map(({ holderName, holderLogin, ...row }) => ({ ...row, holder: holderName ?? holderLogin }));
}

