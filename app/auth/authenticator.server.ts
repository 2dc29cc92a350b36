/**
 * Identity through remix-auth's GitHub strategy. The strategy keeps arctic's `GitHub` client, whose
 * endpoints are github.com's; `ConfigurableGitHub` takes them from configuration instead, so the same
 * code path signs in through GitHub or through the local fake identity provider.
 *
 * remix-auth-github never fetches the profile: the verify callback calls `GET {api}/user` itself and
 * creates or refreshes the user record. The session is the app's own (session.server.ts).
 */
import {
  ArcticFetchError,
  GitHub,
  OAuth2RequestError,
  OAuth2Tokens,
  UnexpectedErrorResponseBodyError,
  UnexpectedResponseError,
} from "arctic";
import { Authenticator } from "remix-auth";
import { GitHubStrategy } from "remix-auth-github";
import { upsertUserFromProfile, type User } from "~/models/users.server";
import { getAuthConfig, type AuthConfig } from "./auth-config.server";

export const OAUTH_STATE_COOKIE = "equilibra_oauth_state";
export const GITHUB_STRATEGY = "github";

export interface OAuthEndpoints {
  authorize: string;
  token: string;
}

/** Raised when the provider accepted the code but its profile endpoint did not answer usefully. */
export class ProfileFetchError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "ProfileFetchError";
  }
}

/** Raised when no identity provider is reachable (no client id and no local fake address). */
export class IdentityProviderNotConfiguredError extends Error {
  constructor() {
    super(
      "No identity provider is configured: set GITHUB_CLIENT_ID and GITHUB_CLIENT_SECRET, or start the app " +
        "with `npm start`, which runs the local fake identity provider and passes its address in GITHUB_OAUTH_BASE_URL.",
    );
    this.name = "IdentityProviderNotConfiguredError";
  }
}

/** arctic's GitHub client with its authorize and token endpoints taken from configuration. */
export class ConfigurableGitHub extends GitHub {
  readonly #clientId: string;
  readonly #clientSecret: string;
  readonly #redirectUri: string;
  readonly #endpoints: OAuthEndpoints;

  constructor(clientId: string, clientSecret: string, redirectUri: string, endpoints: OAuthEndpoints) {
    super(clientId, clientSecret, redirectUri);
    this.#clientId = clientId;
    this.#clientSecret = clientSecret;
    this.#redirectUri = redirectUri;
    this.#endpoints = endpoints;
  }

  override createAuthorizationURL(state: string, scopes: string[]): URL {
    const builtForGitHub = super.createAuthorizationURL(state, scopes);
    const url = new URL(this.#endpoints.authorize);
    url.search = builtForGitHub.search;
    return url;
  }

  /**
   * The same exchange as arctic's GitHub client, against the configured endpoint. GitHub answers
   * errors with status 200 and `{error}`, which arctic's generic client would mistake for tokens.
   */
  override async validateAuthorizationCode(code: string): Promise<OAuth2Tokens> {
    const body = new URLSearchParams({ grant_type: "authorization_code", code, redirect_uri: this.#redirectUri });
    const credentials = Buffer.from(`${this.#clientId}:${this.#clientSecret}`).toString("base64");
    let response: Response;
    try {
      response = await fetch(this.#endpoints.token, {
        method: "POST",
        body,
        headers: {
          "Content-Type": "application/x-www-form-urlencoded",
          Accept: "application/json",
          "User-Agent": "Equilibra",
          Authorization: `Basic ${credentials}`,
        },
      });
    } catch (error) {
      throw new ArcticFetchError(error);
    }
    if (response.status !== 200) {
      await response.body?.cancel();
      throw new UnexpectedResponseError(response.status);
    }
    let data: unknown;
    try {
      data = await response.json();
    } catch {
      throw new UnexpectedResponseError(response.status);
    }
    if (typeof data !== "object" || data === null) throw new UnexpectedErrorResponseBodyError(response.status, data);
    if ("error" in data && typeof data.error === "string") {
      const description = "error_description" in data && typeof data.error_description === "string" ? data.error_description : null;
      const uri = "error_uri" in data && typeof data.error_uri === "string" ? data.error_uri : null;
      throw new OAuth2RequestError(data.error, description, uri, null);
    }
    if (!("access_token" in data) || typeof data.access_token !== "string") {
      throw new UnexpectedErrorResponseBodyError(response.status, data);
    }
    return new OAuth2Tokens(data);
  }
}

/** remix-auth-github's strategy with its client pointed at the configured endpoints. */
export class ConfigurableGitHubStrategy<U> extends GitHubStrategy<U> {
  constructor(
    options: GitHubStrategy.ConstructorOptions,
    endpoints: OAuthEndpoints,
    verify: ConstructorParameters<typeof GitHubStrategy<U>>[1],
  ) {
    super(options, verify);
    this.client = new ConfigurableGitHub(options.clientId, options.clientSecret, options.redirectURI.toString(), endpoints);
  }
}

interface GitHubProfile {
  id: number | string;
  login: string;
  name?: string | null;
  email?: string | null;
}

interface GitHubEmail {
  email: string;
  primary: boolean;
  verified: boolean;
}

async function getJson(url: string, accessToken: string): Promise<{ status: number; body: unknown }> {
  let response: Response;
  try {
    response = await fetch(url, {
      headers: { Authorization: `Bearer ${accessToken}`, Accept: "application/vnd.github+json", "User-Agent": "Equilibra" },
    });
  } catch (error) {
    throw new ProfileFetchError(`The identity provider's profile endpoint could not be reached (${(error as Error).message}).`);
  }
  let body: unknown = null;
  try {
    body = await response.json();
  } catch {
    // a non-JSON answer is reported through the status check of the caller
  }
  return { status: response.status, body };
}

/** Fetches the signed-in person's profile; a private e-mail address is looked up among their verified ones. */
export async function fetchGitHubProfile(apiUrl: string, accessToken: string): Promise<GitHubProfile> {
  const base = apiUrl.replace(/\/$/, "");
  const { status, body } = await getJson(`${base}/user`, accessToken);
  if (status !== 200 || typeof body !== "object" || body === null || !("id" in body) || !("login" in body)) {
    throw new ProfileFetchError(`The identity provider's profile endpoint answered with status ${status} and no profile.`);
  }
  const profile = body as GitHubProfile;
  if (!profile.email) {
    const emails = await getJson(`${base}/user/emails`, accessToken).catch(() => undefined);
    if (emails?.status === 200 && Array.isArray(emails.body)) {
      const primary = (emails.body as GitHubEmail[]).find((entry) => entry.primary && entry.verified);
      if (primary) profile.email = primary.email;
    }
  }
  return profile;
}

function endpointsFor(config: AuthConfig): { endpoints: OAuthEndpoints; apiUrl: string } {
  const base = config.github.oauthBaseUrl;
  if (!base) throw new IdentityProviderNotConfiguredError();
  const trimmed = base.replace(/\/$/, "");
  return {
    endpoints: { authorize: `${trimmed}/login/oauth/authorize`, token: `${trimmed}/login/oauth/access_token` },
    apiUrl: config.github.apiUrl,
  };
}

const authenticators = new Map<string, Authenticator<User>>();

/** The authenticator for the current configuration (rebuilt only when the configuration changes). */
export function getAuthenticator(): Authenticator<User> {
  const config = getAuthConfig();
  const { endpoints, apiUrl } = endpointsFor(config);
  const redirectURI = new URL("/auth/github/callback", config.appUrl).toString();
  const key = JSON.stringify([config.github.clientId, config.github.clientSecret, endpoints, apiUrl, redirectURI, config.secureCookies]);
  let authenticator = authenticators.get(key);
  if (!authenticator) {
    authenticator = new Authenticator<User>();
    authenticator.use(
      new ConfigurableGitHubStrategy<User>(
        {
          clientId: config.github.clientId,
          clientSecret: config.github.clientSecret,
          redirectURI,
          scopes: ["read:user", "user:email"],
          cookie: {
            name: OAUTH_STATE_COOKIE,
            sameSite: "Lax",
            httpOnly: true,
            path: "/",
            ...(config.secureCookies ? { secure: true as const } : {}),
          },
        },
        endpoints,
        async ({ tokens }) => {
          const profile = await fetchGitHubProfile(apiUrl, tokens.accessToken());
          return upsertUserFromProfile({
            githubId: String(profile.id),
            login: profile.login,
            name: profile.name ?? null,
            email: profile.email ?? null,
          });
        },
      ),
      GITHUB_STRATEGY,
    );
    authenticators.set(key, authenticator);
  }
  return authenticator;
}

/** A Set-Cookie value that removes the OAuth state cookie once the callback has used it. */
export function clearOAuthStateCookie(): string {
  const secure = getAuthConfig().secureCookies ? "; Secure" : "";
  return `${OAUTH_STATE_COOKIE}=; Path=/; Max-Age=0; HttpOnly; SameSite=Lax${secure}`;
}

export interface SignInFailure {
  status: number;
  title: string;
  message: string;
}

/** Turns whatever the OAuth flow threw into a message for the person signing in. */
export function describeSignInFailure(error: unknown, callbackUrl: URL): SignInFailure {
  if (error instanceof OAuth2RequestError && callbackUrl.searchParams.has("error")) {
    const denied = error.code === "access_denied";
    return {
      status: 400,
      title: denied ? "Sign-in cancelled" : "The identity provider did not sign you in",
      message: denied
        ? "You declined to sign in at the identity provider, so you are not signed in."
        : `The identity provider reported "${error.code}"${error.description ? `: ${error.description}` : ""}. You are not signed in.`,
    };
  }
  if (error instanceof RangeError || (error instanceof ReferenceError && /state/i.test(error.message))) {
    return {
      status: 400,
      title: "This sign-in could not be matched",
      message:
        "The answer from the identity provider does not belong to the sign-in started in this browser " +
        "(the link may be old, already used, or opened in another browser). You are not signed in; please start again.",
    };
  }
  if (error instanceof ReferenceError) {
    return {
      status: 400,
      title: "The sign-in was incomplete",
      message: "The identity provider sent you back without a sign-in code. You are not signed in; please start again.",
    };
  }
  if (error instanceof OAuth2RequestError) {
    return {
      status: 502,
      title: "The identity provider refused the sign-in",
      message: `Exchanging the sign-in code failed with "${error.code}"${error.description ? ` (${error.description})` : ""}. You are not signed in; please start again.`,
    };
  }
  if (error instanceof ArcticFetchError || error instanceof UnexpectedResponseError || error instanceof UnexpectedErrorResponseBodyError) {
    return {
      status: 502,
      title: "The identity provider could not be reached",
      message: "Exchanging the sign-in code with the identity provider failed. You are not signed in; please try again shortly.",
    };
  }
  if (error instanceof ProfileFetchError) {
    return { status: 502, title: "Your profile could not be read", message: `${error.message} You are not signed in.` };
  }
  if (error instanceof IdentityProviderNotConfiguredError) {
    return { status: 503, title: "Sign-in is not available", message: error.message };
  }
  throw error;
}
