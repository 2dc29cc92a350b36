/**
 * Personal API tokens: one person's access to one organisation's API, with that person's role
 * there (checked at each use, so a demoted or removed member's token loses its power at once).
 *
 * The token is shown once at creation; only its SHA-256 is stored. 32 random bytes make guessing
 * hopeless, so a fast unsalted hash is enough (a slow password hash protects low-entropy secrets).
 */
import { createHash, randomBytes } from "node:crypto";
import { and, desc, eq, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { apiTokens, memberships, organisations, users } from "~/db/schema";
import { recordAudit } from "./audit.server";
import type { Membership, Organisation } from "./organisations.server";
import type { User } from "./users.server";

/** Visible prefix: lets people (and secret scanners) recognise an Equilibra token. */
export const TOKEN_PREFIX = "eqb_";
const NAME_MAX_LENGTH = 100;

export interface ApiTokenSummary {
  id: number;
  name: string;
  createdAt: Date;
  lastUsedAt: Date | null;
  revokedAt: Date | null;
}

export function hashToken(token: string): string {
  return createHash("sha256").update(token, "utf8").digest("hex");
}

/** Creates a token for the member; the returned `token` is the only time it exists in clear. */
export async function createApiToken(organisationId: number, userId: number, name: string): Promise<{ token: string; summary: ApiTokenSummary }> {
  const trimmed = name.trim();
  if (trimmed === "" || trimmed.length > NAME_MAX_LENGTH) throw new Error(`A token name must be 1–${NAME_MAX_LENGTH} characters.`);
  const token = `${TOKEN_PREFIX}${randomBytes(32).toString("base64url")}`;
  const db = await getDb();
  const [row] = await db.insert(apiTokens).values({ organisationId, userId, name: trimmed, tokenHash: hashToken(token) }).returning();
  await recordAudit(organisationId, userId, "api_token.created", `api_token:${row.id}`, { name: trimmed });
  return { token, summary: { id: row.id, name: row.name, createdAt: row.createdAt, lastUsedAt: row.lastUsedAt, revokedAt: row.revokedAt } };
}

/** The member's own tokens in the organisation, newest first. */
export async function listApiTokens(organisationId: number, userId: number): Promise<ApiTokenSummary[]> {
  const db = await getDb();
  return db
    .select({ id: apiTokens.id, name: apiTokens.name, createdAt: apiTokens.createdAt, lastUsedAt: apiTokens.lastUsedAt, revokedAt: apiTokens.revokedAt })
    .from(apiTokens)
    .where(and(eq(apiTokens.organisationId, organisationId), eq(apiTokens.userId, userId)))
    .orderBy(desc(apiTokens.createdAt), desc(apiTokens.id));
}

/** Revokes one of the member's own tokens; false when there is no such live token of theirs. */
export async function revokeApiToken(organisationId: number, userId: number, tokenId: number): Promise<boolean> {
  const db = await getDb();
  const updated = await db
    .update(apiTokens)
    .set({ revokedAt: new Date() })
    .where(and(eq(apiTokens.id, tokenId), eq(apiTokens.organisationId, organisationId), eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    .returning({ id: apiTokens.id });
  if (updated.length > 0) await recordAudit(organisationId, userId, "api_token.revoked", `api_token:${tokenId}`);
  return updated.length > 0;
}

export interface TokenHolder {
  tokenId: number;
  user: User;
  organisation: Organisation;
  membership: Membership;
}

/** The live token's holder with their current membership, or null (unknown, revoked, or no longer a member). */
const LAST_USED_RESOLUTION_MS = 60_000;

export async function authenticateApiToken(token: string): Promise<TokenHolder | null> {
  if (!token.startsWith(TOKEN_PREFIX)) return null;
  const db = await getDb();
  const [row] = await db
    .select({ tokenId: apiTokens.id, lastUsedAt: apiTokens.lastUsedAt, user: users, organisation: organisations, membership: memberships })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .innerJoin(organisations, eq(organisations.id, apiTokens.organisationId))
    .innerJoin(memberships, and(eq(memberships.organisationId, apiTokens.organisationId), eq(memberships.userId, apiTokens.userId)))
    .where(and(eq(apiTokens.tokenHash, hashToken(token)), isNull(apiTokens.revokedAt)));
  if (!row) return null;
  // "Last used" to the minute: a busy client would otherwise write the token's row on every call.
  const now = new Date();
  if (!row.lastUsedAt || now.getTime() - row.lastUsedAt.getTime() >= LAST_USED_RESOLUTION_MS) {
    await db.update(apiTokens).set({ lastUsedAt: now }).where(eq(apiTokens.id, row.tokenId));
  }
  const { lastUsedAt: _, ...holder } = row;
  return holder;
}
