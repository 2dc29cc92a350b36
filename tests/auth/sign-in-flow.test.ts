/**
 * The whole OAuth web flow through our routes and the fake identity provider on a loopback port:
 * redirect with a state cookie, the provider's page, the code exchange, the profile fetch, the app's
 * own session — and each way it can fail leaving no session (RFC 6749 §4.1 and §10.12 on `state`).
 */
import { eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { OAUTH_STATE_COOKIE } from "~/auth/authenticator.server";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { users } from "~/db/schema";
import { DEMO_PEOPLE } from "~/fakes/demo-people";
import { useTestDatabase } from "../support/database";
import { AppClient, hiddenFormFields, type Outcome } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createTenant } from "./support/fixtures";

const database = useTestDatabase();
const environment = useAuthEnvironment({ fake: true });

/** Starts signing in and returns the identity provider's authorize page. */
async function openProviderPage(client: AppClient, returnTo = ""): Promise<Outcome> {
  const started = await client.post("/auth/github", { returnTo });
  expect(started.status).toBe(302);
  expect(started.location?.startsWith(`${environment.fakeUrl}/login/oauth/authorize?`)).toBe(true);
  const page = await client.get(started.location!);
  expect(page.status).toBe(200);
  return page;
}

/** Chooses a person on the provider's page; returns the provider's redirect back to the app. */
async function choosePerson(client: AppClient, page: Outcome, choice: Record<string, string>): Promise<Outcome> {
  const answer = await client.post(`${environment.fakeUrl}/login/oauth/authorize`, { ...hiddenFormFields(page.text!), ...choice });
  expect(answer.status).toBe(302);
  return answer;
}

describe("signing in through the fake identity provider", () => {
  it("creates the user on first sign-in, starts a signed httpOnly SameSite=Lax session and offers the welcome page", async () => {
    const client = new AppClient(TEST_APP_URL);
    const signInPage = await client.get("/sign-in");
    expect(signInPage.data).toMatchObject({ provider: "local", available: true });

    const page = await openProviderPage(client);
    expect(client.cookies.has(OAUTH_STATE_COOKIE)).toBe(true);
    for (const person of DEMO_PEOPLE) expect(page.text).toContain(person.login);

    const planner = DEMO_PEOPLE.find((person) => person.role === "planner")!;
    const back = await choosePerson(client, page, { person: planner.login });
    expect(back.location?.startsWith(`${TEST_APP_URL}/auth/github/callback?code=`)).toBe(true);

    const callback = await client.get(back.location!);
    expect(callback.status).toBe(302);
    expect(callback.location).toBe(`${TEST_APP_URL}/welcome`);
    const sessionCookie = callback.headers.getSetCookie().find((line) => line.startsWith(`${SESSION_COOKIE_NAME}=`))!;
    expect(sessionCookie).toMatch(/HttpOnly/i);
    expect(sessionCookie).toMatch(/SameSite=Lax/i);
    expect(sessionCookie).not.toMatch(/Secure/i); // the app URL is http
    expect(client.cookies.has(OAUTH_STATE_COOKIE)).toBe(false); // used once, then cleared

    const [stored] = await database.db.select().from(users).where(eq(users.githubId, String(planner.githubId)));
    expect(stored).toMatchObject({ login: planner.login, name: planner.name, email: planner.email.toLowerCase() });

    const welcome = await client.follow(callback);
    expect(welcome.status).toBe(200);
    expect(welcome.data).toMatchObject({ name: planner.name, organisations: [], invitations: [] });
  });

  it("recognises the local provider by its loopback address when the start script passes its client id", async () => {
    environment.set({ GITHUB_CLIENT_ID: "equilibra-local", GITHUB_CLIENT_SECRET: "equilibra-local-secret" });
    try {
      expect((await new AppClient(TEST_APP_URL).get("/sign-in")).data).toMatchObject({ provider: "local", available: true });
    } finally {
      environment.set({ GITHUB_CLIENT_ID: undefined, GITHUB_CLIENT_SECRET: undefined });
    }
  });

  it("signs in a new person typed on the provider's page, and the same person again as the same user", async () => {
    const login = `newcomer${process.pid}`;
    const ids: number[] = [];
    for (let attempt = 0; attempt < 2; attempt++) {
      const client = new AppClient(TEST_APP_URL);
      const page = await openProviderPage(client);
      const back = await choosePerson(client, page, { new_person: "1", new_login: login, new_name: "Nell Quarry", new_email: "Nell.Quarry@Example.org" });
      await client.follow(await client.get(back.location!));
      const welcome = await client.get("/welcome");
      expect(welcome.data).toMatchObject({ name: "Nell Quarry", email: "nell.quarry@example.org" });
      const rows = await database.db.select().from(users).where(eq(users.login, login));
      expect(rows).toHaveLength(1);
      ids.push(rows[0].id);
    }
    expect(ids[0]).toBe(ids[1]);
  });

  it("returns to the page that asked for sign-in, and sends members to their organisation by default", async () => {
    const tenant = await createTenant("Flow");
    // Make a demo person a member so that their default landing is the organisation.
    const reader = DEMO_PEOPLE.find((person) => person.role === "reader")!;
    const client = new AppClient(TEST_APP_URL);
    const first = await client.follow(await client.get((await choosePerson(client, await openProviderPage(client), { person: reader.login })).location!));
    expect(first.url).toBe(`${TEST_APP_URL}/welcome`);

    const [user] = await database.db.select().from(users).where(eq(users.githubId, String(reader.githubId)));
    const { memberships } = await import("~/db/schema");
    await database.db.insert(memberships).values({ organisationId: tenant.organisation.id, userId: user.id, role: "reader" });

    const again = new AppClient(TEST_APP_URL);
    const landing = await again.get((await choosePerson(again, await openProviderPage(again), { person: reader.login })).location!);
    expect(landing.location).toBe(`${TEST_APP_URL}/o/${tenant.organisation.slug}`);

    const guarded = await new AppClient(TEST_APP_URL).get("/welcome");
    expect(guarded.location).toBe(`${TEST_APP_URL}/sign-in?returnTo=%2Fwelcome`);
    const withReturn = new AppClient(TEST_APP_URL);
    const page = await openProviderPage(withReturn, "/invitations/some-token");
    const back = await withReturn.get((await choosePerson(withReturn, page, { person: reader.login })).location!);
    expect(back.location).toBe(`${TEST_APP_URL}/invitations/some-token`);

    // An off-site return address is ignored rather than followed.
    const offSite = new AppClient(TEST_APP_URL);
    const offSitePage = await openProviderPage(offSite, "//elsewhere.example/steal");
    const offSiteBack = await offSite.get((await choosePerson(offSite, offSitePage, { person: reader.login })).location!);
    expect(offSiteBack.location).toBe(`${TEST_APP_URL}/o/${tenant.organisation.slug}`);
  });

  it("signs out: the session cookie is removed and guarded pages redirect to sign-in", async () => {
    const client = new AppClient(TEST_APP_URL);
    const page = await openProviderPage(client);
    await client.follow(await client.get((await choosePerson(client, page, { person: DEMO_PEOPLE[0].login })).location!));
    expect((await client.get("/welcome")).status).toBe(200);
    const out = await client.post("/sign-out");
    expect(out.location).toBe(`${TEST_APP_URL}/`);
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);
    expect((await client.get("/welcome")).location).toMatch(/\/sign-in\?returnTo=/);
  });
});

describe("sign-in failures show a clear page and leave no session", () => {
  async function expectNoSession(client: AppClient, outcome: Outcome, status: number, title: RegExp) {
    expect(outcome.status).toBe(status);
    expect(outcome.data).toMatchObject({ failure: { title: expect.stringMatching(title) } });
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(false);
    expect(client.cookies.has(OAUTH_STATE_COOKIE)).toBe(false);
    expect((await client.get("/welcome")).location).toMatch(/\/sign-in/);
  }

  it("refuses a callback whose state differs from the state cookie", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[1].login });
    const tampered = new URL(back.location!);
    tampered.searchParams.set("state", "forged-state");
    const outcome = await client.get(tampered.toString());
    await expectNoSession(client, outcome, 400, /could not be matched/);
    expect((outcome.data as { failure: { message: string } }).failure.message).toMatch(/not signed in/);
  });

  it("refuses a callback that arrives without the state cookie (another browser)", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[1].login });
    const otherBrowser = new AppClient(TEST_APP_URL);
    await expectNoSession(otherBrowser, await otherBrowser.get(back.location!), 400, /could not be matched/);
  });

  it("refuses a callback with neither state nor error", async () => {
    const client = new AppClient(TEST_APP_URL);
    await expectNoSession(client, await client.get("/auth/github/callback?code=abc"), 400, /could not be matched/);
  });

  it("reports the provider's error when the person cancels there", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { deny: "1" });
    expect(back.location).toContain("error=access_denied");
    await expectNoSession(client, await client.get(back.location!), 400, /cancelled/);
  });

  it("reports a failed token exchange when the code is replayed", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[2].login });
    const stateCookie = client.cookies.get(OAUTH_STATE_COOKIE)!;
    await client.get(back.location!); // signs in and uses the code
    const attacker = new AppClient(TEST_APP_URL);
    attacker.setCookie(OAUTH_STATE_COOKIE, stateCookie);
    const replay = await attacker.get(back.location!);
    await expectNoSession(attacker, replay, 502, /refused/);
    expect((replay.data as { failure: { message: string } }).failure.message).toContain("bad_verification_code");
  });

  it("reports a failed token exchange when the app's client secret is wrong", async () => {
    environment.set({ GITHUB_CLIENT_SECRET: "not-the-secret" });
    try {
      const client = new AppClient(TEST_APP_URL);
      const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[2].login });
      const outcome = await client.get(back.location!);
      await expectNoSession(client, outcome, 502, /refused/);
      expect((outcome.data as { failure: { message: string } }).failure.message).toContain("incorrect_client_credentials");
    } finally {
      environment.set({ GITHUB_CLIENT_SECRET: undefined });
    }
  });

  it("reports an unreachable provider during the code exchange", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[2].login });
    environment.set({ GITHUB_OAUTH_BASE_URL: "http://127.0.0.1:9" }); // the discard port: nothing listens
    try {
      await expectNoSession(client, await client.get(back.location!), 502, /could not be reached/);
    } finally {
      environment.set({ GITHUB_OAUTH_BASE_URL: environment.fakeUrl });
    }
  });

  it("reports a profile endpoint that refuses the token", async () => {
    const client = new AppClient(TEST_APP_URL);
    const back = await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[2].login });
    environment.set({ GITHUB_API_URL: `${environment.fakeUrl}/nowhere` });
    try {
      await expectNoSession(client, await client.get(back.location!), 502, /profile could not be read/);
    } finally {
      environment.set({ GITHUB_API_URL: environment.fakeUrl });
    }
  });

  it("drops an existing session when a later sign-in fails", async () => {
    const client = new AppClient(TEST_APP_URL);
    await client.follow(await client.get((await choosePerson(client, await openProviderPage(client), { person: DEMO_PEOPLE[3].login })).location!));
    expect(client.cookies.has(SESSION_COOKIE_NAME)).toBe(true);
    const back = await choosePerson(client, await openProviderPage(client), { deny: "1" });
    await expectNoSession(client, await client.get(back.location!), 400, /cancelled/);
  });
});
