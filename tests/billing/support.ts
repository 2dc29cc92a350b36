/**
 * Helpers for the billing tests: point the app at a Stripe (the fake, or nock), sign someone in as
 * an organisation's administrator, call route loaders/actions with real Requests, and expose the
 * webhook route over HTTP so the fake can deliver to it.
 */
import { createServer, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import { RouterContextProvider } from "react-router";
import { commitSession, getSessionStorage, signIn } from "../../app/auth/session.server";
import { resetConfigForTests } from "../../app/config.server";
import { createOrganisation, type Organisation } from "../../app/models/organisations.server";
import { upsertUserFromProfile, type User } from "../../app/models/users.server";
import { action as webhookAction } from "../../app/routes/api.stripe.webhook";
import { resetBillingForTests } from "../../app/services/billing.server";

export const WEBHOOK_SECRET = "whsec_equilibra_tests";
export const APP_ORIGIN = "http://localhost:3000";

/** Sets the environment the app reads for Stripe and sessions, and forgets cached clients. */
export function configureBilling(settings: { apiBase: string; webhookSecret?: string }): void {
  delete process.env.STRIPE_SECRET_KEY;
  process.env.STRIPE_API_BASE = settings.apiBase;
  process.env.STRIPE_WEBHOOK_SECRET = settings.webhookSecret ?? WEBHOOK_SECRET;
  process.env.SESSION_SECRET = "billing-tests-session-secret-0123456789";
  process.env.APP_URL = APP_ORIGIN;
  resetConfigForTests();
  resetBillingForTests();
}

let counter = 0;

export async function createAdministrator(organisationName: string): Promise<{ user: User; organisation: Organisation; cookie: string }> {
  counter += 1;
  const user = await upsertUserFromProfile({
    githubId: `billing-${process.pid}-${counter}`,
    login: `billing-admin-${counter}`,
    name: `Billing Administrator ${counter}`,
    email: `admin${counter}@example.test`,
  });
  const organisation = await createOrganisation(organisationName, user.id);
  return { user, organisation, cookie: await cookieFor(user.id) };
}

export async function cookieFor(userId: number): Promise<string> {
  const session = await getSessionStorage().getSession();
  signIn(session, userId);
  const header = await commitSession(session);
  return header.split(";")[0];
}

/** The arguments React Router passes to a loader or action, for a direct call. */
export function routeArgs<Args>(request: Request, params: Record<string, string>): Args {
  return { request, params, url: new URL(request.url), pattern: "", context: new RouterContextProvider() } as unknown as Args;
}

export function formPost(path: string, cookie: string, fields: Record<string, string>): Request {
  return new Request(`${APP_ORIGIN}${path}`, {
    method: "POST",
    headers: { Cookie: cookie, "Content-Type": "application/x-www-form-urlencoded", Origin: APP_ORIGIN },
    body: new URLSearchParams(fields),
  });
}

export function get(path: string, cookie: string): Request {
  return new Request(`${APP_ORIGIN}${path}`, { headers: { Cookie: cookie } });
}

/** Serves the app's webhook route on loopback, as the running app would. */
export async function startWebhookEndpoint(): Promise<{ url: string; close(): Promise<void> }> {
  const server: Server = createServer(async (incoming, outgoing) => {
    const chunks: Buffer[] = [];
    for await (const chunk of incoming) chunks.push(chunk as Buffer);
    const request = new Request(`${APP_ORIGIN}${incoming.url ?? "/"}`, {
      method: incoming.method,
      headers: Object.entries(incoming.headers).flatMap(([name, value]) =>
        value === undefined ? [] : [[name, Array.isArray(value) ? value.join(", ") : value] as [string, string]],
      ),
      body: Buffer.concat(chunks),
    });
    const response = await webhookAction(routeArgs(request, {}));
    outgoing.writeHead(response.status, { "content-type": "application/json" });
    outgoing.end(await response.text());
  });
  await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
  const { port } = server.address() as AddressInfo;
  return {
    url: `http://127.0.0.1:${port}/api/stripe/webhook`,
    close: () => new Promise((resolve) => server.close(() => resolve())),
  };
}

/** Runs a loader or action that is expected to throw a Response, and returns it. */
export async function thrownResponse(run: () => Promise<unknown>): Promise<Response> {
  try {
    await run();
  } catch (error) {
    if (error instanceof Response) return error;
    throw error;
  }
  throw new Error("expected a thrown Response, but the call returned normally");
}
