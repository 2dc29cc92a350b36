/**
 * A small stand-in for a browser, for loader/action tests: it sends real `Request`s to route modules
 * (matched like app/routes.ts does), keeps the app's cookies between requests, and follows redirects —
 * into the app by calling the matching loader, elsewhere (the fake identity provider) over HTTP.
 */
import { matchPath, RouterContextProvider } from "react-router";

export interface DataFunctionArgs {
  request: Request;
  params: Record<string, string | undefined>;
  // Typed loosely: without middleware the routes see an AppLoadContext, with it a RouterContextProvider.
  context: unknown;
  url: URL;
  pattern: string;
}

/** Method syntax keeps the parameter bivariant, so modules typed with their own Route.LoaderArgs fit. */
export interface RouteModule {
  loader?(args: DataFunctionArgs): unknown;
  action?(args: DataFunctionArgs): unknown;
}

export interface AppRoute {
  pattern: string;
  module: () => Promise<RouteModule>;
}

/** The routes this area owns, with their patterns from app/routes.ts. */
export const AUTH_ROUTES: AppRoute[] = [
  { pattern: "/sign-in", module: () => import("~/routes/sign-in") },
  { pattern: "/auth/github", module: () => import("~/routes/auth.github") },
  { pattern: "/auth/github/callback", module: () => import("~/routes/auth.github.callback") },
  { pattern: "/sign-out", module: () => import("~/routes/sign-out") },
  { pattern: "/welcome", module: () => import("~/routes/welcome") },
  { pattern: "/invitations/:token", module: () => import("~/routes/invitations.$token") },
  { pattern: "/o/:org/members", module: () => import("~/routes/o.$org.members") },
  { pattern: "/dev/mailbox", module: () => import("~/routes/dev.mailbox") },
];

export interface Outcome {
  url: string;
  status: number;
  headers: Headers;
  /** Where a redirect points, resolved against the request URL. */
  location: string | undefined;
  /** What a loader or action returned (app routes only). */
  data: unknown;
  /** The body text of a thrown Response or of an external answer. */
  text: string | undefined;
}

export type FormFields = Record<string, string>;

function isDataWithInit(value: unknown): value is { type: "DataWithResponseInit"; data: unknown; init: ResponseInit | null } {
  return typeof value === "object" && value !== null && (value as { type?: unknown }).type === "DataWithResponseInit";
}

export class AppClient {
  /** The app's cookies (name → value); the identity provider sets none. */
  readonly cookies = new Map<string, string>();

  constructor(
    readonly appUrl: string,
    private readonly routes: AppRoute[] = AUTH_ROUTES,
  ) {}

  setCookie(name: string, value: string): void {
    this.cookies.set(name, value);
  }

  private cookieHeader(): string {
    return [...this.cookies].map(([name, value]) => `${name}=${value}`).join("; ");
  }

  private remember(headers: Headers): void {
    for (const line of headers.getSetCookie()) {
      const [pair, ...attributes] = line.split(";").map((part) => part.trim());
      const separator = pair.indexOf("=");
      const name = pair.slice(0, separator);
      const value = pair.slice(separator + 1);
      const expired = attributes.some((attribute) => {
        const [key, attributeValue = ""] = attribute.split("=");
        if (key.toLowerCase() === "max-age") return Number(attributeValue) <= 0;
        if (key.toLowerCase() === "expires") return new Date(attributeValue).getTime() <= Date.now();
        return false;
      });
      if (expired || value === "") this.cookies.delete(name);
      else this.cookies.set(name, value);
    }
  }

  async request(method: "GET" | "POST", target: string, form?: FormFields | URLSearchParams, extraHeaders: Record<string, string> = {}): Promise<Outcome> {
    const url = new URL(target, this.appUrl);
    if (url.origin !== new URL(this.appUrl).origin) return this.external(method, url, form);

    const headers = new Headers(extraHeaders);
    const cookie = this.cookieHeader();
    if (cookie) headers.set("Cookie", cookie);
    let body: URLSearchParams | undefined;
    if (method === "POST") {
      body = form instanceof URLSearchParams ? form : new URLSearchParams(form ?? {});
      headers.set("Content-Type", "application/x-www-form-urlencoded");
      headers.set("Origin", url.origin);
    }
    const request = new Request(url, { method, headers, body });

    let matched: { route: AppRoute; params: Record<string, string | undefined> } | undefined;
    for (const route of this.routes) {
      const match = matchPath(route.pattern, url.pathname);
      if (match) {
        matched = { route, params: match.params };
        break;
      }
    }
    if (!matched) throw new Error(`No route in the test's route table matches ${url.pathname}`);
    const module = await matched.route.module();
    const handler = method === "GET" ? module.loader : module.action;
    if (!handler) throw new Error(`${matched.route.pattern} has no ${method === "GET" ? "loader" : "action"}`);

    let result: unknown;
    try {
      result = await handler({ request, params: matched.params, context: new RouterContextProvider(), url, pattern: matched.route.pattern });
    } catch (thrown) {
      if (!(thrown instanceof Response)) throw thrown;
      result = thrown;
    }
    return this.settle(url, result);
  }

  private async settle(url: URL, result: unknown): Promise<Outcome> {
    let outcome: Outcome;
    if (result instanceof Response) {
      const location = result.headers.get("Location");
      outcome = {
        url: url.toString(),
        status: result.status,
        headers: result.headers,
        location: location ? new URL(location, url).toString() : undefined,
        data: undefined,
        text: result.body ? await result.text() : undefined,
      };
    } else if (isDataWithInit(result)) {
      const headers = new Headers(result.init?.headers);
      outcome = { url: url.toString(), status: result.init?.status ?? 200, headers, location: undefined, data: result.data, text: undefined };
    } else {
      outcome = { url: url.toString(), status: 200, headers: new Headers(), location: undefined, data: result, text: undefined };
    }
    this.remember(outcome.headers);
    return outcome;
  }

  private async external(method: "GET" | "POST", url: URL, form?: FormFields | URLSearchParams): Promise<Outcome> {
    const response = await fetch(url, {
      method,
      redirect: "manual",
      body: method === "POST" ? (form instanceof URLSearchParams ? form : new URLSearchParams(form ?? {})) : undefined,
    });
    const location = response.headers.get("Location");
    return {
      url: url.toString(),
      status: response.status,
      headers: response.headers,
      location: location ? new URL(location, url).toString() : undefined,
      data: undefined,
      text: await response.text(),
    };
  }

  get(target: string): Promise<Outcome> {
    return this.request("GET", target);
  }

  post(target: string, form: FormFields | URLSearchParams = {}): Promise<Outcome> {
    return this.request("POST", target, form);
  }

  /** Follows redirects with GETs, as a browser does after a 302/303. */
  async follow(outcome: Outcome, maxHops = 10): Promise<Outcome> {
    let current = outcome;
    for (let hop = 0; hop < maxHops && current.location && current.status >= 300 && current.status < 400; hop++) {
      current = await this.get(current.location);
    }
    return current;
  }
}

function unescapeHtml(text: string): string {
  return text.replace(/&#(\d+);/g, (_, code: string) => String.fromCharCode(Number(code))).replace(/&amp;/g, "&");
}

/** The hidden fields of the first form on an HTML page (the fake identity provider's authorize page). */
export function hiddenFormFields(html: string): FormFields {
  const firstForm = /<form[\s\S]*?<\/form>/.exec(html)?.[0] ?? "";
  const fields: FormFields = {};
  for (const match of firstForm.matchAll(/<input type="hidden" name="([^"]+)" value="([^"]*)">/g)) {
    fields[match[1]] = unescapeHtml(match[2]);
  }
  return fields;
}
