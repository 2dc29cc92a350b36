/**
 * Sets the environment sign-in reads (app URL, data directory, identity provider, mail) for one test
 * file, starting the fake identity provider on a loopback port when asked, and restores it afterwards.
 */
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterAll, beforeAll } from "vitest";
import { resetConfigForTests } from "~/config.server";
import { startFakeIdentityProvider, type FakeIdentityProviderOptions, type RunningFakeIdentityProvider } from "~/fakes/identity-provider";

export const TEST_APP_URL = "http://equilibra.test";

const KEYS = [
  "APP_URL",
  "DATA_DIR",
  "SESSION_SECRET",
  "GITHUB_CLIENT_ID",
  "GITHUB_CLIENT_SECRET",
  "GITHUB_OAUTH_BASE_URL",
  "GITHUB_API_URL",
  "SMTP_URL",
] as const;

export interface AuthEnvironment {
  readonly fakeUrl: string;
  readonly dataDir: string;
  /** Changes variables for the rest of the file (or until changed again) and forgets the parsed configuration. */
  set(variables: Partial<Record<(typeof KEYS)[number], string | undefined>>): void;
}

export function useAuthEnvironment(
  options: { fake?: boolean | Omit<FakeIdentityProviderOptions, "port">; variables?: Partial<Record<(typeof KEYS)[number], string>> } = {},
): AuthEnvironment {
  const saved = new Map<string, string | undefined>();
  let fake: RunningFakeIdentityProvider | undefined;
  let dataDir = "";

  function set(variables: Partial<Record<(typeof KEYS)[number], string | undefined>>) {
    for (const [key, value] of Object.entries(variables)) {
      if (value === undefined) delete process.env[key];
      else process.env[key] = value;
    }
    resetConfigForTests();
  }

  beforeAll(async () => {
    for (const key of KEYS) saved.set(key, process.env[key]);
    dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-auth-"));
    const variables: Partial<Record<(typeof KEYS)[number], string | undefined>> = Object.fromEntries(KEYS.map((key) => [key, undefined]));
    variables.APP_URL = TEST_APP_URL;
    variables.DATA_DIR = dataDir;
    if (options.fake) {
      const fakeOptions = typeof options.fake === "object" ? options.fake : {};
      fake = await startFakeIdentityProvider({ port: 0, appUrl: TEST_APP_URL, ...fakeOptions });
      variables.GITHUB_OAUTH_BASE_URL = fake.url;
      variables.GITHUB_API_URL = fake.url;
    }
    set({ ...variables, ...options.variables });
  });

  afterAll(async () => {
    await fake?.close();
    for (const [key, value] of saved) {
      if (value === undefined) delete process.env[key];
      else process.env[key] = value;
    }
    resetConfigForTests();
    rmSync(dataDir, { recursive: true, force: true });
  });

  return {
    get fakeUrl() {
      if (!fake) throw new Error("useAuthEnvironment: no fake identity provider was started for this file.");
      return fake.url;
    },
    get dataDir() {
      return dataDir;
    },
    set,
  };
}
