import { redirect } from "react-router";
import { destroySession, getSession } from "~/auth/session.server";
import type { Route } from "./+types/sign-out";

export async function action({ request }: Route.ActionArgs) {
  const session = await getSession(request);
  throw redirect("/", { headers: { "Set-Cookie": await destroySession(session) } });
}

/** Signing out changes state, so it takes a POST; a plain visit just goes home. */
export function loader() {
  throw redirect("/");
}
