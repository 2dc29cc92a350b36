/**
 * Authorisation helpers for every loader, action and API route. Each throws a Response the router
 * turns into a redirect or an error page:
 * - not signed in (no cookie, a tampered one, an expired session) → redirect to /sign-in;
 * - an organisation that does not exist or the person is not a member of → 404, so that
 *   another tenant's slug reveals nothing;
 * - a member whose role does not allow the action → 403.
 */
import { redirect } from "react-router";
import type { Role } from "~/db/schema";
import {
  getMembership,
  getOrganisationBySlug,
  listOrganisationsForUser,
  ROLE_LABELS,
  type Membership,
  type Organisation,
} from "~/models/organisations.server";
import { getUserById, type User } from "~/models/users.server";
import { forbidden, notFound } from "./http-errors";
import { destroySession, getSession, getSessionUserId, SESSION_COOKIE_NAME } from "./session.server";

export interface MemberContext {
  user: User;
  organisation: Organisation;
  membership: Membership;
}

/** The signed-in user, or undefined (a tampered or expired cookie counts as signed out). */
export async function getOptionalUser(request: Request): Promise<User | undefined> {
  const userId = await getSessionUserId(request);
  return userId === undefined ? undefined : getUserById(userId);
}

export async function requireUser(request: Request): Promise<User> {
  const user = await getOptionalUser(request);
  if (user) return user;
  const url = new URL(request.url);
  const returnTo = `${url.pathname.replace(/\.data$/, "")}${url.search}`;
  const headers = new Headers();
  // A cookie that no longer signs anyone in is dropped, so nothing of it lingers.
  if (request.headers.get("Cookie")?.includes(`${SESSION_COOKIE_NAME}=`)) {
    headers.append("Set-Cookie", await destroySession(await getSession(request)));
  }
  throw redirect(`/sign-in?returnTo=${encodeURIComponent(returnTo)}`, { headers });
}

export async function requireMembership(request: Request, organisationSlug: string | undefined): Promise<MemberContext> {
  const user = await requireUser(request);
  const organisation = organisationSlug ? await getOrganisationBySlug(organisationSlug) : undefined;
  if (!organisation) throw notFound();
  const membership = await getMembership(organisation.id, user.id);
  if (!membership) throw notFound();
  return { user, organisation, membership };
}

export async function requireRole(
  request: Request,
  organisationSlug: string | undefined,
  roles: readonly Role[],
): Promise<MemberContext> {
  const context = await requireMembership(request, organisationSlug);
  if (!roles.includes(context.membership.role)) {
    const allowed = roles.map((role) => ROLE_LABELS[role]).join(", ");
    throw forbidden(
      `Your role in ${context.organisation.name} (${ROLE_LABELS[context.membership.role]}) does not allow this. ` +
        `It needs one of: ${allowed}.`,
    );
  }
  return context;
}

/** Where someone lands after signing in: their first organisation, or the welcome page when they have none. */
export async function landingPathFor(user: User): Promise<string> {
  const [first] = await listOrganisationsForUser(user.id);
  return first ? `/o/${first.organisation.slug}` : "/welcome";
}
