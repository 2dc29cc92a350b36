/**
 * The role matrix: every role × every protected route (protected-routes.ts), plus members of another
 * organisation, signed-out visitors and another organisation's ids under this organisation's slug.
 * Allowed → answered; a role not allowed → 403; not a member → 404; never another tenant's data.
 */
import { describe, expect, it } from "vitest";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { useTestDatabase } from "../support/database";
import { ALL_ROLES, PROTECTED_ROUTES, ROUTES_AWAITING_MATRIX_ROWS, type MatrixTenant, type MatrixWorld, type ProtectedRoute } from "./protected-routes";
import { AppClient, type AppRoute, type Outcome } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createTenant, sessionCookieValue } from "./support/fixtures";

useTestDatabase();
useAuthEnvironment();

async function buildWorld(route: ProtectedRoute): Promise<MatrixWorld> {
  const home: MatrixTenant = { ...(await createTenant("Home")), extras: {} };
  const other: MatrixTenant = { ...(await createTenant("Other")), extras: {} };
  await route.setup?.(home);
  await route.setup?.(other);
  return { home, other };
}

async function clientFor(route: ProtectedRoute, userId?: number): Promise<AppClient> {
  const table: AppRoute[] = [{ pattern: route.pattern, module: route.module }];
  const client = new AppClient(TEST_APP_URL, table);
  if (userId !== undefined) client.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(userId));
  return client;
}

function send(client: AppClient, route: ProtectedRoute, path: string, form?: Record<string, string>): Promise<Outcome> {
  return route.method === "GET" ? client.get(path) : client.post(path, form ?? {});
}

/** Nothing identifying the other organisation appears in what the route returned. */
function expectNoLeak(outcome: Outcome, other: MatrixTenant) {
  const shown = JSON.stringify(outcome.data ?? null) + (outcome.text ?? "");
  expect(shown).not.toContain(other.organisation.name);
  expect(shown).not.toContain(other.organisation.slug);
  for (const { user } of Object.values(other.members)) {
    expect(shown).not.toContain(user.login);
    if (user.email) expect(shown).not.toContain(user.email);
  }
}

describe.each(PROTECTED_ROUTES)("$method $pattern — $name", (route) => {
  // Loaders only read, so the cases of a GET row share one world; actions each get a fresh one.
  let shared: Promise<MatrixWorld> | undefined;
  const worldFor = (): Promise<MatrixWorld> => (route.method === "GET" ? (shared ??= buildWorld(route)) : buildWorld(route));

  it.each(ALL_ROLES)("as a %s of the organisation", async (role) => {
    const world = await worldFor();
    const client = await clientFor(route, world.home.members[role].user.id);
    const outcome = await send(client, route, route.path(world), route.form?.(world));
    if (route.allowed.includes(role)) {
      expect(outcome.status, outcome.text).toBeLessThan(400);
      expect(outcome.location ?? "").not.toMatch(/\/sign-in/);
    } else {
      expect(outcome.status).toBe(403);
      expect(outcome.text).toMatch(/does not allow/);
    }
    expectNoLeak(outcome, world.other);
  });

  it.each(ALL_ROLES)("as a %s of another organisation → 404", async (role) => {
    const world = await worldFor();
    const client = await clientFor(route, world.other.members[role].user.id);
    const outcome = await send(client, route, route.path(world), route.form?.(world));
    expect(outcome.status).toBe(404);
    expectNoLeak(outcome, world.home);
  });

  it("signed out → sign-in", async () => {
    const world = await worldFor();
    const outcome = await send(await clientFor(route), route, route.path(world), route.form?.(world));
    expect(outcome.status).toBe(302);
    expect(outcome.location).toMatch(/\/sign-in\?returnTo=/);
  });

  if (route.foreign) {
    const foreign = route.foreign;
    it.each(route.allowed)("as a %s naming another organisation's records → 404, theirs untouched", async (role) => {
      const world = await worldFor();
      const client = await clientFor(route, world.home.members[role].user.id);
      const path = (foreign.path ?? route.path)(world);
      const outcome = await send(client, route, path, (foreign.form ?? route.form)?.(world));
      expect(outcome.status).toBe(404);
      expectNoLeak(outcome, world.other);
      await foreign.untouched?.(world);
    });
  }
});

describe("the matrix itself", () => {
  it("lists every route scoped to an organisation (:org) registered in app/routes.ts", async () => {
    const { default: routes } = await import("~/routes");
    const registered: string[] = [];
    const walk = (entries: Array<{ path?: string; children?: unknown }>, prefix: string) => {
      for (const entry of entries) {
        const path = entry.path ? `${prefix}/${entry.path}`.replace(/\/+/g, "/") : prefix;
        if (entry.path !== undefined && path.split("/").includes(":org")) registered.push(path);
        if (Array.isArray(entry.children)) walk(entry.children as Array<{ path?: string; children?: unknown }>, path);
      }
    };
    walk(routes as Array<{ path?: string; children?: unknown }>, "");
    const covered = new Set([...PROTECTED_ROUTES.map((route) => route.pattern), ...ROUTES_AWAITING_MATRIX_ROWS]);
    const missing = registered.filter((path) => !covered.has(path));
    expect(missing, `add these routes to tests/auth/protected-routes.ts: ${missing.join(", ")}`).toEqual([]);
    expect(registered).toContain("/o/:org/members");
  });
});
