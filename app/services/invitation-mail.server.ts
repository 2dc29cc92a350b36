/**
 * Inviting someone: the invitation row and its e-mail go together. If the mail cannot be sent the
 * invitation is withdrawn again, so no invitation stays open that nobody was told about.
 */
import { getAuthConfig } from "~/auth/auth-config.server";
import type { Role } from "~/db/schema";
import { createInvitation, INVITATION_LIFETIME_DAYS, revokeInvitation, type Invitation } from "~/models/invitations.server";
import { ROLE_LABELS } from "~/models/organisations.server";
import { sendMail, type MailDelivery, type OutgoingMail } from "./mail.server";

export function invitationMail(input: {
  to: string;
  organisationName: string;
  inviterName: string;
  role: Role;
  siteCodes: string[];
  link: string;
  expiresAt: Date;
}): OutgoingMail {
  const sites = input.siteCodes.length > 0 ? ` for the sites ${input.siteCodes.join(", ")}` : "";
  const expires = input.expiresAt.toISOString().slice(0, 10);
  const text = [
    `${input.inviterName} has invited you to join ${input.organisationName} on Equilibra as ${ROLE_LABELS[input.role].toLowerCase()}${sites}.`,
    "",
    `Accept the invitation: ${input.link}`,
    "",
    `The link works once, until ${expires} (${INVITATION_LIFETIME_DAYS} days), and only when you sign in with this e-mail address (${input.to}).`,
    "If you did not expect this invitation you can ignore this message.",
  ].join("\n");
  return { to: input.to, subject: `Invitation to join ${input.organisationName} on Equilibra`, text };
}

export type InviteResult =
  | { ok: true; invitation: Invitation; delivery: MailDelivery }
  | { ok: false; message: string };

export async function inviteMember(input: {
  organisationId: number;
  organisationName: string;
  email: string;
  role: Role;
  siteCodes: string[];
  inviter: { id: number; name: string };
}): Promise<InviteResult> {
  const { invitation, token } = await createInvitation({
    organisationId: input.organisationId,
    email: input.email,
    role: input.role,
    siteCodes: input.siteCodes,
    invitedBy: input.inviter.id,
  });
  const link = new URL(`/invitations/${token}`, getAuthConfig().appUrl).toString();
  try {
    const delivery = await sendMail(
      invitationMail({
        to: invitation.email,
        organisationName: input.organisationName,
        inviterName: input.inviter.name,
        role: invitation.role,
        siteCodes: invitation.siteCodes,
        link,
        expiresAt: invitation.expiresAt,
      }),
    );
    return { ok: true, invitation, delivery };
  } catch (error) {
    await revokeInvitation(input.organisationId, invitation.id, input.inviter.id);
    return {
      ok: false,
      message: `The invitation e-mail to ${invitation.email} could not be sent (${(error as Error).message}). No invitation is open; try again later.`,
    };
  }
}
