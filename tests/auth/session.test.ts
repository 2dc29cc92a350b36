/**
 * The app's session cookie: secret from the environment or generated once into the data directory;
 * `Secure` follows the app URL's scheme; a tampered, foreign-signed or expired cookie is signed out.
 */
import { existsSync, readFileSync, statSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { getSessionStorage, getSessionUserId, resolveSessionSecret, SESSION_COOKIE_NAME, SESSION_MAX_AGE_SECONDS } from "~/auth/session.server";
import { useTestDatabase } from "../support/database";
import { AppClient } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createPerson, sessionCookieValue } from "./support/fixtures";

useTestDatabase();
const environment = useAuthEnvironment();

function requestWith(cookieValue: string): Request {
  return new Request(`${TEST_APP_URL}/welcome`, { headers: { Cookie: `${SESSION_COOKIE_NAME}=${cookieValue}` } });
}

describe("the session secret", () => {
  it("is generated on first start, kept in the data directory readable by its owner only, and reused", () => {
    const file = path.join(environment.dataDir, "session-secret");
    const first = resolveSessionSecret(environment.dataDir, undefined);
    expect(first).toMatch(/^[0-9a-f]{64}$/);
    expect(existsSync(file)).toBe(true);
    expect(statSync(file).mode & 0o077).toBe(0);
    expect(resolveSessionSecret(environment.dataDir, undefined)).toBe(first);
    expect(readFileSync(file, "utf8").trim()).toBe(first);
  });

  it("comes from SESSION_SECRET when set, and then no file is needed", () => {
    expect(resolveSessionSecret(path.join(environment.dataDir, "elsewhere"), "from-the-environment")).toBe("from-the-environment");
    expect(existsSync(path.join(environment.dataDir, "elsewhere", "session-secret"))).toBe(false);
  });

  it("a cookie signed with another secret reads as signed out", async () => {
    const user = await createPerson();
    const value = await sessionCookieValue(user.id);
    expect(await getSessionUserId(requestWith(value))).toBe(user.id);
    environment.set({ SESSION_SECRET: "a-different-secret" });
    try {
      expect(await getSessionUserId(requestWith(value))).toBeUndefined();
    } finally {
      environment.set({ SESSION_SECRET: undefined });
    }
  });
});

describe("the session cookie", () => {
  it("is Secure when the app is served over https, and not over http", async () => {
    const session = await getSessionStorage().getSession();
    expect(await getSessionStorage().commitSession(session)).not.toMatch(/;\s*Secure/i);
    environment.set({ APP_URL: "https://equilibra.example" });
    try {
      const header = await getSessionStorage().commitSession(await getSessionStorage().getSession());
      expect(header).toMatch(/;\s*Secure/i);
      expect(header).toMatch(/HttpOnly/i);
      expect(header).toMatch(/SameSite=Lax/i);
      expect(header).toMatch(new RegExp(`Max-Age=${SESSION_MAX_AGE_SECONDS}`));
    } finally {
      environment.set({ APP_URL: TEST_APP_URL });
    }
  });

  it("a tampered cookie is signed out: redirected to sign-in and the cookie removed", async () => {
    const user = await createPerson();
    const value = await sessionCookieValue(user.id);
    // Change the signed payload without re-signing it: base64 of {"userId":…} with a different id.
    const [payload, signature] = decodeURIComponent(value).split(".");
    const forged = Buffer.from(JSON.stringify({ ...JSON.parse(Buffer.from(payload, "base64").toString("utf8")), userId: user.id + 1 })).toString("base64");
    const tampered = encodeURIComponent(`${forged}.${signature}`);
    expect(await getSessionUserId(requestWith(tampered))).toBeUndefined();

    const client = new AppClient(TEST_APP_URL);
    client.setCookie(SESSION_COOKIE_NAME, tampered);
    const outcome = await client.get("/welcome");
    expect(outcome.status).toBe(302);
    expect(outcome.location).toBe(`${TEST_APP_URL}/sign-in?returnTo=%2Fwelcome`);
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);

    const garbage = new AppClient(TEST_APP_URL);
    garbage.setCookie(SESSION_COOKIE_NAME, "not-even-a-cookie");
    expect((await garbage.get("/welcome")).location).toMatch(/\/sign-in/);
  });

  it("an expired session is signed out even if the browser still sends it", async () => {
    const user = await createPerson();
    const longAgo = new Date(Date.now() - (SESSION_MAX_AGE_SECONDS + 60) * 1000);
    const value = await sessionCookieValue(user.id, { signedInAt: longAgo });
    expect(await getSessionUserId(requestWith(value))).toBeUndefined();
    const client = new AppClient(TEST_APP_URL);
    client.setCookie(SESSION_COOKIE_NAME, value);
    expect((await client.get("/welcome")).location).toMatch(/\/sign-in/);

    const recent = await sessionCookieValue(user.id, { signedInAt: new Date(Date.now() - 60_000) });
    expect(await getSessionUserId(requestWith(recent))).toBe(user.id);
  });

  it("a session for a user who no longer exists is signed out", async () => {
    const value = await sessionCookieValue(987_654_321);
    const client = new AppClient(TEST_APP_URL);
    client.setCookie(SESSION_COOKIE_NAME, value);
    expect((await client.get("/welcome")).location).toMatch(/\/sign-in/);
  });

  it("signed-in visitors skip the sign-in page", async () => {
    const user = await createPerson();
    const client = new AppClient(TEST_APP_URL);
    client.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(user.id));
    expect((await client.get("/sign-in")).location).toBe(`${TEST_APP_URL}/welcome`);
    expect((await client.get("/sign-in?returnTo=/dev/mailbox")).location).toBe(`${TEST_APP_URL}/dev/mailbox`);
  });
});
