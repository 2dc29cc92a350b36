/**
 * The fake identity provider checks requests as GitHub documents for OAuth apps ("Authorizing OAuth
 * apps" and "Troubleshooting OAuth app access token request errors"): an unknown client_id or a
 * redirect_uri other than the registered callback is refused on its own page; the token endpoint
 * answers errors with status 200 and `{error, error_description}`; a code works once; /user needs
 * a token.
 */
import { spawn } from "node:child_process";
import { once } from "node:events";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { DEMO_PEOPLE } from "~/fakes/demo-people";
import { startFakeIdentityProvider, type RunningFakeIdentityProvider } from "~/fakes/identity-provider";

const APP = "http://app.invalid:3000";
const CALLBACK = `${APP}/auth/github/callback`;
let fake: RunningFakeIdentityProvider;

beforeAll(async () => {
  fake = await startFakeIdentityProvider({ port: 0, appUrl: APP, clientId: "client-a", clientSecret: "secret-a" });
});
afterAll(() => fake.close());

function authorizeUrl(params: Record<string, string>): string {
  return `${fake.url}/login/oauth/authorize?${new URLSearchParams(params)}`;
}

async function codeFor(login: string, state = "s1"): Promise<string> {
  const answer = await fetch(`${fake.url}/login/oauth/authorize`, {
    method: "POST",
    redirect: "manual",
    body: new URLSearchParams({ client_id: "client-a", redirect_uri: CALLBACK, state, person: login }),
  });
  expect(answer.status).toBe(302);
  const location = new URL(answer.headers.get("location")!);
  expect(location.searchParams.get("state")).toBe(state);
  return location.searchParams.get("code")!;
}

async function exchange(fields: Record<string, string>, credentials = "client-a:secret-a"): Promise<Record<string, string>> {
  const response = await fetch(`${fake.url}/login/oauth/access_token`, {
    method: "POST",
    headers: { Accept: "application/json", Authorization: `Basic ${Buffer.from(credentials).toString("base64")}` },
    body: new URLSearchParams({ grant_type: "authorization_code", redirect_uri: CALLBACK, ...fields }),
  });
  expect(response.status).toBe(200); // GitHub reports token errors with 200 too
  return (await response.json()) as Record<string, string>;
}

describe("the authorize page", () => {
  it("lists every demo person and offers someone new", async () => {
    const response = await fetch(authorizeUrl({ client_id: "client-a", redirect_uri: CALLBACK, state: "x" }));
    const html = await response.text();
    expect(response.status).toBe(200);
    for (const person of DEMO_PEOPLE) {
      expect(html).toContain(person.login);
      expect(html).toContain(person.email);
    }
    expect(html).toContain('name="new_login"');
  });

  it("refuses an unknown client_id and a redirect_uri other than the registered callback", async () => {
    const wrongClient = await fetch(authorizeUrl({ client_id: "someone-else", redirect_uri: CALLBACK }));
    expect(wrongClient.status).toBe(400);
    expect(await wrongClient.text()).toContain("not registered");
    const wrongRedirect = await fetch(authorizeUrl({ client_id: "client-a", redirect_uri: "http://evil.invalid/auth/github/callback" }));
    expect(wrongRedirect.status).toBe(400);
    expect(await wrongRedirect.text()).toContain("not the callback URL registered");
  });

  it("names what is wrong with a new person's login", async () => {
    const answer = await fetch(`${fake.url}/login/oauth/authorize`, {
      method: "POST",
      body: new URLSearchParams({ client_id: "client-a", redirect_uri: CALLBACK, new_person: "1", new_login: "-bad login-" }),
    });
    expect(answer.status).toBe(400);
    expect(await answer.text()).toContain("A login is 1 to 39 letters");
  });
});

describe("the token and user endpoints", () => {
  it("issues a token once per code and serves the person's profile with it", async () => {
    const person = DEMO_PEOPLE[0];
    const code = await codeFor(person.login);
    const tokens = await exchange({ code });
    expect(tokens).toMatchObject({ token_type: "bearer", access_token: expect.stringMatching(/^fake_/) });

    const profile = await fetch(`${fake.url}/user`, { headers: { Authorization: `Bearer ${tokens.access_token}` } });
    expect(profile.status).toBe(200);
    const body = (await profile.json()) as { id: number | string };
    expect(body).toMatchObject({ login: person.login, name: person.name, email: person.email });
    expect(String(body.id)).toBe(String(person.githubId)); // the app stores the id as text

    expect(await exchange({ code })).toEqual({ error: "bad_verification_code", error_description: "The code passed is incorrect or expired." });
  });

  it("answers GitHub-style errors for wrong client credentials and a different redirect_uri", async () => {
    expect((await exchange({ code: await codeFor(DEMO_PEOPLE[1].login) }, "client-a:wrong")).error).toBe("incorrect_client_credentials");
    expect((await exchange({ code: await codeFor(DEMO_PEOPLE[1].login), redirect_uri: `${APP}/elsewhere` })).error).toBe("redirect_uri_mismatch");
  });

  it("answers form-encoded when JSON is not asked for, as GitHub does", async () => {
    const response = await fetch(`${fake.url}/login/oauth/access_token`, {
      method: "POST",
      body: new URLSearchParams({ client_id: "client-a", client_secret: "secret-a", code: await codeFor(DEMO_PEOPLE[2].login) }),
    });
    const answer = new URLSearchParams(await response.text());
    expect(answer.get("token_type")).toBe("bearer");
    expect(answer.get("access_token")).toMatch(/^fake_/);
  });

  it("refuses /user without a valid token", async () => {
    expect((await fetch(`${fake.url}/user`)).status).toBe(401);
    expect((await fetch(`${fake.url}/user`, { headers: { Authorization: "Bearer made-up" } })).status).toBe(401);
  });
});

describe("as a program", () => {
  it("starts with --port, prints its address and stops on SIGTERM", async () => {
    const child = spawn(process.execPath, ["--import", "tsx", "app/fakes/identity-provider.ts", "--port", "0"], { stdio: ["ignore", "pipe", "pipe"] });
    let output = "";
    child.stdout.on("data", (chunk: Buffer) => (output += chunk.toString()));
    const address = await new Promise<string>((resolve, reject) => {
      child.stdout.on("data", () => {
        const match = /listening on (http:\/\/\S+)/.exec(output);
        if (match) resolve(match[1]);
      });
      child.once("exit", (code) => reject(new Error(`exited with ${code}: ${output}`)));
    });
    const page = await fetch(`${address}/`);
    expect(page.status).toBe(200);
    child.kill("SIGTERM");
    const [code] = await once(child, "exit");
    expect(code).toBe(0);
  });

  it("refuses a port that is not a number", async () => {
    const child = spawn(process.execPath, ["--import", "tsx", "app/fakes/identity-provider.ts", "--port", "eighty"], { stdio: ["ignore", "pipe", "pipe"] });
    let errors = "";
    child.stderr.on("data", (chunk: Buffer) => (errors += chunk.toString()));
    const [code] = await once(child, "exit");
    expect(code).toBe(2);
    expect(errors).toContain('--port must be a whole number from 0 to 65535, not "eighty"');
  });
});
