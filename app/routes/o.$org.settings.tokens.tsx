/**
 * Personal API tokens for this organisation: create one (shown once, stored only as its SHA-256)
 * and revoke it. A token acts with its holder's current role here; every member may hold tokens.
 */
import { data, Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { requireMembership } from "~/auth/guards.server";
import { createApiToken, listApiTokens, revokeApiToken } from "~/models/api-tokens.server";
import type { Route } from "./+types/o.$org.settings.tokens";

const formSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("create"), name: z.string().trim().min(1, "Name the token, e.g. “nightly export”.").max(100, "Keep the name under 100 characters.") }),
  z.object({ intent: z.literal("revoke"), tokenId: z.coerce.number().int().positive("The token is not valid.") }),
]);

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, user } = await requireMembership(request, params.org);
  const tokens = await listApiTokens(organisation.id, user.id);
  return {
    slug: organisation.slug,
    organisationName: organisation.name,
    tokens: tokens.map((token) => ({
      id: token.id,
      name: token.name,
      createdAt: token.createdAt.toISOString(),
      lastUsedAt: token.lastUsedAt?.toISOString() ?? null,
      revokedAt: token.revokedAt?.toISOString() ?? null,
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireMembership(request, params.org);
  const parsed = formSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return data({ error: parsed.error.issues.map((issue) => issue.message).join(" "), token: null, notice: null }, { status: 400 });
  if (parsed.data.intent === "create") {
    const created = await createApiToken(organisation.id, user.id, parsed.data.name);
    return { error: null, token: created.token, notice: `Created “${created.summary.name}”.` };
  }
  const revoked = await revokeApiToken(organisation.id, user.id, parsed.data.tokenId);
  if (!revoked) return data({ error: "There is no such live token of yours.", token: null, notice: null }, { status: 404 });
  return { error: null, token: null, notice: "Revoked: the token no longer works." };
}

function when(iso: string | null): string {
  return iso ? new Date(iso).toLocaleString("en-GB") : "never";
}

export default function TokensPage({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, organisationName, tokens } = loaderData;
  const busy = useNavigation().state === "submitting";
  return (
    <div className="max-w-3xl space-y-6">
      <h1 className="text-2xl font-semibold">API tokens</h1>
      <p className="text-sm text-ink-soft">
        A token lets a program call Equilibra's API for {organisationName} as you, with your role here. Send it as <code>Authorization: Bearer &lt;token&gt;</code>; see the{" "}
        <Link className="underline" to={`/o/${slug}/api`}>
          API page
        </Link>{" "}
        for examples.
      </p>
      {actionData?.token && (
        <div role="status" className="rounded border border-good bg-accent-soft p-3 text-sm">
          <p className="font-semibold">Copy the token now: it will not be shown again.</p>
          <code className="mt-1 block break-all rounded bg-white p-2" data-testid="new-token">
            {actionData.token}
          </code>
        </div>
      )}
      {actionData?.notice && !actionData.token && (
        <p role="status" className="text-sm">
          {actionData.notice}
        </p>
      )}
      {actionData?.error && (
        <p role="alert" className="text-sm text-bad">
          {actionData.error}
        </p>
      )}
      <Form method="post" className="flex flex-wrap items-end gap-2 rounded border border-rule bg-white p-4">
        <input type="hidden" name="intent" value="create" />
        <label className="text-sm">
          Token name
          <input name="name" required maxLength={100} className="mt-1 block w-72 rounded border border-rule px-2 py-1" />
        </label>
        <button disabled={busy} className="rounded bg-accent px-4 py-1.5 text-white">
          Create token
        </button>
      </Form>
      <table className="min-w-full rounded border border-rule bg-white text-sm" aria-label="Your API tokens">
        <thead className="bg-accent-soft/60 text-left">
          <tr>
            <th className="px-3 py-1.5">Name</th>
            <th className="px-3 py-1.5">Created</th>
            <th className="px-3 py-1.5">Last used</th>
            <th className="px-3 py-1.5">State</th>
            <th className="px-3 py-1.5" aria-label="Actions" />
          </tr>
        </thead>
        <tbody>
          {tokens.length === 0 && (
            <tr>
              <td colSpan={5} className="px-3 py-2 text-ink-soft">
                You have no tokens for this organisation.
              </td>
            </tr>
          )}
          {tokens.map((token) => (
            <tr key={token.id} className="border-t border-rule/60">
              <td className="px-3 py-1.5">{token.name}</td>
              <td className="px-3 py-1.5">{when(token.createdAt)}</td>
              <td className="px-3 py-1.5">{when(token.lastUsedAt)}</td>
              <td className="px-3 py-1.5">{token.revokedAt ? `revoked ${when(token.revokedAt)}` : "live"}</td>
              <td className="px-3 py-1.5 text-right">
                {!token.revokedAt && (
                  <Form method="post">
                    <input type="hidden" name="intent" value="revoke" />
                    <input type="hidden" name="tokenId" value={token.id} />
                    <button disabled={busy} className="text-bad underline" aria-label={`Revoke ${token.name}`}>
                      Revoke
                    </button>
                  </Form>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

export function meta() {
  return [{ title: "API tokens · Equilibra" }];
}
