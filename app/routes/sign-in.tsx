import { data, Form, redirect } from "react-router";
import { getAuthConfig } from "~/auth/auth-config.server";
import { getOptionalUser, landingPathFor } from "~/auth/guards.server";
import { safeReturnTo } from "~/auth/session.server";
import { EquilibraMark } from "~/components/app-shell";
import { PlanningCautions } from "~/components/planning-cautions";
import type { Route } from "./+types/sign-in";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  const returnTo = safeReturnTo(url.searchParams.get("returnTo"));
  const user = await getOptionalUser(request);
  if (user) throw redirect(returnTo ?? (await landingPathFor(user)));
  const { github } = getAuthConfig();
  return data({
    returnTo: returnTo ?? "",
    provider: github.usesLocalFake ? ("local" as const) : ("github" as const),
    available: github.oauthBaseUrl !== undefined,
  });
}

export default function SignIn({ loaderData }: Route.ComponentProps) {
  const { returnTo, provider, available } = loaderData;
  return (
    <main className="mx-auto max-w-md px-6 py-16">
      <div className="flex items-center gap-2 text-xl font-semibold">
        <EquilibraMark size={32} />
        Equilibra
      </div>
      <h1 className="mt-8 text-2xl font-semibold">Sign in</h1>
      <p className="mt-2 text-ink-soft">
        Plan elective care capacity with your commissioning team. You see only your own organisation's data.
      </p>
      {available ? (
        <Form method="post" action="/auth/github" className="mt-6">
          <input type="hidden" name="returnTo" value={returnTo} />
          <button type="submit" className="w-full rounded bg-accent px-4 py-2.5 font-semibold text-white hover:opacity-90">
            {provider === "github" ? "Sign in with GitHub" : "Sign in with the local identity provider"}
          </button>
          {provider === "local" && (
            <p className="mt-3 text-sm text-ink-soft">
              No GitHub application is configured, so a local stand-in identity provider lets you sign in as one of the
              demo people or as someone new.
            </p>
          )}
        </Form>
      ) : (
        <p role="alert" className="mt-6 rounded border border-warn bg-warn-soft p-4 text-sm">
          Sign-in is not available: no identity provider is configured. Set GITHUB_CLIENT_ID and GITHUB_CLIENT_SECRET, or
          start the app with <code>npm start</code>, which runs the local identity provider beside it.
        </p>
      )}
      <footer className="mt-16 border-t border-rule pt-4">
        <PlanningCautions compact />
      </footer>
    </main>
  );
}

export function meta() {
  return [{ title: "Sign in · Equilibra" }];
}
