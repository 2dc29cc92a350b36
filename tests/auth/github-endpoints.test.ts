/**
 * With real GitHub credentials configured, sign-in talks to GitHub's own endpoints (github.com for
 * OAuth, api.github.com for the profile), mocked here with nock as GitHub documents them
 * ("Authorizing OAuth apps", web application flow; REST "Get the authenticated user",
 * "List email addresses for the authenticated user"). GitHub reports token errors with status 200.
 */
import { eq } from "drizzle-orm";
import nock from "nock";
import { afterAll, afterEach, beforeAll, describe, expect, it } from "vitest";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { users } from "~/db/schema";
import { useTestDatabase } from "../support/database";
import { AppClient } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";

const database = useTestDatabase();
useAuthEnvironment({ variables: { GITHUB_CLIENT_ID: "Iv1.equilibratest", GITHUB_CLIENT_SECRET: "test-client-secret" } });

beforeAll(() => nock.disableNetConnect());
afterEach(() => nock.cleanAll());
afterAll(() => nock.enableNetConnect());

const basicCredentials = `Basic ${Buffer.from("Iv1.equilibratest:test-client-secret").toString("base64")}`;

/** Starts signing in; returns the state GitHub would send back. */
async function startAtGitHub(client: AppClient): Promise<string> {
  const started = await client.post("/auth/github", { returnTo: "" });
  const authorize = new URL(started.location!);
  expect(`${authorize.origin}${authorize.pathname}`).toBe("https://github.com/login/oauth/authorize");
  expect(authorize.searchParams.get("client_id")).toBe("Iv1.equilibratest");
  expect(authorize.searchParams.get("redirect_uri")).toBe(`${TEST_APP_URL}/auth/github/callback`);
  expect(authorize.searchParams.get("scope")).toBe("read:user user:email");
  return authorize.searchParams.get("state")!;
}

describe("sign-in against GitHub's endpoints", () => {
  it("exchanges the code with client credentials, reads the profile and the primary verified e-mail", async () => {
    const client = new AppClient(TEST_APP_URL);
    expect((await client.get("/sign-in")).data).toMatchObject({ provider: "github", available: true });
    const state = await startAtGitHub(client);

    const github = nock("https://github.com")
      .post("/login/oauth/access_token", (body: Record<string, string>) => body.code === "gh-code-1" && body.grant_type === "authorization_code" && body.redirect_uri === `${TEST_APP_URL}/auth/github/callback`)
      .matchHeader("authorization", basicCredentials)
      .matchHeader("accept", "application/json")
      .reply(200, { access_token: "gho_testtoken", token_type: "bearer", scope: "read:user,user:email" });
    const api = nock("https://api.github.com")
      .get("/user")
      .matchHeader("authorization", "Bearer gho_testtoken")
      .reply(200, { id: 4242, login: "tamsin-ordway", name: null, email: null })
      .get("/user/emails")
      .matchHeader("authorization", "Bearer gho_testtoken")
      .reply(200, [
        { email: "old@example.org", primary: false, verified: true },
        { email: "Tamsin@Example.org", primary: true, verified: true },
      ]);

    const callback = await client.get(`/auth/github/callback?code=gh-code-1&state=${state}`);
    expect(callback.status).toBe(302);
    expect(callback.location).toBe(`${TEST_APP_URL}/welcome`);
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(true);
    expect(github.isDone()).toBe(true);
    expect(api.isDone()).toBe(true);
    const [user] = await database.db.select().from(users).where(eq(users.githubId, "4242"));
    expect(user).toMatchObject({ login: "tamsin-ordway", name: null, email: "tamsin@example.org" });
  });

  it("shows GitHub's token error (status 200 with an error) and starts no session", async () => {
    const client = new AppClient(TEST_APP_URL);
    const state = await startAtGitHub(client);
    nock("https://github.com")
      .post("/login/oauth/access_token")
      .reply(200, { error: "bad_verification_code", error_description: "The code passed is incorrect or expired.", error_uri: "https://docs.github.com/" });
    const outcome = await client.get(`/auth/github/callback?code=stale&state=${state}`);
    expect(outcome.status).toBe(502);
    expect(outcome.data).toMatchObject({ failure: { message: expect.stringContaining("The code passed is incorrect or expired.") } });
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);
  });

  it("treats a server error from the token endpoint as an unreachable provider", async () => {
    const client = new AppClient(TEST_APP_URL);
    const state = await startAtGitHub(client);
    nock("https://github.com").post("/login/oauth/access_token").reply(503, "Service unavailable");
    const outcome = await client.get(`/auth/github/callback?code=any&state=${state}`);
    expect(outcome.status).toBe(502);
    expect(outcome.data).toMatchObject({ failure: { title: "The identity provider could not be reached" } });
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);
  });

  it("refuses a profile without an id", async () => {
    const client = new AppClient(TEST_APP_URL);
    const state = await startAtGitHub(client);
    nock("https://github.com").post("/login/oauth/access_token").reply(200, { access_token: "gho_x", token_type: "bearer", scope: "" });
    nock("https://api.github.com").get("/user").reply(401, { message: "Bad credentials" });
    const outcome = await client.get(`/auth/github/callback?code=any&state=${state}`);
    expect(outcome.status).toBe(502);
    expect(outcome.data).toMatchObject({ failure: { message: expect.stringContaining("status 401") } });
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);
  });
});
