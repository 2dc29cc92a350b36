/**
 * The app's own session: a signed, httpOnly, SameSite=Lax cookie holding the signed-in user's id.
 * remix-auth only proves who someone is; keeping them signed in is this module's job.
 *
 * A cookie whose signature does not verify (tampered, or signed with an old secret) parses as an
 * empty session, and a session past its `expiresAt` is ignored: both read as "signed out".
 */
import { randomBytes } from "node:crypto";
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import { createCookieSessionStorage, type Session, type SessionStorage } from "react-router";
import { getAuthConfig } from "./auth-config.server";

export const SESSION_COOKIE_NAME = "equilibra_session";
/** Two weeks: long enough for a working fortnight, short enough that a lost laptop's cookie lapses. */
export const SESSION_MAX_AGE_SECONDS = 14 * 24 * 60 * 60;

export interface SessionData {
  userId: number;
  /** Epoch milliseconds; checked on the server because a copied cookie ignores the browser's expiry. */
  expiresAt: number;
  /** Where to go after signing in (a local path). */
  returnTo: string;
}

export type AppSession = Session<SessionData>;

/**
 * SESSION_SECRET when set; otherwise a secret generated on first start and kept in the data
 * directory, so that sessions survive restarts without anyone having to invent a secret.
 * Several app instances sharing one PostgreSQL database must share SESSION_SECRET instead.
 */
export function resolveSessionSecret(dataDir: string, fromEnvironment: string | undefined): string {
  if (fromEnvironment) return fromEnvironment;
  const file = path.join(path.resolve(dataDir), "session-secret");
  try {
    return readFileSync(file, "utf8").trim();
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== "ENOENT") throw error;
  }
  mkdirSync(path.dirname(file), { recursive: true });
  const secret = randomBytes(32).toString("hex");
  try {
    // "wx": if another process wrote the file in the meantime, keep its secret rather than ours.
    writeFileSync(file, `${secret}\n`, { flag: "wx", mode: 0o600 });
    return secret;
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === "EEXIST") return readFileSync(file, "utf8").trim();
    throw error;
  }
}

const storages = new Map<string, SessionStorage<SessionData>>();

export function getSessionStorage(): SessionStorage<SessionData> {
  const config = getAuthConfig();
  const secret = resolveSessionSecret(config.dataDir, config.sessionSecret);
  const key = `${config.secureCookies}:${secret}`;
  let storage = storages.get(key);
  if (!storage) {
    storage = createCookieSessionStorage<SessionData>({
      cookie: {
        name: SESSION_COOKIE_NAME,
        httpOnly: true,
        sameSite: "lax",
        path: "/",
        secure: config.secureCookies,
        secrets: [secret],
        maxAge: SESSION_MAX_AGE_SECONDS,
      },
    });
    storages.set(key, storage);
  }
  return storage;
}

export function getSession(request: Request): Promise<AppSession> {
  return getSessionStorage().getSession(request.headers.get("Cookie"));
}

export function commitSession(session: AppSession): Promise<string> {
  return getSessionStorage().commitSession(session);
}

export function destroySession(session: AppSession): Promise<string> {
  return getSessionStorage().destroySession(session);
}

/** The signed-in user's id, or undefined when the cookie is missing, tampered with or expired. */
export async function getSessionUserId(request: Request, now: Date = new Date()): Promise<number | undefined> {
  const session = await getSession(request);
  const userId = session.get("userId");
  const expiresAt = session.get("expiresAt");
  if (typeof userId !== "number" || typeof expiresAt !== "number") return undefined;
  if (expiresAt <= now.getTime()) return undefined;
  return userId;
}

/** Marks the session as signed in; the caller commits it. */
export function signIn(session: AppSession, userId: number, now: Date = new Date()): void {
  session.set("userId", userId);
  session.set("expiresAt", now.getTime() + SESSION_MAX_AGE_SECONDS * 1000);
}

/** Accepts only same-site paths, so that `returnTo` cannot send someone to another site. */
export function safeReturnTo(value: unknown): string | undefined {
  if (typeof value !== "string") return undefined;
  if (!value.startsWith("/") || value.startsWith("//") || value.startsWith("/\\")) return undefined;
  return value;
}
