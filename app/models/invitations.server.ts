/**
 * Invitations by e-mail. The link carries a random token; only its SHA-256 is stored, so a copy of
 * the database cannot be used to join an organisation. Acceptance re-checks everything inside a
 * transaction with the invitation row locked: a link used twice at once joins once.
 */
import { createHash, randomBytes } from "node:crypto";
import { and, asc, eq, gt, isNull } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { invitations, memberships, organisations, users, type Role } from "~/db/schema";
import { recordAudit } from "./audit.server";
import { normaliseEmail, type User } from "./users.server";

export type Invitation = typeof invitations.$inferSelect;

/** A week: long enough to survive a weekend and a holiday Monday. */
export const INVITATION_LIFETIME_DAYS = 7;

export type InvitationProblem = "not_found" | "used" | "revoked" | "expired" | "other_address" | "already_member";

export interface InvitationView {
  invitation: Invitation;
  organisationName: string;
  organisationSlug: string;
}

export type AcceptResult =
  | { ok: true; organisationSlug: string }
  | { ok: false; problem: InvitationProblem; message: string };

export function hashInvitationToken(token: string): string {
  return createHash("sha256").update(token).digest("hex");
}

/** Shows enough of an address to recognise it without spelling it out to whoever holds the link. */
export function maskEmail(email: string): string {
  const [local, domain] = email.split("@");
  if (!domain) return "an address we cannot show";
  return `${local.slice(0, 1)}•••@${domain}`; // a fixed mask, so the length says nothing either
}

/** Why this person cannot use this invitation now, or undefined when they can. */
export function invitationProblem(
  invitation: Invitation,
  user: Pick<User, "email">,
  now: Date,
): { problem: InvitationProblem; message: string } | undefined {
  if (invitation.acceptedAt) {
    return { problem: "used", message: "This invitation has already been used. Each invitation link works once." };
  }
  if (invitation.revokedAt) {
    return { problem: "revoked", message: "This invitation was withdrawn by an administrator of the organisation." };
  }
  if (invitation.expiresAt.getTime() <= now.getTime()) {
    const day = invitation.expiresAt.toISOString().slice(0, 10);
    return {
      problem: "expired",
      message: `This invitation expired on ${day}. Ask an administrator of the organisation to invite you again.`,
    };
  }
  if (!user.email || normaliseEmail(user.email) !== normaliseEmail(invitation.email)) {
    const yours = user.email ? `you are signed in as ${user.email}` : "your account has no public e-mail address";
    return {
      problem: "other_address",
      message: `This invitation was sent to ${maskEmail(invitation.email)}, but ${yours}. Sign in with the account that uses that address, or ask for an invitation to yours.`,
    };
  }
  return undefined;
}

export async function createInvitation(input: {
  organisationId: number;
  email: string;
  role: Role;
  siteCodes: string[];
  invitedBy: number;
  now?: Date;
}): Promise<{ invitation: Invitation; token: string }> {
  const db = await getDb();
  const now = input.now ?? new Date();
  const email = normaliseEmail(input.email);
  const token = randomBytes(32).toString("base64url");
  return db.transaction(async (tx) => {
    // A new invitation to the same address replaces any that is still open, so only the latest link works.
    await tx
      .update(invitations)
      .set({ revokedAt: now })
      .where(
        and(
          eq(invitations.organisationId, input.organisationId),
          eq(invitations.email, email),
          isNull(invitations.acceptedAt),
          isNull(invitations.revokedAt),
        ),
      );
    const [invitation] = await tx
      .insert(invitations)
      .values({
        organisationId: input.organisationId,
        email,
        role: input.role,
        siteCodes: input.role === "provider_manager" ? input.siteCodes : [],
        tokenHash: hashInvitationToken(token),
        invitedBy: input.invitedBy,
        expiresAt: new Date(now.getTime() + INVITATION_LIFETIME_DAYS * 24 * 60 * 60 * 1000),
      })
      .returning();
    await recordAudit(
      input.organisationId,
      input.invitedBy,
      "member.invited",
      `invitation:${invitation.id}`,
      { email, role: invitation.role, siteCodes: invitation.siteCodes },
      tx,
    );
    return { invitation, token };
  });
}

/** Open invitations of one organisation, for its members page. */
export async function listPendingInvitations(organisationId: number, now: Date = new Date()): Promise<Invitation[]> {
  const db = await getDb();
  return db
    .select()
    .from(invitations)
    .where(
      and(
        eq(invitations.organisationId, organisationId),
        isNull(invitations.acceptedAt),
        isNull(invitations.revokedAt),
        gt(invitations.expiresAt, now),
      ),
    )
    .orderBy(asc(invitations.createdAt));
}

/** Open invitations addressed to this person, for the welcome page. */
export async function listInvitationsForUser(user: Pick<User, "email">, now: Date = new Date()): Promise<InvitationView[]> {
  if (!user.email) return [];
  const db = await getDb();
  const rows = await db
    .select({ invitation: invitations, organisationName: organisations.name, organisationSlug: organisations.slug })
    .from(invitations)
    .innerJoin(organisations, eq(organisations.id, invitations.organisationId))
    .where(
      and(
        eq(invitations.email, normaliseEmail(user.email)),
        isNull(invitations.acceptedAt),
        isNull(invitations.revokedAt),
        gt(invitations.expiresAt, now),
      ),
    )
    .orderBy(asc(invitations.createdAt));
  return rows;
}

export async function findInvitationByToken(token: string): Promise<InvitationView | undefined> {
  const db = await getDb();
  const [row] = await db
    .select({ invitation: invitations, organisationName: organisations.name, organisationSlug: organisations.slug })
    .from(invitations)
    .innerJoin(organisations, eq(organisations.id, invitations.organisationId))
    .where(eq(invitations.tokenHash, hashInvitationToken(token)))
    .limit(1);
  return row;
}

export async function revokeInvitation(organisationId: number, invitationId: number, actorId: number, now: Date = new Date()): Promise<boolean> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const [revoked] = await tx
      .update(invitations)
      .set({ revokedAt: now })
      .where(
        and(
          eq(invitations.id, invitationId),
          eq(invitations.organisationId, organisationId),
          isNull(invitations.acceptedAt),
          isNull(invitations.revokedAt),
        ),
      )
      .returning();
    if (!revoked) return false;
    await recordAudit(organisationId, actorId, "invitation.revoked", `invitation:${invitationId}`, { email: revoked.email }, tx);
    return true;
  });
}

const NOT_FOUND_MESSAGE = "This invitation link is not valid. Check that you copied the whole link from the e-mail.";

/**
 * Joins the organisation the invitation is for. `by` says how the invitation is identified: the
 * token from the e-mailed link, or its id when the welcome page lists invitations to the person's
 * own address (the address check below then does the same work the secret token does).
 */
export async function acceptInvitation(
  by: { token: string } | { invitationId: number },
  user: User,
  now: Date = new Date(),
): Promise<AcceptResult> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const condition =
      "token" in by ? eq(invitations.tokenHash, hashInvitationToken(by.token)) : eq(invitations.id, by.invitationId);
    const [invitation] = await tx.select().from(invitations).where(condition).for("update");
    if (!invitation) return { ok: false, problem: "not_found", message: NOT_FOUND_MESSAGE } as const;
    const problem = invitationProblem(invitation, user, now);
    // Through the welcome page an id is guessable: answer "not found" rather than reveal someone else's invitation.
    if (problem && "invitationId" in by && problem.problem === "other_address") {
      return { ok: false, problem: "not_found", message: NOT_FOUND_MESSAGE } as const;
    }
    if (problem) return { ok: false, ...problem } as const;
    const [organisation] = await tx
      .select()
      .from(organisations)
      .where(eq(organisations.id, invitation.organisationId));
    const [existing] = await tx
      .select()
      .from(memberships)
      .where(and(eq(memberships.organisationId, invitation.organisationId), eq(memberships.userId, user.id)));
    if (existing) {
      return {
        ok: false,
        problem: "already_member",
        message: `You are already a member of ${organisation.name}. The invitation was not needed; nothing has changed.`,
      } as const;
    }
    await tx.insert(memberships).values({
      organisationId: invitation.organisationId,
      userId: user.id,
      role: invitation.role,
      siteCodes: invitation.siteCodes,
    });
    await tx.update(invitations).set({ acceptedAt: now, acceptedBy: user.id }).where(eq(invitations.id, invitation.id));
    await recordAudit(
      invitation.organisationId,
      user.id,
      "invitation.accepted",
      `invitation:${invitation.id}`,
      { email: invitation.email, role: invitation.role, siteCodes: invitation.siteCodes },
      tx,
    );
    return { ok: true, organisationSlug: organisation.slug } as const;
  });
}

/** Whether an address already belongs to a member, so that inviting it again can be refused. */
export async function isEmailAMember(organisationId: number, email: string): Promise<boolean> {
  const db = await getDb();
  const [row] = await db
    .select({ id: memberships.id })
    .from(memberships)
    .innerJoin(users, eq(users.id, memberships.userId))
    .where(and(eq(memberships.organisationId, organisationId), eq(users.email, normaliseEmail(email))))
    .limit(1);
  return row !== undefined;
}
