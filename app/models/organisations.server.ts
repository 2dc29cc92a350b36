/**
 * Organisations (commissioning bodies) and their members. Every function that takes a membership
 * id also takes the organisation id and filters by both, so an id from another tenant finds nothing.
 */
import { and, asc, eq, sql } from "drizzle-orm";
import { getDb, type Database } from "~/db/client.server";
import { memberships, organisations, scenarios, sites, users, type Role } from "~/db/schema";
import { recordAudit } from "./audit.server";

export type Organisation = typeof organisations.$inferSelect;
export type Membership = typeof memberships.$inferSelect;

export interface Member {
  membershipId: number;
  userId: number;
  login: string;
  name: string | null;
  email: string | null;
  role: Role;
  siteCodes: string[];
  joinedAt: Date;
}

export type MemberChangeResult =
  | { ok: true }
  | { ok: false; reason: "not_found" | "last_administrator"; message: string };

export { ROLE_LABELS } from "./roles";

/** "Merrow Vale Commissioning" → "merrow-vale-commissioning". */
export function slugFromName(name: string): string {
  const slug = name
    .normalize("NFKD")
    .replace(/[\u0300-\u036f]/g, "")
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, "-")
    .replace(/^-+|-+$/g, "")
    .slice(0, 40)
    .replace(/-+$/g, "");
  return slug || "organisation";
}

export async function getOrganisationBySlug(slug: string): Promise<Organisation | undefined> {
  const db = await getDb();
  const [organisation] = await db.select().from(organisations).where(eq(organisations.slug, slug)).limit(1);
  return organisation;
}

export async function getMembership(organisationId: number, userId: number): Promise<Membership | undefined> {
  const db = await getDb();
  const [membership] = await db
    .select()
    .from(memberships)
    .where(and(eq(memberships.organisationId, organisationId), eq(memberships.userId, userId)))
    .limit(1);
  return membership;
}

/** The organisations a person belongs to, oldest membership first (the first is their default). */
export async function listOrganisationsForUser(
  userId: number,
): Promise<Array<{ organisation: Organisation; role: Role }>> {
  const db = await getDb();
  return db
    .select({ organisation: organisations, role: memberships.role })
    .from(memberships)
    .innerJoin(organisations, eq(organisations.id, memberships.organisationId))
    .where(eq(memberships.userId, userId))
    .orderBy(asc(memberships.createdAt), asc(memberships.id));
}

/** Creates an organisation with its creator as administrator. */
export async function createOrganisation(name: string, creatorId: number): Promise<Organisation> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const base = slugFromName(name);
    const taken = new Set(
      (
        await tx
          .select({ slug: organisations.slug })
          .from(organisations)
          .where(sql`${organisations.slug} = ${base} or ${organisations.slug} like ${`${base}-%`}`)
      ).map((row) => row.slug),
    );
    let slug = base;
    for (let n = 2; taken.has(slug); n++) slug = `${base}-${n}`;
    const [organisation] = await tx.insert(organisations).values({ name: name.trim(), slug }).returning();
    await tx.insert(memberships).values({ organisationId: organisation.id, userId: creatorId, role: "administrator" });
    await recordAudit(organisation.id, creatorId, "organisation.created", organisation.slug, { name: organisation.name }, tx);
    return organisation;
  });
}

export async function listMembers(organisationId: number): Promise<Member[]> {
  const db = await getDb();
  return db
    .select({
      membershipId: memberships.id,
      userId: users.id,
      login: users.login,
      name: users.name,
      email: users.email,
      role: memberships.role,
      siteCodes: memberships.siteCodes,
      joinedAt: memberships.createdAt,
    })
    .from(memberships)
    .innerJoin(users, eq(users.id, memberships.userId))
    .where(eq(memberships.organisationId, organisationId))
    .orderBy(asc(users.login));
}

/** The site codes found in this organisation's scenarios: what a provider manager may be scoped to. */
export async function listSiteCodes(organisationId: number): Promise<string[]> {
  const db = await getDb();
  const rows = await db
    .selectDistinct({ code: sites.code })
    .from(sites)
    .innerJoin(scenarios, eq(scenarios.id, sites.scenarioId))
    .where(eq(scenarios.organisationId, organisationId))
    .orderBy(asc(sites.code));
  return rows.map((row) => row.code);
}

/**
 * Locks the organisation's administrator memberships for the rest of the transaction, so that two
 * administrators demoting each other at the same moment cannot leave the organisation with none.
 */
async function lockAdministrators(tx: Database, organisationId: number): Promise<number[]> {
  const rows = await tx
    .select({ id: memberships.id })
    .from(memberships)
    .where(and(eq(memberships.organisationId, organisationId), eq(memberships.role, "administrator")))
    .for("update");
  return rows.map((row) => row.id);
}

/** One membership of this organisation, locked for the rest of the transaction (undefined if absent). */
async function lockMembership(tx: Database, organisationId: number, membershipId: number) {
  const [membership] = await tx
    .select()
    .from(memberships)
    .where(and(eq(memberships.id, membershipId), eq(memberships.organisationId, organisationId)))
    .for("update");
  return membership;
}

const NOT_A_MEMBER = "There is no such member in this organisation.";
const LAST_ADMINISTRATOR =
  "This is the organisation's only administrator. Make another member an administrator first.";

export async function changeMemberRole(
  organisationId: number,
  membershipId: number,
  role: Role,
  siteCodes: string[],
  actorId: number,
): Promise<MemberChangeResult> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const administrators = await lockAdministrators(tx, organisationId);
    const membership = await lockMembership(tx, organisationId, membershipId);
    if (!membership) return { ok: false, reason: "not_found", message: NOT_A_MEMBER } as const;
    if (membership.role === "administrator" && role !== "administrator" && administrators.length <= 1) {
      return { ok: false, reason: "last_administrator", message: LAST_ADMINISTRATOR } as const;
    }
    const scopedCodes = role === "provider_manager" ? siteCodes : [];
    await tx.update(memberships).set({ role, siteCodes: scopedCodes }).where(eq(memberships.id, membershipId));
    await recordAudit(
      organisationId,
      actorId,
      "member.role_changed",
      `membership:${membershipId}`,
      { userId: membership.userId, from: membership.role, to: role, fromSiteCodes: membership.siteCodes, siteCodes: scopedCodes },
      tx,
    );
    return { ok: true } as const;
  });
}

export async function removeMember(
  organisationId: number,
  membershipId: number,
  actorId: number,
): Promise<MemberChangeResult> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const administrators = await lockAdministrators(tx, organisationId);
    const membership = await lockMembership(tx, organisationId, membershipId);
    if (!membership) return { ok: false, reason: "not_found", message: NOT_A_MEMBER } as const;
    if (membership.role === "administrator" && administrators.length <= 1) {
      return { ok: false, reason: "last_administrator", message: LAST_ADMINISTRATOR } as const;
    }
    await tx.delete(memberships).where(eq(memberships.id, membershipId));
    await recordAudit(
      organisationId,
      actorId,
      "member.removed",
      `membership:${membershipId}`,
      { userId: membership.userId, role: membership.role },
      tx,
    );
    return { ok: true } as const;
  });
}
