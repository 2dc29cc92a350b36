/**
 * Where the identity provider sends people back. Success starts the app's session; any failure
 * (state mismatch, an error from the provider, a failed code exchange or profile fetch) shows what
 * went wrong and leaves no session behind.
 */
import { data, redirect } from "react-router";
import {
  clearOAuthStateCookie,
  describeSignInFailure,
  GITHUB_STRATEGY,
  getAuthenticator,
} from "~/auth/authenticator.server";
import { landingPathFor } from "~/auth/guards.server";
import { commitSession, destroySession, getSession, signIn } from "~/auth/session.server";
import type { User } from "~/models/users.server";
import type { Route } from "./+types/auth.github.callback";

export async function loader({ request }: Route.LoaderArgs) {
  const url = new URL(request.url);
  let user: User;
  try {
    // Without `state` or `error` the strategy would start a new flow; a callback must finish one.
    if (!url.searchParams.has("state") && !url.searchParams.has("error")) {
      throw new ReferenceError("Missing state in the callback URL.");
    }
    user = await getAuthenticator().authenticate(GITHUB_STRATEGY, request);
  } catch (thrown) {
    if (thrown instanceof Response) throw thrown;
    const failure = describeSignInFailure(thrown, url);
    const headers = new Headers();
    headers.append("Set-Cookie", clearOAuthStateCookie());
    headers.append("Set-Cookie", await destroySession(await getSession(request)));
    return data({ failure }, { status: failure.status, headers });
  }
  const session = await getSession(request);
  const returnTo = session.get("returnTo");
  session.unset("returnTo");
  signIn(session, user.id);
  const headers = new Headers();
  headers.append("Set-Cookie", clearOAuthStateCookie());
  headers.append("Set-Cookie", await commitSession(session));
  throw redirect(returnTo ?? (await landingPathFor(user)), { headers });
}

export default function SignInFailed({ loaderData }: Route.ComponentProps) {
  const { failure } = loaderData;
  return (
    <main className="mx-auto max-w-md px-6 py-16">
      <p className="text-sm font-semibold tracking-wide text-accent">Equilibra</p>
      <h1 className="mt-2 text-2xl font-semibold">{failure.title}</h1>
      <p role="alert" className="mt-4 rounded border border-bad/40 bg-white p-4">
        {failure.message}
      </p>
      <p className="mt-6">
        <a className="font-semibold text-accent underline" href="/sign-in">
          Start signing in again
        </a>
      </p>
    </main>
  );
}

export function meta() {
  return [{ title: "Sign-in failed · Equilibra" }];
}
