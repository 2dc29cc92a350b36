/** Starts the OAuth flow: remembers where to return, then redirects to the identity provider. */
import { redirect } from "react-router";
import { GITHUB_STRATEGY, getAuthenticator, IdentityProviderNotConfiguredError } from "~/auth/authenticator.server";
import { commitSession, getSession, safeReturnTo } from "~/auth/session.server";
import type { Route } from "./+types/auth.github";

async function startSignIn(request: Request, returnTo: unknown): Promise<never> {
  const session = await getSession(request);
  const target = safeReturnTo(returnTo);
  if (target) session.set("returnTo", target);
  else session.unset("returnTo");
  try {
    // remix-auth copies the request, which fails once a form body has been read; the flow needs only URL and cookies.
    await getAuthenticator().authenticate(GITHUB_STRATEGY, new Request(request.url, { headers: request.headers }));
  } catch (thrown) {
    if (thrown instanceof IdentityProviderNotConfiguredError) throw redirect("/sign-in");
    if (thrown instanceof Response) {
      // The strategy's redirect carries its state cookie; add ours so the return address survives the trip.
      thrown.headers.append("Set-Cookie", await commitSession(session));
      throw thrown;
    }
    throw thrown;
  }
  // Without `state` in the URL the strategy always redirects; reaching here means a stray callback.
  throw redirect("/sign-in");
}

export async function loader({ request }: Route.LoaderArgs) {
  return startSignIn(request, new URL(request.url).searchParams.get("returnTo"));
}

export async function action({ request }: Route.ActionArgs) {
  const form = await request.formData();
  return startSignIn(request, form.get("returnTo"));
}
