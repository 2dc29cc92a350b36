/**
 * For someone signed in: create an organisation (and become its administrator), accept an invitation
 * addressed to their e-mail, or go to an organisation they already belong to.
 */
import { data, Form, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { requireUser } from "~/auth/guards.server";
import { acceptInvitation, listInvitationsForUser } from "~/models/invitations.server";
import { createOrganisation, listOrganisationsForUser } from "~/models/organisations.server";
import { ROLE_LABELS } from "~/models/roles";
import { displayName } from "~/models/users.server";
import type { Route } from "./+types/welcome";

const welcomeFormSchema = z.discriminatedUnion("intent", [
  z.object({
    intent: z.literal("create"),
    name: z
      .string()
      .trim()
      .min(2, "Give the organisation a name of at least 2 characters.")
      .max(80, "Keep the organisation's name to 80 characters or fewer."),
  }),
  z.object({
    intent: z.literal("accept"),
    invitationId: z.coerce.number().int().positive("That invitation is not valid."),
  }),
]);

export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  const [organisations, invitations] = await Promise.all([listOrganisationsForUser(user.id), listInvitationsForUser(user)]);
  return {
    name: displayName(user),
    email: user.email,
    organisations: organisations.map(({ organisation, role }) => ({ slug: organisation.slug, name: organisation.name, role: ROLE_LABELS[role] })),
    invitations: invitations.map(({ invitation, organisationName }) => ({
      id: invitation.id,
      organisationName,
      role: ROLE_LABELS[invitation.role],
      siteCodes: invitation.siteCodes,
      expires: invitation.expiresAt.toISOString().slice(0, 10),
    })),
  };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireUser(request);
  const parsed = welcomeFormSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) {
    const { fieldErrors, formErrors } = z.flattenError(parsed.error);
    return data({ fieldErrors, formError: formErrors[0] ?? null }, { status: 400 });
  }
  if (parsed.data.intent === "create") {
    const organisation = await createOrganisation(parsed.data.name, user.id);
    throw redirect(`/o/${organisation.slug}`);
  }
  const result = await acceptInvitation({ invitationId: parsed.data.invitationId }, user);
  if (result.ok) throw redirect(`/o/${result.organisationSlug}`);
  return data(
    { fieldErrors: {} as Record<string, string[]>, formError: result.message },
    { status: result.problem === "not_found" ? 404 : 409 },
  );
}

export default function Welcome({ loaderData, actionData }: Route.ComponentProps) {
  const { name, email, organisations, invitations } = loaderData;
  const busy = useNavigation().state === "submitting";
  const nameError = actionData?.fieldErrors && "name" in actionData.fieldErrors ? actionData.fieldErrors.name?.[0] : undefined;
  return (
    <main className="mx-auto max-w-2xl px-6 py-12">
      <p className="text-sm font-semibold tracking-wide text-accent">Equilibra</p>
      <h1 className="mt-2 text-2xl font-semibold">Welcome, {name}</h1>
      {actionData?.formError && (
        <p role="alert" className="mt-4 rounded border border-bad/40 bg-white p-3 text-bad">
          {actionData.formError}
        </p>
      )}

      {organisations.length > 0 && (
        <section className="mt-8">
          <h2 className="text-lg font-semibold">Your organisations</h2>
          <ul className="mt-2 space-y-1">
            {organisations.map((organisation) => (
              <li key={organisation.slug}>
                <a className="text-accent underline" href={`/o/${organisation.slug}`}>
                  {organisation.name}
                </a>{" "}
                <span className="text-sm text-ink-soft">· {organisation.role}</span>
              </li>
            ))}
          </ul>
        </section>
      )}

      <section className="mt-8">
        <h2 className="text-lg font-semibold">Invitations to {email ?? "you"}</h2>
        {invitations.length === 0 ? (
          <p className="mt-2 text-ink-soft">
            {email
              ? "No open invitations are addressed to you. An administrator can invite you from their organisation's members page."
              : "Your account has no public e-mail address, so invitations cannot be matched to you; open the link from the invitation e-mail instead."}
          </p>
        ) : (
          <ul className="mt-2 space-y-2">
            {invitations.map((invitation) => (
              <li key={invitation.id} className="flex flex-wrap items-center gap-3 rounded border border-rule bg-white p-3">
                <span className="flex-1">
                  <strong>{invitation.organisationName}</strong> as {invitation.role.toLowerCase()}
                  {invitation.siteCodes.length > 0 && <> for {invitation.siteCodes.join(", ")}</>}
                  <span className="block text-sm text-ink-soft">Open until {invitation.expires}</span>
                </span>
                <Form method="post">
                  <input type="hidden" name="invitationId" value={invitation.id} />
                  <button name="intent" value="accept" disabled={busy} className="rounded bg-accent px-3 py-1.5 font-semibold text-white">
                    Accept and join
                  </button>
                </Form>
              </li>
            ))}
          </ul>
        )}
      </section>

      <section className="mt-8">
        <h2 className="text-lg font-semibold">Create an organisation</h2>
        <p className="mt-1 text-sm text-ink-soft">For a commissioning body new to Equilibra. You become its administrator and can invite your colleagues.</p>
        <Form method="post" className="mt-3 flex flex-wrap items-start gap-3">
          <div className="flex-1">
            <label htmlFor="organisation-name" className="block text-sm font-semibold">
              Name of the organisation
            </label>
            <input
              id="organisation-name"
              name="name"
              required
              maxLength={80}
              aria-invalid={nameError ? true : undefined}
              aria-describedby={nameError ? "organisation-name-error" : undefined}
              className="mt-1 w-full rounded border border-rule px-3 py-2"
            />
            {nameError && (
              <p id="organisation-name-error" className="mt-1 text-sm text-bad">
                {nameError}
              </p>
            )}
          </div>
          <button name="intent" value="create" disabled={busy} className="mt-6 rounded bg-accent px-4 py-2 font-semibold text-white">
            Create
          </button>
        </Form>
      </section>
    </main>
  );
}

export function meta() {
  return [{ title: "Welcome · Equilibra" }];
}
