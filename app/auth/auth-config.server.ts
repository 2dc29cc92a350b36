/**
 * What sign-in, sessions and mail need from the app's configuration (`app/config.server.ts`),
 * in the shape this area uses.
 */
import { config } from "~/config.server";

/**
 * Credentials the app presents to the local fake identity provider when no GitHub OAuth app is
 * configured. They protect nothing (the fake listens on loopback only); they exist so that the fake
 * can check them exactly as GitHub would. `app/fakes/identity-provider.ts` uses the same defaults.
 */
export const LOCAL_FAKE_CLIENT_ID = "equilibra-local";
export const LOCAL_FAKE_CLIENT_SECRET = "equilibra-local-secret";

export interface AuthConfig {
  /** The public URL of the app, e.g. http://localhost:3000 — links in mail and the OAuth callback. */
  appUrl: URL;
  /** Cookies carry `Secure` only when the app is served over https (react-router-serve runs plain http). */
  secureCookies: boolean;
  dataDir: string;
  /** From SESSION_SECRET; when absent, the session module generates one and keeps it in the data directory. */
  sessionSecret: string | undefined;
  github: {
    clientId: string;
    clientSecret: string;
    /** Where `/login/oauth/authorize` and `/login/oauth/access_token` live; undefined = no provider reachable. */
    oauthBaseUrl: string | undefined;
    /** Where `/user` lives. */
    apiUrl: string;
    /** True when the local fake identity provider stands in for GitHub (no client id, or a loopback address). */
    usesLocalFake: boolean;
  };
  /** smtp://… or smtps://…; when unset, mail goes to the database outbox shown on /dev/mailbox. */
  smtpUrl: string | undefined;
  mailFrom: string;
}

/** An identity provider on this machine can only be the local fake: GitHub is never on loopback. */
function isLoopback(url: string): boolean {
  const host = new URL(url).hostname;
  return host === "localhost" || host === "[::1]" || host === "::1" || host.startsWith("127.");
}

export function getAuthConfig(): AuthConfig {
  const settings = config();
  const clientIdGiven = settings.GITHUB_CLIENT_ID !== undefined;
  // Without a client id the only provider is the local fake, whose address the start script passes in.
  // Falling back to github.com there would send people to GitHub with a client id it does not know.
  const addressGiven = Boolean(process.env.GITHUB_OAUTH_BASE_URL?.trim());
  const oauthBaseUrl = !clientIdGiven && !addressGiven ? undefined : settings.GITHUB_OAUTH_BASE_URL;
  // The start script passes the fake's own client id and secret, so a loopback address is what tells.
  const usesLocalFake = !clientIdGiven || (oauthBaseUrl !== undefined && isLoopback(oauthBaseUrl));
  return {
    appUrl: new URL(settings.appUrl),
    secureCookies: settings.secureCookies,
    dataDir: settings.DATA_DIR,
    sessionSecret: settings.SESSION_SECRET,
    github: {
      clientId: settings.GITHUB_CLIENT_ID ?? LOCAL_FAKE_CLIENT_ID,
      clientSecret: settings.GITHUB_CLIENT_SECRET ?? (clientIdGiven ? "" : LOCAL_FAKE_CLIENT_SECRET),
      oauthBaseUrl,
      apiUrl: settings.GITHUB_API_URL,
      usesLocalFake,
    },
    smtpUrl: settings.SMTP_URL,
    mailFrom: settings.MAIL_FROM,
  };
}
