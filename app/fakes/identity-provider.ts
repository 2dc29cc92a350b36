/**
 * A local stand-in for GitHub's OAuth identity provider, for development, demos and tests.
 *
 * A standalone program: the app talks to it over HTTP exactly as it talks to GitHub, through the
 * endpoints GitHub documents (Authorizing OAuth apps, "Web application flow"):
 *   GET  /login/oauth/authorize     — a page listing the demo people to sign in as (and a free-form
 *                                      "new person"); choosing one redirects to redirect_uri?code&state
 *   POST /login/oauth/access_token  — exchanges the code; errors as GitHub sends them: status 200 + {error}
 *   GET  /user, GET /user/emails    — the profile, with `Authorization: Bearer <token>`
 * It checks client_id, client_secret and redirect_uri as GitHub would, so a misconfigured app fails here
 * the way it would fail against GitHub.
 *
 *   npx tsx app/fakes/identity-provider.ts --port 3100 [--host 127.0.0.1] [--app-url http://localhost:3000]
 *                                          [--client-id equilibra-local] [--client-secret equilibra-local-secret]
 * prints "Fake identity provider listening on http://127.0.0.1:3100" once it accepts connections.
 * Tests call `startFakeIdentityProvider({ port: 0 })`.
 *
 * It listens on loopback only and signs anyone in as anyone: never expose it.
 */
import { createHash, randomBytes } from "node:crypto";
import { createServer, type IncomingMessage, type ServerResponse } from "node:http";
import type { AddressInfo } from "node:net";
import { pathToFileURL } from "node:url";
import { DEMO_PEOPLE } from "./demo-people";

// The same defaults as the app's (app/auth/auth-config.server.ts); the fake does not import the app.
const DEFAULT_CLIENT_ID = "equilibra-local";
const DEFAULT_CLIENT_SECRET = "equilibra-local-secret";
const CALLBACK_PATH = "/auth/github/callback";
/** GitHub's codes expire after ten minutes. */
const CODE_LIFETIME_MS = 10 * 60 * 1000;

export interface FakePerson {
  githubId: number | string;
  login: string;
  name: string | null;
  email: string | null;
  role?: string;
}

export interface FakeIdentityProviderOptions {
  /** 0 picks a free port. */
  port?: number;
  host?: string;
  /** When given, redirect_uri must be exactly `${appUrl}/auth/github/callback`. */
  appUrl?: string;
  clientId?: string;
  clientSecret?: string;
  people?: readonly FakePerson[];
}

export interface RunningFakeIdentityProvider {
  url: string;
  close(): Promise<void>;
}

interface IssuedCode {
  person: FakePerson;
  redirectUri: string;
  scope: string;
  expiresAt: number;
}

interface AuthorizeRequest {
  clientId: string;
  redirectUri: string;
  state: string | null;
  scope: string;
}

function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (character) => `&#${character.charCodeAt(0)};`);
}

/** A stable id for a free-form login, so that signing in twice as the same new person is one user. */
function idForLogin(login: string): number {
  return 800_000_000 + (Number.parseInt(createHash("sha256").update(login.toLowerCase()).digest("hex").slice(0, 8), 16) % 100_000_000);
}

function send(response: ServerResponse, status: number, contentType: string, body: string, headers: Record<string, string> = {}): void {
  response.writeHead(status, { "Content-Type": contentType, "Cache-Control": "no-store", ...headers });
  response.end(body);
}

function sendJson(response: ServerResponse, status: number, body: unknown): void {
  send(response, status, "application/json; charset=utf-8", JSON.stringify(body));
}

async function readBody(request: IncomingMessage): Promise<URLSearchParams> {
  const chunks: Buffer[] = [];
  for await (const chunk of request) chunks.push(chunk as Buffer);
  const text = Buffer.concat(chunks).toString("utf8");
  if ((request.headers["content-type"] ?? "").includes("application/json")) {
    try {
      const parsed = JSON.parse(text) as Record<string, unknown>;
      return new URLSearchParams(Object.entries(parsed).map(([key, value]) => [key, String(value)]));
    } catch {
      return new URLSearchParams();
    }
  }
  return new URLSearchParams(text);
}

const PAGE_STYLE = `
  body { margin: 0; font: 15px/1.45 system-ui, sans-serif; background: #eef0f4; color: #1b1f2a; }
  .card { max-width: 34rem; margin: 3rem auto; background: #fff; border: 1px solid #c9ced8; border-radius: 10px; padding: 1.5rem 1.75rem; }
  .brand { font-weight: 700; letter-spacing: .04em; color: #5b3fa0; text-transform: uppercase; font-size: .8rem; }
  h1 { font-size: 1.3rem; margin: .3rem 0 .6rem; }
  .note { background: #fff6dc; border: 1px solid #e6d28a; padding: .5rem .75rem; border-radius: 6px; font-size: .85rem; }
  .error { background: #fde8e8; border: 1px solid #e0a0a0; padding: .5rem .75rem; border-radius: 6px; }
  ul { list-style: none; padding: 0; margin: 1rem 0; }
  li + li { margin-top: .5rem; }
  button.person { width: 100%; text-align: left; background: #f7f5fc; border: 1px solid #cfc4ea; border-radius: 8px; padding: .6rem .8rem; cursor: pointer; font: inherit; }
  button.person:hover, button.person:focus { background: #ebe4fa; outline: 2px solid #5b3fa0; }
  .who { font-weight: 600; } .meta { color: #555d6e; font-size: .85rem; }
  fieldset { border: 1px solid #c9ced8; border-radius: 8px; margin-top: 1rem; }
  label { display: block; margin: .4rem 0 .1rem; font-size: .85rem; }
  input[type=text], input[type=email] { width: 100%; box-sizing: border-box; padding: .4rem; border: 1px solid #aab1bf; border-radius: 5px; font: inherit; }
  .actions { display: flex; gap: .5rem; margin-top: .8rem; }
  .primary { background: #5b3fa0; color: #fff; border: 0; border-radius: 6px; padding: .45rem .9rem; font: inherit; cursor: pointer; }
  .secondary { background: #fff; border: 1px solid #aab1bf; border-radius: 6px; padding: .45rem .9rem; font: inherit; cursor: pointer; }
`;

function page(title: string, body: string): string {
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)} · Loopback ID</title><style>${PAGE_STYLE}</style></head>
<body><main class="card"><div class="brand">Loopback ID · local test identity provider</div>${body}</main></body></html>`;
}

function hiddenFields(authorize: AuthorizeRequest): string {
  const fields: Array<[string, string]> = [
    ["client_id", authorize.clientId],
    ["redirect_uri", authorize.redirectUri],
    ["scope", authorize.scope],
  ];
  if (authorize.state !== null) fields.push(["state", authorize.state]);
  return fields.map(([name, value]) => `<input type="hidden" name="${name}" value="${escapeHtml(value)}">`).join("");
}

function authorizePage(authorize: AuthorizeRequest, people: readonly FakePerson[], problem?: string, draft?: URLSearchParams): string {
  const host = new URL(authorize.redirectUri).host;
  const list = people
    .map(
      (person) => `<li><button class="person" type="submit" name="person" value="${escapeHtml(person.login)}">
        <span class="who">${escapeHtml(person.name ?? person.login)}</span>
        <span class="meta"> · ${escapeHtml(person.login)}${person.role ? ` · ${escapeHtml(person.role.replace(/_/g, " "))}` : ""}</span><br>
        <span class="meta">${escapeHtml(person.email ?? "no public e-mail")}</span></button></li>`,
    )
    .join("");
  const value = (name: string) => escapeHtml(draft?.get(name) ?? "");
  return page(
    "Choose who signs in",
    `<h1>Sign in to the application at ${escapeHtml(host)}</h1>
     <p class="note">A stand-in for GitHub on this machine. Anyone who reaches it can sign in as anyone listed.</p>
     ${problem ? `<p class="error" role="alert">${escapeHtml(problem)}</p>` : ""}
     <form method="post" action="/login/oauth/authorize">${hiddenFields(authorize)}<ul>${list}</ul></form>
     <form method="post" action="/login/oauth/authorize">${hiddenFields(authorize)}
       <fieldset><legend>Someone new</legend>
         <label for="new_login">Login (letters, digits and hyphens)</label><input type="text" id="new_login" name="new_login" value="${value("new_login")}" required>
         <label for="new_name">Name</label><input type="text" id="new_name" name="new_name" value="${value("new_name")}">
         <label for="new_email">E-mail</label><input type="email" id="new_email" name="new_email" value="${value("new_email")}">
         <div class="actions"><button class="primary" type="submit" name="new_person" value="1">Sign in as this person</button></div>
       </fieldset></form>
     <form method="post" action="/login/oauth/authorize">${hiddenFields(authorize)}
       <div class="actions"><button class="secondary" type="submit" name="deny" value="1">Cancel — do not sign in</button></div></form>`,
  );
}

function withQuery(base: string, params: Record<string, string | null>): string {
  const url = new URL(base);
  for (const [key, value] of Object.entries(params)) if (value !== null) url.searchParams.set(key, value);
  return url.toString();
}

/** Starts the fake on loopback; resolves once it accepts connections. */
export function startFakeIdentityProvider(options: FakeIdentityProviderOptions = {}): Promise<RunningFakeIdentityProvider> {
  const clientId = options.clientId ?? DEFAULT_CLIENT_ID;
  const clientSecret = options.clientSecret ?? DEFAULT_CLIENT_SECRET;
  const people = options.people ?? DEMO_PEOPLE;
  const expectedRedirect = options.appUrl ? new URL(CALLBACK_PATH, options.appUrl).toString() : undefined;
  const codes = new Map<string, IssuedCode>();
  const tokens = new Map<string, FakePerson>();

  /** GitHub shows an error page (no redirect) when client_id or redirect_uri is wrong: so does this. */
  function checkAuthorizeRequest(params: URLSearchParams): AuthorizeRequest | string {
    const requestedClient = params.get("client_id") ?? "";
    if (requestedClient !== clientId) {
      return `The application identifier (client_id "${requestedClient}") is not registered with this identity provider.`;
    }
    const redirectUri = params.get("redirect_uri") ?? "";
    let parsed: URL;
    try {
      parsed = new URL(redirectUri);
    } catch {
      return "The redirect_uri is missing or is not an absolute URL.";
    }
    const acceptable = expectedRedirect
      ? redirectUri === expectedRedirect
      : (parsed.protocol === "http:" || parsed.protocol === "https:") && parsed.pathname === CALLBACK_PATH;
    if (!acceptable) {
      return `The redirect_uri "${redirectUri}" is not the callback URL registered for this application${expectedRedirect ? ` (${expectedRedirect})` : ""}.`;
    }
    return { clientId: requestedClient, redirectUri, state: params.get("state"), scope: params.get("scope") ?? "" };
  }

  function personFromForm(form: URLSearchParams): FakePerson | string {
    const chosen = form.get("person");
    if (chosen) {
      const person = people.find((candidate) => candidate.login === chosen);
      return person ?? `There is no person with login "${chosen}" on this identity provider.`;
    }
    const login = (form.get("new_login") ?? "").trim();
    if (!/^[A-Za-z0-9](?:[A-Za-z0-9-]{0,37}[A-Za-z0-9])?$/.test(login)) {
      return "A login is 1 to 39 letters, digits or single hyphens, and does not start or end with a hyphen.";
    }
    const email = (form.get("new_email") ?? "").trim();
    if (email !== "" && !/^[^@\s]+@[^@\s]+\.[^@\s]+$/.test(email)) return `"${email}" is not an e-mail address.`;
    const known = people.find((candidate) => candidate.login.toLowerCase() === login.toLowerCase());
    if (known) return known;
    return { githubId: idForLogin(login), login, name: (form.get("new_name") ?? "").trim() || null, email: email || null };
  }

  function bearer(request: IncomingMessage): FakePerson | undefined {
    const match = /^(?:bearer|token)\s+(\S+)$/i.exec(request.headers.authorization ?? "");
    return match ? tokens.get(match[1]) : undefined;
  }

  function profile(person: FakePerson) {
    const id = Number(person.githubId);
    return {
      login: person.login,
      id: Number.isFinite(id) ? id : person.githubId,
      node_id: `U_fake${person.githubId}`,
      avatar_url: "",
      type: "User",
      site_admin: false,
      name: person.name,
      email: person.email,
    };
  }

  async function handle(request: IncomingMessage, response: ServerResponse): Promise<void> {
    const url = new URL(request.url ?? "/", "http://fake.invalid");
    const route = `${request.method} ${url.pathname}`;

    if (route === "GET /login/oauth/authorize") {
      const checked = checkAuthorizeRequest(url.searchParams);
      if (typeof checked === "string") return send(response, 400, "text/html; charset=utf-8", page("Cannot sign in", `<h1>Cannot sign in</h1><p class="error">${escapeHtml(checked)}</p>`));
      return send(response, 200, "text/html; charset=utf-8", authorizePage(checked, people));
    }

    if (route === "POST /login/oauth/authorize") {
      const form = await readBody(request);
      const checked = checkAuthorizeRequest(form);
      if (typeof checked === "string") return send(response, 400, "text/html; charset=utf-8", page("Cannot sign in", `<h1>Cannot sign in</h1><p class="error">${escapeHtml(checked)}</p>`));
      if (form.has("deny")) {
        const location = withQuery(checked.redirectUri, {
          error: "access_denied",
          error_description: "The user has denied your application access.",
          error_uri: "https://docs.github.com/apps/managing-oauth-apps/troubleshooting-authorization-request-errors/#access-denied",
          state: checked.state,
        });
        return send(response, 302, "text/plain", "", { Location: location });
      }
      const person = personFromForm(form);
      if (typeof person === "string") return send(response, 400, "text/html; charset=utf-8", authorizePage(checked, people, person, form));
      const code = randomBytes(10).toString("hex");
      codes.set(code, { person, redirectUri: checked.redirectUri, scope: checked.scope, expiresAt: Date.now() + CODE_LIFETIME_MS });
      return send(response, 302, "text/plain", "", { Location: withQuery(checked.redirectUri, { code, state: checked.state }) });
    }

    if (route === "POST /login/oauth/access_token") {
      const form = await readBody(request);
      let presentedId = form.get("client_id") ?? "";
      let presentedSecret = form.get("client_secret") ?? "";
      const basic = /^basic\s+(\S+)$/i.exec(request.headers.authorization ?? "");
      if (basic) {
        const decoded = Buffer.from(basic[1], "base64").toString("utf8");
        const colon = decoded.indexOf(":");
        presentedId = decodeURIComponent(decoded.slice(0, colon));
        presentedSecret = decodeURIComponent(decoded.slice(colon + 1));
      }
      let answer: Record<string, string>;
      const issued = codes.get(form.get("code") ?? "");
      if (presentedId !== clientId || presentedSecret !== clientSecret) {
        answer = { error: "incorrect_client_credentials", error_description: "The client_id and/or client_secret passed are incorrect." };
      } else if (!issued || issued.expiresAt < Date.now()) {
        answer = { error: "bad_verification_code", error_description: "The code passed is incorrect or expired." };
      } else if (form.has("redirect_uri") && form.get("redirect_uri") !== issued.redirectUri) {
        answer = { error: "redirect_uri_mismatch", error_description: "The redirect_uri MUST match the registered callback URL for this application." };
      } else {
        codes.delete(form.get("code") ?? ""); // a code works once
        const token = `fake_${randomBytes(20).toString("hex")}`;
        tokens.set(token, issued.person);
        answer = { access_token: token, token_type: "bearer", scope: issued.scope };
      }
      // GitHub answers form-encoded unless JSON is asked for, and reports errors with status 200.
      if ((request.headers.accept ?? "").includes("json")) return sendJson(response, 200, answer);
      return send(response, 200, "application/x-www-form-urlencoded", new URLSearchParams(answer).toString());
    }

    if (route === "GET /user" || route === "GET /user/emails") {
      const person = bearer(request);
      if (!person) return sendJson(response, 401, { message: "Bad credentials", documentation_url: "https://docs.github.com/rest" });
      if (url.pathname === "/user") return sendJson(response, 200, profile(person));
      return sendJson(response, 200, person.email ? [{ email: person.email, primary: true, verified: true, visibility: "public" }] : []);
    }

    if (route === "GET /") {
      return send(response, 200, "text/html; charset=utf-8", page("Loopback ID", "<h1>Loopback ID is running</h1><p>Applications send people to /login/oauth/authorize.</p>"));
    }
    return sendJson(response, 404, { message: "Not Found" });
  }

  const server = createServer((request, response) => {
    handle(request, response).catch((error: unknown) => {
      if (!response.headersSent) sendJson(response, 500, { message: `The fake identity provider failed: ${(error as Error).message}` });
      else response.end();
    });
  });

  return new Promise((resolve, reject) => {
    server.once("error", reject);
    server.listen(options.port ?? 0, options.host ?? "127.0.0.1", () => {
      const { address, port } = server.address() as AddressInfo;
      const host = address.includes(":") ? `[${address}]` : address;
      resolve({
        url: `http://${host}:${port}`,
        close: () =>
          new Promise<void>((done, fail) => {
            server.closeAllConnections();
            server.close((error) => (error ? fail(error) : done()));
          }),
      });
    });
  });
}

function argument(name: string): string | undefined {
  const index = process.argv.indexOf(`--${name}`);
  return index >= 0 ? process.argv[index + 1] : undefined;
}

async function main(): Promise<void> {
  const portText = argument("port") ?? "0";
  const port = Number(portText);
  if (!Number.isInteger(port) || port < 0 || port > 65535) {
    process.stderr.write(`--port must be a whole number from 0 to 65535, not "${portText}".\n`);
    process.exit(2);
  }
  const running = await startFakeIdentityProvider({
    port,
    host: argument("host"),
    appUrl: argument("app-url"),
    clientId: argument("client-id"),
    clientSecret: argument("client-secret"),
  });
  process.stdout.write(`Fake identity provider listening on ${running.url}\n`);
  const stop = () => void running.close().then(() => process.exit(0));
  process.once("SIGTERM", stop);
  process.once("SIGINT", stop);
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((error: unknown) => {
    process.stderr.write(`The fake identity provider could not start: ${(error as Error).message}\n`);
    process.exit(1);
  });
}
