/**
 * The link from an invitation e-mail. Accepting joins the organisation; a link that was used,
 * withdrawn, has expired or was sent to another address says so and joins nothing.
 */
import { data, Form, redirect } from "react-router";
import { requireUser } from "~/auth/guards.server";
import { acceptInvitation, findInvitationByToken, invitationProblem, type InvitationProblem } from "~/models/invitations.server";
import { getMembership } from "~/models/organisations.server";
import { ROLE_LABELS } from "~/models/roles";
import type { Route } from "./+types/invitations.$token";

const NOT_FOUND = "This invitation link is not valid. Check that you copied the whole link from the e-mail.";

const STATUS_BY_PROBLEM: Record<InvitationProblem, number> = {
  not_found: 404,
  used: 410,
  revoked: 410,
  expired: 410,
  other_address: 403,
  already_member: 409,
};

export async function loader({ request, params }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const found = await findInvitationByToken(params.token);
  if (!found) return data({ problem: NOT_FOUND, invitation: null }, { status: STATUS_BY_PROBLEM.not_found });
  const { invitation, organisationName, organisationSlug } = found;
  const problem = invitationProblem(invitation, user, new Date());
  if (problem) return data({ problem: problem.message, invitation: null }, { status: STATUS_BY_PROBLEM[problem.problem] });
  if (await getMembership(invitation.organisationId, user.id)) {
    return data(
      { problem: `You are already a member of ${organisationName}; this invitation is not needed.`, invitation: null },
      { status: STATUS_BY_PROBLEM.already_member },
    );
  }
  return data({
    problem: null,
    invitation: {
      organisationName,
      organisationSlug,
      role: ROLE_LABELS[invitation.role],
      siteCodes: invitation.siteCodes,
      expires: invitation.expiresAt.toISOString().slice(0, 10),
    },
  });
}

export async function action({ request, params }: Route.ActionArgs) {
  const user = await requireUser(request);
  const result = await acceptInvitation({ token: params.token }, user);
  if (result.ok) throw redirect(`/o/${result.organisationSlug}`);
  return data({ problem: result.message, invitation: null }, { status: STATUS_BY_PROBLEM[result.problem] });
}

export default function InvitationPage({ loaderData, actionData }: Route.ComponentProps) {
  const problem = actionData?.problem ?? loaderData.problem;
  const invitation = actionData ? null : loaderData.invitation;
  return (
    <main className="mx-auto max-w-lg px-6 py-16">
      <p className="text-sm font-semibold tracking-wide text-accent">Equilibra</p>
      {problem || !invitation ? (
        <>
          <h1 className="mt-2 text-2xl font-semibold">This invitation cannot be used</h1>
          <p role="alert" className="mt-4 rounded border border-bad/40 bg-white p-4">
            {problem}
          </p>
          <p className="mt-6">
            <a className="text-accent underline" href="/welcome">
              Go to your start page
            </a>
          </p>
        </>
      ) : (
        <>
          <h1 className="mt-2 text-2xl font-semibold">Join {invitation.organisationName}</h1>
          <p className="mt-4">
            You are invited as <strong>{invitation.role.toLowerCase()}</strong>
            {invitation.siteCodes.length > 0 && <> for the sites {invitation.siteCodes.join(", ")}</>}. The invitation is
            open until {invitation.expires}.
          </p>
          <Form method="post" className="mt-6">
            <button type="submit" className="rounded bg-accent px-4 py-2 font-semibold text-white">
              Accept and join {invitation.organisationName}
            </button>
          </Form>
        </>
      )}
    </main>
  );
}

export function meta() {
  return [{ title: "Invitation · Equilibra" }];
}
