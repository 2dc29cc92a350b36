/**
 * Authorisation for the JSON API (`/api/v1/…`): the same rules as the pages, answered in JSON.
 * A caller is either the signed-in browser session (the workspace's own fetchers) or a personal
 * API token sent as `Authorization: Bearer eqb_…`.
 *
 * - no or an unknown credential → 401;
 * - an organisation that does not exist, that the person is not a member of, or that the token
 *   does not belong to → 404 (another tenant's slug reveals nothing);
 * - a role that does not allow the action → 403;
 * - a personal API token of an organisation whose plan has no API access → 403 naming the plan.
 *   Only tokens are gated: the app's own pages call the same API with the session.
 */
import type { Role } from "~/db/schema";
import { authenticateApiToken } from "~/models/api-tokens.server";
import { recordAudit } from "~/models/audit.server";
import { getMembership, getOrganisationBySlug, ROLE_LABELS, type Membership, type Organisation } from "~/models/organisations.server";
import { planRefusal } from "~/models/plan-gates.server";
import type { User } from "~/models/users.server";
import { getOptionalUser } from "./guards.server";

export interface ApiCaller {
  user: User;
  organisation: Organisation;
  membership: Membership;
  via: "session" | "token";
}

export interface ApiIssue {
  path: string;
  message: string;
}

/** The API's one error shape: `{ "error": { "status", "message", "issues"? } }`. */
export function apiError(status: number, message: string, issues?: ApiIssue[]): Response {
  return Response.json({ error: { status, message, ...(issues ? { issues } : {}) } }, { status });
}

export const API_NOT_FOUND = "Not found, or it belongs to an organisation this credential cannot reach.";

function bearerToken(request: Request): string | null | undefined {
  const header = request.headers.get("Authorization");
  if (header === null) return undefined;
  const match = /^Bearer\s+(\S+)\s*$/i.exec(header);
  return match ? match[1] : null;
}

/** The person calling, by token or session; throws a 401 response when there is neither. */
export async function requireApiUser(request: Request): Promise<{ user: User; token?: Awaited<ReturnType<typeof authenticateApiToken>> }> {
  const token = bearerToken(request);
  if (token === null) throw apiError(401, 'The Authorization header must be "Bearer <token>".');
  if (token !== undefined) {
    const holder = await authenticateApiToken(token);
    if (!holder) throw apiError(401, "The API token is not valid: it may have been revoked, or its holder is no longer a member.");
    return { user: holder.user, token: holder };
  }
  const user = await getOptionalUser(request);
  if (!user) throw apiError(401, "Sign in, or send a personal API token as Authorization: Bearer <token>.");
  return { user };
}

/** A member of the organisation `slug` (with one of `roles`, when given); throws 401/404/403 responses. */
export async function requireApiMember(request: Request, slug: string | undefined, roles?: readonly Role[]): Promise<ApiCaller> {
  const { user, token } = await requireApiUser(request);
  let organisation: Organisation | undefined;
  let membership: Membership | undefined;
  if (token) {
    // A token reaches only its own organisation.
    if (token.organisation.slug !== slug) throw apiError(404, API_NOT_FOUND);
    organisation = token.organisation;
    membership = token.membership;
    await requireApiAccess(organisation);
    // Administrators read token use in the audit log (app/routes/o.$org.audit.tsx).
    await recordAudit(organisation.id, user.id, "api_token.used", `api_token:${token.tokenId}`, { method: request.method, path: new URL(request.url).pathname });
  } else {
    organisation = slug ? await getOrganisationBySlug(slug) : undefined;
    membership = organisation ? await getMembership(organisation.id, user.id) : undefined;
    if (!organisation || !membership) throw apiError(404, API_NOT_FOUND);
  }
  if (roles && !roles.includes(membership.role)) {
    throw apiError(
      403,
      `Your role in ${organisation.name} (${ROLE_LABELS[membership.role]}) does not allow this. It needs one of: ${roles.map((role) => ROLE_LABELS[role]).join(", ")}.`,
    );
  }
  return { user, organisation, membership, via: token ? "token" : "session" };
}

/** For calls made with a personal API token: the organisation's plan must include API access (403 otherwise). */
export async function requireApiAccess(organisation: Organisation): Promise<void> {
  const refusal = await planRefusal(organisation, ["api"]);
  if (refusal) throw apiError(403, refusal.message);
}

/** Roles that may change scenarios and run them; everyone in the organisation may read. */
export const EDITOR_ROLES: readonly Role[] = ["administrator", "planner"];
