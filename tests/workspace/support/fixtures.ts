/**
 * Records for workspace tests: a small invented scenario (three practices, two sites, two lines, with
 * private-care options so every rule has a steady state), and a helper that sends a real `Request` to
 * a route module's loader or action and reads what comes back, thrown Responses included.
 */
import { RouterContextProvider } from "react-router";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { sessionCookieValue } from "../../auth/support/fixtures";

export const TEST_ORIGIN = "http://equilibra.test";

export function smallScenario(name = "Small test region"): Record<string, unknown> {
  return {
    schema: "equilibra/scenario@1",
    name,
    dataDate: "2026-04-01",
    kmPerWeek: 15,
    circuity: 1.3,
    choiceModel: { kind: "wardrop" },
    serviceLines: [
      { id: "ortho", name: "Orthopaedics", standardWeeks: 18 },
      { id: "derm", name: "Dermatology", standardWeeks: 18 },
    ],
    sources: [
      { id: "ZZP001", name: "Harbour Lane Surgery", lat: 49.81, lon: -30.29, demand: { ortho: 4.2, derm: 2 }, outsideCost: { ortho: 24, derm: 20 }, outsideSpread: 0.4, deprivationDecile: 2, population: 12000 },
      { id: "ZZP002", name: "Mill Row Practice", lat: 49.86, lon: -30.12, demand: { ortho: 2.5, derm: 1.5 }, outsideCost: { ortho: 18, derm: 16 }, outsideSpread: 0.3, deprivationDecile: 9, population: 6000 },
      { id: "ZZP003", name: "Quarry Road Health Centre", lat: 49.74, lon: -30.2, demand: { ortho: 3.1, derm: 2.4 }, outsideCost: { ortho: 26, derm: 22 }, outsideSpread: 0.35, deprivationDecile: 5, population: 9000 },
    ],
    providers: [
      { id: "ZZS1", name: "Teaching Hospital", lat: 49.82, lon: -30.25, sector: "public", lines: { ortho: { teams: 3, ratePerTeam: 2.5, serviceCv: 1 }, derm: { teams: 2, ratePerTeam: 2.5, serviceCv: 1 } } },
      { id: "ZZS2", name: "Brookfield Clinic", lat: 49.78, lon: -30.1, sector: "independent", lines: { ortho: { teams: 2, ratePerTeam: 2, serviceCv: 1 }, derm: { teams: 1, ratePerTeam: 3, serviceCv: 1 } } },
    ],
  };
}

export interface RouteModuleLike {
  loader?(args: never): unknown;
  action?(args: never): unknown;
}

export interface Answer {
  status: number;
  headers: Headers;
  /** JSON bodies parsed, text bodies as text, plain returned data as is. */
  body: unknown;
}

interface CallOptions {
  method?: string;
  userId?: number;
  token?: string;
  json?: unknown;
  form?: FormData | Record<string, string>;
  headers?: Record<string, string>;
}

/** Calls `module`'s loader (GET) or action (anything else) for `path` with `params`, as the router would. */
export async function call(module: RouteModuleLike, path: string, params: Record<string, string>, options: CallOptions = {}): Promise<Answer> {
  const method = options.method ?? "GET";
  const url = new URL(path, TEST_ORIGIN);
  const headers = new Headers(options.headers);
  if (options.userId !== undefined) headers.set("Cookie", `${SESSION_COOKIE_NAME}=${await sessionCookieValue(options.userId)}`);
  if (options.token !== undefined) headers.set("Authorization", `Bearer ${options.token}`);
  let body: BodyInit | undefined;
  if (options.json !== undefined) {
    body = JSON.stringify(options.json);
    headers.set("Content-Type", "application/json");
  } else if (options.form instanceof FormData) body = options.form;
  else if (options.form) {
    body = new URLSearchParams(options.form);
    headers.set("Content-Type", "application/x-www-form-urlencoded");
  }
  if (method !== "GET") headers.set("Origin", url.origin);
  const request = new Request(url, { method, headers, body });
  const handler = (method === "GET" ? module.loader : module.action) as ((args: unknown) => unknown) | undefined;
  if (!handler) throw new Error(`The module has no ${method === "GET" ? "loader" : "action"}`);
  let result: unknown;
  try {
    result = await handler({ request, params, context: new RouterContextProvider(), url, pattern: url.pathname });
  } catch (thrown) {
    if (!(thrown instanceof Response)) throw thrown;
    result = thrown;
  }
  if (result instanceof Response) {
    const text = await result.text();
    const isJson = (result.headers.get("Content-Type") ?? "").includes("application/json");
    return { status: result.status, headers: result.headers, body: isJson && text ? JSON.parse(text) : text };
  }
  if (typeof result === "object" && result !== null && (result as { type?: unknown }).type === "DataWithResponseInit") {
    const wrapped = result as { data: unknown; init: ResponseInit | null };
    return { status: wrapped.init?.status ?? 200, headers: new Headers(wrapped.init?.headers), body: wrapped.data };
  }
  return { status: 200, headers: new Headers(), body: result };
}
