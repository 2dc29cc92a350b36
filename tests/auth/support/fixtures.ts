/** Rows for auth tests: people, organisations with a member in every role, and session cookies. */
import { and, eq } from "drizzle-orm";
import { ROLES, memberships, type Role } from "~/db/schema";
import { getDb } from "~/db/client.server";
import { commitSession, getSessionStorage, SESSION_COOKIE_NAME, signIn } from "~/auth/session.server";
import { createOrganisation, type Organisation } from "~/models/organisations.server";
import { upsertUserFromProfile, type User } from "~/models/users.server";

let counter = 0;
/** Unique within a test file: every fixture gets its own person and slug. */
export function unique(prefix: string): string {
  counter += 1;
  return `${prefix}-${process.pid}-${counter}`;
}

export async function createPerson(overrides: Partial<{ login: string; name: string; email: string | null }> = {}): Promise<User> {
  const login = overrides.login ?? unique("person");
  return upsertUserFromProfile({
    githubId: String(500_000_000 + Math.floor(Math.random() * 1e8)) + login,
    login,
    name: overrides.name ?? `Name of ${login}`,
    email: overrides.email === undefined ? `${login}@example.org` : overrides.email,
  });
}

export interface Tenant {
  organisation: Organisation;
  members: Record<Role, { user: User; membershipId: number }>;
}

/** An organisation whose name contains `label`, with one member per role (the administrator created it). */
export async function createTenant(label: string, siteCodes: string[] = ["ZZS1"]): Promise<Tenant> {
  const db = await getDb();
  const administrator = await createPerson({ login: unique(`${label}-administrator`) });
  const organisation = await createOrganisation(`${label} ${unique("Commissioning")}`, administrator.id);
  const members = {} as Tenant["members"];
  for (const role of ROLES) {
    const user = role === "administrator" ? administrator : await createPerson({ login: unique(`${label}-${role}`) });
    if (role === "administrator") {
      const [row] = await db.select().from(memberships).where(eqMembership(organisation.id, user.id));
      members[role] = { user, membershipId: row.id };
    } else {
      const [row] = await db
        .insert(memberships)
        .values({ organisationId: organisation.id, userId: user.id, role, siteCodes: role === "provider_manager" ? siteCodes : [] })
        .returning();
      members[role] = { user, membershipId: row.id };
    }
  }
  return { organisation, members };
}

function eqMembership(organisationId: number, userId: number) {
  return and(eq(memberships.organisationId, organisationId), eq(memberships.userId, userId));
}

/** The `name=value` of a session cookie signing in `userId` (optionally already expired). */
export async function sessionCookieValue(userId: number, options: { signedInAt?: Date } = {}): Promise<string> {
  const session = await getSessionStorage().getSession();
  signIn(session, userId, options.signedInAt ?? new Date());
  const header = await commitSession(session);
  const pair = header.split(";")[0];
  return pair.slice(SESSION_COOKIE_NAME.length + 1);
}
