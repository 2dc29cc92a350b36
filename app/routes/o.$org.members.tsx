/**
 * Members of an organisation, for its administrators: invite by e-mail with a role (and sites, for a
 * provider manager), change roles, remove members, withdraw open invitations. The last administrator
 * can be neither demoted nor removed.
 */
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { ROLES, type Role } from "~/db/schema";
import { checkWithinPlan } from "~/models/plan-limits.server";
import { isEmailAMember, listPendingInvitations, revokeInvitation } from "~/models/invitations.server";
import { changeMemberRole, listMembers, listSiteCodes, removeMember } from "~/models/organisations.server";
import { ROLE_LABELS } from "~/models/roles";
import { displayName } from "~/models/users.server";
import { inviteMember } from "~/services/invitation-mail.server";
import type { Route } from "./+types/o.$org.members";

const roleField = z.enum(ROLES, { error: `Choose a role: ${ROLES.map((role) => ROLE_LABELS[role]).join(", ")}.` });
/** Site codes typed as "ZZS1, ZZS3" (commas, semicolons or spaces between them). */
const siteCodesField = z
  .string()
  .optional()
  .transform((text) => [...new Set((text ?? "").split(/[\s,;]+/).map((code) => code.trim().toUpperCase()).filter(Boolean))]);
const idField = (what: string) => z.coerce.number({ error: `The ${what} is missing.` }).int().positive(`The ${what} is not valid.`);

const membersFormSchema = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("invite"),
    email: z.string().trim().toLowerCase().pipe(z.email("Enter an e-mail address such as name@example.org.")),
    role: roleField,
    siteCodes: siteCodesField,
  }),
  z.object({ intent: z.literal("changeRole"), membershipId: idField("member"), role: roleField, siteCodes: siteCodesField }),
  z.object({ intent: z.literal("remove"), membershipId: idField("member") }),
  z.object({ intent: z.literal("revoke"), invitationId: idField("invitation") }),
]);

type Intent = z.infer<typeof membersFormSchema>["intent"];

interface MembersActionData {
  intent: Intent | null;
  target: number | null;
  fieldErrors: Record<string, string[] | undefined>;
  formError: string | null;
  notice: string | null;
}

function reply(body: Partial<MembersActionData>, status = 200) {
  const full: MembersActionData = { intent: null, target: null, fieldErrors: {}, formError: null, notice: null, ...body };
  return data(full, { status });
}

/**
 * A provider manager needs at least one site; other roles have none. When the organisation's
 * scenarios name sites, the codes must be among them (matched without regard to case).
 */
function checkSiteCodes(role: Role, codes: string[], known: string[]): { codes: string[] } | { error: string } {
  if (role !== "provider_manager") return { codes: [] };
  if (codes.length === 0) return { error: "A provider manager needs at least one site code, e.g. ZZS1." };
  if (known.length === 0) return { codes };
  const byUpper = new Map(known.map((code) => [code.toUpperCase(), code]));
  const unknown = codes.filter((code) => !byUpper.has(code));
  if (unknown.length > 0) {
    return { error: `Unknown site code${unknown.length > 1 ? "s" : ""} ${unknown.join(", ")}: this organisation's sites are ${known.join(", ")}.` };
  }
  return { codes: codes.map((code) => byUpper.get(code) ?? code) };
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireRole(request, params.org, ["administrator"]);
  const [members, invitations, siteCodes] = await Promise.all([
    listMembers(organisation.id),
    listPendingInvitations(organisation.id),
    listSiteCodes(organisation.id),
  ]);
  return {
    organisationName: organisation.name,
    ownMembershipId: membership.id,
    siteCodes,
    members: members.map((member) => ({
      membershipId: member.membershipId,
      name: displayName(member),
      login: member.login,
      email: member.email,
      role: member.role,
      siteCodes: member.siteCodes,
      joined: member.joinedAt.toISOString().slice(0, 10),
    })),
    invitations: invitations.map((invitation) => ({
      id: invitation.id,
      email: invitation.email,
      role: invitation.role,
      siteCodes: invitation.siteCodes,
      expires: invitation.expiresAt.toISOString().slice(0, 10),
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { user, organisation } = await requireRole(request, params.org, ["administrator"]);
  const form = Object.fromEntries(await request.formData());
  const parsed = membersFormSchema.safeParse(form);
  if (!parsed.success) {
    const { fieldErrors, formErrors } = z.flattenError(parsed.error);
    const intent = typeof form.intent === "string" && ["invite", "changeRole", "remove", "revoke"].includes(form.intent) ? (form.intent as Intent) : null;
    const target = Number(form.membershipId ?? form.invitationId) || null;
    return reply({ intent, target, fieldErrors, formError: formErrors[0] ?? (intent ? null : "Unknown request on the members page.") }, 400);
  }
  const input = parsed.data;

  switch (input.intent) {
    case "invite": {
      const sites = checkSiteCodes(input.role, input.siteCodes, await listSiteCodes(organisation.id));
      if ("error" in sites) return reply({ intent: input.intent, fieldErrors: { siteCodes: [sites.error] } }, 400);
      const seats = await checkWithinPlan(organisation, "seats");
      if (!seats.ok) return reply({ intent: input.intent, formError: seats.message }, 403);
      if (await isEmailAMember(organisation.id, input.email)) {
        return reply({ intent: input.intent, fieldErrors: { email: [`${input.email} is already a member of ${organisation.name}.`] } }, 409);
      }
      const result = await inviteMember({
        organisationId: organisation.id,
        organisationName: organisation.name,
        email: input.email,
        role: input.role,
        siteCodes: sites.codes,
        inviter: { id: user.id, name: displayName(user) },
      });
      if (!result.ok) return reply({ intent: input.intent, formError: result.message }, 502);
      const where = result.delivery.via === "outbox" ? " (kept in the local outbox: no mail server is configured)" : "";
      return reply({ intent: input.intent, notice: `Invitation sent to ${input.email}${where}.` });
    }
    case "changeRole": {
      const sites = checkSiteCodes(input.role, input.siteCodes, await listSiteCodes(organisation.id));
      if ("error" in sites) return reply({ intent: input.intent, target: input.membershipId, fieldErrors: { siteCodes: [sites.error] } }, 400);
      const result = await changeMemberRole(organisation.id, input.membershipId, input.role, sites.codes, user.id);
      if (!result.ok && result.reason === "not_found") throw notFound();
      if (!result.ok) return reply({ intent: input.intent, target: input.membershipId, formError: result.message }, 409);
      return reply({ intent: input.intent, target: input.membershipId, notice: `Role changed to ${ROLE_LABELS[input.role].toLowerCase()}.` });
    }
    case "remove": {
      const result = await removeMember(organisation.id, input.membershipId, user.id);
      if (!result.ok && result.reason === "not_found") throw notFound();
      if (!result.ok) return reply({ intent: input.intent, target: input.membershipId, formError: result.message }, 409);
      return reply({ intent: input.intent, notice: "Member removed." });
    }
    case "revoke": {
      if (!(await revokeInvitation(organisation.id, input.invitationId, user.id))) throw notFound();
      return reply({ intent: input.intent, notice: "Invitation withdrawn." });
    }
  }
}

const inputClass = "rounded border border-rule bg-white px-2 py-1.5";

function FieldError({ id, messages }: { id: string; messages: string[] | undefined }) {
  if (!messages?.length) return null;
  return (
    <p id={id} className="mt-1 text-sm text-bad">
      {messages[0]}
    </p>
  );
}

function RoleSelect({ id, defaultValue }: { id: string; defaultValue: Role }) {
  return (
    <select id={id} name="role" defaultValue={defaultValue} className={inputClass}>
      {ROLES.map((role) => (
        <option key={role} value={role}>
          {ROLE_LABELS[role]}
        </option>
      ))}
    </select>
  );
}

export default function Members({ loaderData, actionData }: Route.ComponentProps) {
  const { organisationName, ownMembershipId, members, invitations, siteCodes } = loaderData;
  const busy = useNavigation().state === "submitting";
  const errorsFor = (intent: Intent, target: number | null = null) =>
    actionData && actionData.intent === intent && (target === null || actionData.target === target) ? actionData : undefined;
  const invite = errorsFor("invite");
  const siteHint = siteCodes.length > 0 ? `Sites: ${siteCodes.join(", ")}` : "Site codes as in your scenarios, e.g. ZZS1";

  return (
    <div className="space-y-8">
      <header>
        <h1 className="text-2xl font-semibold">Members of {organisationName}</h1>
        <p className="mt-1 text-ink-soft">Who can see and change this organisation's scenarios, and in which role.</p>
      </header>

      {actionData?.notice && (
        <p role="status" className="rounded border border-good/40 bg-white p-3 text-good">
          {actionData.notice}
        </p>
      )}
      {actionData?.formError && actionData.target === null && (
        <p role="alert" className="rounded border border-bad/40 bg-white p-3 text-bad">
          {actionData.formError}
        </p>
      )}

      <section aria-labelledby="invite-heading" className="rounded border border-rule bg-white p-4">
        <h2 id="invite-heading" className="text-lg font-semibold">
          Invite someone
        </h2>
        <Form method="post" className="mt-3 flex flex-wrap items-start gap-4">
          <div>
            <label htmlFor="invite-email" className="block text-sm font-semibold">
              E-mail address
            </label>
            <input id="invite-email" name="email" type="email" required className={`mt-1 w-72 ${inputClass}`} aria-describedby="invite-email-error" />
            <FieldError id="invite-email-error" messages={invite?.fieldErrors.email} />
          </div>
          <div>
            <label htmlFor="invite-role" className="block text-sm font-semibold">
              Role
            </label>
            <div className="mt-1">
              <RoleSelect id="invite-role" defaultValue="reader" />
            </div>
            <FieldError id="invite-role-error" messages={invite?.fieldErrors.role} />
          </div>
          <div>
            <label htmlFor="invite-sites" className="block text-sm font-semibold">
              Sites (provider managers only)
            </label>
            <input id="invite-sites" name="siteCodes" placeholder={siteHint} className={`mt-1 w-64 ${inputClass}`} aria-describedby="invite-sites-error" />
            <FieldError id="invite-sites-error" messages={invite?.fieldErrors.siteCodes} />
          </div>
          <button name="intent" value="invite" disabled={busy} className="mt-6 rounded bg-accent px-4 py-1.5 font-semibold text-white">
            Send invitation
          </button>
        </Form>
      </section>

      <section aria-labelledby="members-heading">
        <h2 id="members-heading" className="text-lg font-semibold">
          Members ({members.length})
        </h2>
        <ul className="mt-2 divide-y divide-rule rounded border border-rule bg-white">
          {members.map((member) => {
            const change = errorsFor("changeRole", member.membershipId);
            const removal = errorsFor("remove", member.membershipId);
            const problem = change?.formError ?? removal?.formError;
            return (
              <li key={member.membershipId} className="flex flex-wrap items-start gap-4 p-3">
                <div className="min-w-56 flex-1">
                  <p className="font-semibold">
                    {member.name}
                    {member.membershipId === ownMembershipId && <span className="font-normal text-ink-soft"> (you)</span>}
                  </p>
                  <p className="text-sm text-ink-soft">
                    {member.login}
                    {member.email && <> · {member.email}</>} · joined {member.joined}
                  </p>
                  {problem && (
                    <p role="alert" className="mt-1 text-sm text-bad">
                      {problem}
                    </p>
                  )}
                </div>
                <Form method="post" className="flex flex-wrap items-start gap-2">
                  <input type="hidden" name="membershipId" value={member.membershipId} />
                  <label className="sr-only" htmlFor={`role-${member.membershipId}`}>
                    Role of {member.name}
                  </label>
                  <RoleSelect id={`role-${member.membershipId}`} defaultValue={member.role} />
                  <div>
                    <label className="sr-only" htmlFor={`sites-${member.membershipId}`}>
                      Sites of {member.name}
                    </label>
                    <input
                      id={`sites-${member.membershipId}`}
                      name="siteCodes"
                      defaultValue={member.siteCodes.join(", ")}
                      placeholder="Sites (provider managers)"
                      className={`w-48 ${inputClass}`}
                    />
                    <FieldError id={`sites-${member.membershipId}-error`} messages={change?.fieldErrors.siteCodes} />
                  </div>
                  <button name="intent" value="changeRole" disabled={busy} className="rounded border border-rule px-3 py-1.5 hover:bg-accent-soft">
                    Save role
                  </button>
                </Form>
                <Form method="post">
                  <input type="hidden" name="membershipId" value={member.membershipId} />
                  <button name="intent" value="remove" disabled={busy} className="rounded border border-bad/40 px-3 py-1.5 text-bad hover:bg-warn-soft">
                    Remove
                  </button>
                </Form>
              </li>
            );
          })}
        </ul>
      </section>

      <section aria-labelledby="invitations-heading">
        <h2 id="invitations-heading" className="text-lg font-semibold">
          Open invitations ({invitations.length})
        </h2>
        {invitations.length === 0 ? (
          <p className="mt-2 text-ink-soft">No invitations are waiting to be accepted.</p>
        ) : (
          <ul className="mt-2 divide-y divide-rule rounded border border-rule bg-white">
            {invitations.map((invitation) => (
              <li key={invitation.id} className="flex flex-wrap items-center gap-4 p-3">
                <span className="flex-1">
                  {invitation.email} · {ROLE_LABELS[invitation.role]}
                  {invitation.siteCodes.length > 0 && <> ({invitation.siteCodes.join(", ")})</>}
                  <span className="block text-sm text-ink-soft">Open until {invitation.expires}</span>
                </span>
                <Form method="post">
                  <input type="hidden" name="invitationId" value={invitation.id} />
                  <button name="intent" value="revoke" disabled={busy} className="rounded border border-rule px-3 py-1.5 hover:bg-accent-soft">
                    Withdraw
                  </button>
                </Form>
              </li>
            ))}
          </ul>
        )}
      </section>
    </div>
  );
}

export function meta({ data: loaderData }: Route.MetaArgs) {
  return [{ title: `Members${loaderData ? ` · ${loaderData.organisationName}` : ""} · Equilibra` }];
}
