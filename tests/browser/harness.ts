/**
 * Browser journeys: start the real app (`app/start.ts`: local fakes, migrations, demo data, production
 * build) on a free loopback port with its own data directory, and drive Debian's Chromium with
 * playwright-core. `npm test` builds the app before vitest runs.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import { chromium, type Browser, type Page } from "playwright-core";
import { afterAll, beforeAll } from "vitest";
import type { Role } from "../../app/db/schema";
import { DEMO_PEOPLE, type DemoOrganisationSlug, type DemoPerson } from "../../seed/people";

export const CHROMIUM_PATH = process.env.CHROMIUM_PATH ?? "/usr/bin/chromium";

async function portIsFree(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const server = net.createServer();
    server.once("error", () => resolve(false));
    server.listen(port, "127.0.0.1", () => server.close(() => resolve(true)));
  });
}

/** A base port whose next two ports (identity provider, payments) are free too. */
async function freePortTriple(): Promise<number> {
  for (let attempt = 0; attempt < 50; attempt++) {
    const base = 20_000 + Math.floor(Math.random() * 20_000);
    if ((await portIsFree(base)) && (await portIsFree(base + 1)) && (await portIsFree(base + 2))) return base;
  }
  throw new Error("No free loopback ports found for the app under test");
}

export interface RunningApp {
  url: string;
  dataDir: string;
  output: () => string;
  stop(): Promise<void>;
}

export async function startApp(extraEnv: NodeJS.ProcessEnv = {}): Promise<RunningApp> {
  if (!existsSync("build/server/index.js")) throw new Error("No production build: run `npx react-router build` first (npm test does).");
  const port = await freePortTriple();
  const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-browser-"));
  const url = `http://localhost:${port}`;
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    PORT: String(port),
    DATA_DIR: dataDir,
    APP_URL: url,
    NODE_ENV: "production",
    GITHUB_CLIENT_ID: "",
    STRIPE_SECRET_KEY: "",
    SMTP_URL: "",
    DATABASE_URL: "",
    ...extraEnv,
  };
  const child: ChildProcess = spawn(process.execPath, ["--import", "tsx", "app/start.ts"], { env, stdio: ["ignore", "pipe", "pipe"], detached: true });
  let log = "";
  child.stdout!.on("data", (chunk: Buffer) => (log += chunk.toString()));
  child.stderr!.on("data", (chunk: Buffer) => (log += chunk.toString()));

  const deadline = Date.now() + 90_000;
  for (;;) {
    if (child.exitCode !== null) throw new Error(`The app exited early (code ${child.exitCode}):\n${log}`);
    try {
      const response = await fetch(url, { redirect: "manual" });
      if (response.status < 500) break;
    } catch {
      // not listening yet
    }
    if (Date.now() > deadline) throw new Error(`The app did not answer within 90 s:\n${log}`);
    await new Promise((resolve) => setTimeout(resolve, 250));
  }

  return {
    url,
    dataDir,
    output: () => log,
    async stop() {
      if (child.exitCode === null && child.pid) {
        const exited = new Promise((resolve) => child.once("exit", resolve));
        process.kill(-child.pid, "SIGTERM");
        await Promise.race([exited, new Promise((resolve) => setTimeout(resolve, 5_000))]);
        if (child.exitCode === null) process.kill(-child.pid, "SIGKILL");
      }
      rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM_PATH,
    args: [
      "--headless",
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
      "--no-first-run",
      "--use-angle=swiftshader",
      "--enable-unsafe-swiftshader",
    ],
  });
}

/**
 * Signs in through the local fake identity provider as the demo person with `role` in `organisation`
 * and waits until the app has taken over again. Returns the person.
 */
export async function signInAs(page: Page, app: RunningApp, role: Role, organisation: DemoOrganisationSlug = "caldervey"): Promise<DemoPerson> {
  const person = DEMO_PEOPLE.find((candidate) => candidate.role === role && candidate.organisation === organisation);
  if (!person) throw new Error(`No demo ${role} of ${organisation}`);
  await page.goto(`${app.url}/sign-in`);
  await page.getByRole("button", { name: /sign in/i }).first().click();
  // The fake identity provider's own page lists the demo people.
  await page.locator("button.person", { hasText: person.name }).click();
  await page.waitForURL((url) => url.origin === app.url && !url.pathname.startsWith("/auth/"));
  return person;
}

/**
 * Starts the app and a browser before the file's tests and stops both afterwards; `onStarted`
 * receives them (assign them to the file's variables).
 */
export function useRunningApp(onStarted: (started: { app: RunningApp; browser: Browser }) => void): void {
  let app: RunningApp | undefined;
  let browser: Browser | undefined;
  beforeAll(async () => {
    app = await startApp();
    browser = await launchBrowser();
    onStarted({ app, browser });
  }, 180_000);
  afterAll(async () => {
    await browser?.close();
    await app?.stop();
  });
}
