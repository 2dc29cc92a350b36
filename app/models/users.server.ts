/** People who have signed in at least once, keyed by the identity provider's stable id. */
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { users } from "~/db/schema";

export type User = typeof users.$inferSelect;

export interface IdentityProfile {
  /** The provider's numeric id as text: a login can be renamed, the id cannot. */
  githubId: string;
  login: string;
  name: string | null;
  email: string | null;
}

/** Addresses are compared without regard to case or surrounding spaces. */
export function normaliseEmail(email: string): string {
  return email.trim().toLowerCase();
}

/** Creates the user on first sign-in; afterwards refreshes login, name and e-mail from the provider. */
export async function upsertUserFromProfile(profile: IdentityProfile): Promise<User> {
  const db = await getDb();
  const values = {
    githubId: profile.githubId,
    login: profile.login,
    name: profile.name,
    email: profile.email ? normaliseEmail(profile.email) : null,
  };
  const [user] = await db
    .insert(users)
    .values(values)
    .onConflictDoUpdate({
      target: users.githubId,
      set: { login: values.login, name: values.name, email: values.email },
    })
    .returning();
  return user;
}

export async function getUserById(id: number): Promise<User | undefined> {
  const db = await getDb();
  const [user] = await db.select().from(users).where(eq(users.id, id)).limit(1);
  return user;
}

/** The name to show for a person: their name when the provider gives one, else their login. */
export function displayName(user: Pick<User, "name" | "login">): string {
  return user.name?.trim() || user.login;
}
