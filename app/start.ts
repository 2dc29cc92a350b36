/**
 * `npm start`: everything a new user needs, offline.
 *
 * 1. Starts the local fakes of hosted services that have no real credentials configured
 *    (the GitHub identity provider, Stripe), each a standalone program on loopback.
 * 2. Migrates the database and loads the invented demo region when it is empty.
 * 3. Serves the production build with react-router-serve, which then owns the database.
 *
 * The fakes are separate processes the app talks to over HTTP exactly as it would to the real
 * services; nothing here is imported by the app itself.
 */
import { spawn, type ChildProcess } from "node:child_process";
import { randomBytes } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, writeFileSync } from "node:fs";
import path from "node:path";
import { openDatabase } from "./db/client.server";
import { parseConfig } from "./config.server";

const children: ChildProcess[] = [];

function stopChildren() {
  for (const child of children) if (child.exitCode === null) child.kill("SIGTERM");
}
process.on("exit", stopChildren);
for (const signal of ["SIGINT", "SIGTERM"] as const) {
  process.on(signal, () => {
    stopChildren();
    process.exit(0);
  });
}

/** Starts a TypeScript program with tsx and waits until it prints "listening on <url>". */
function startProgram(name: string, script: string, args: string[], env: NodeJS.ProcessEnv = process.env): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ["--import", "tsx", script, ...args], { env, stdio: ["ignore", "pipe", "inherit"] });
    children.push(child);
    let buffer = "";
    const timer = setTimeout(() => reject(new Error(`${name} did not start within 20 s`)), 20_000);
    child.stdout!.on("data", (chunk: Buffer) => {
      process.stdout.write(`[${name}] ${chunk}`);
      buffer += chunk.toString();
      const match = /listening on (https?:\/\/[^\s,]+)/.exec(buffer);
      if (match) {
        clearTimeout(timer);
        resolve(match[1]);
      }
    });
    child.on("exit", (code) => {
      clearTimeout(timer);
      reject(new Error(`${name} exited with code ${code}`));
    });
  });
}

/** A value kept in the data directory across restarts (generated on first start). */
function persistentSecret(dataDir: string, file: string, prefix = ""): string {
  const location = path.join(dataDir, file);
  if (existsSync(location)) return readFileSync(location, "utf8").trim();
  const value = prefix + randomBytes(24).toString("hex");
  writeFileSync(location, value, { mode: 0o600 });
  return value;
}

async function main() {
  const config = parseConfig();
  const dataDir = path.resolve(config.DATA_DIR);
  mkdirSync(dataDir, { recursive: true });
  const env: NodeJS.ProcessEnv = { ...process.env, DATA_DIR: dataDir, APP_URL: config.appUrl, PORT: String(config.PORT) };

  if (!config.GITHUB_CLIENT_ID) {
    const clientId = "equilibra-local";
    const clientSecret = persistentSecret(dataDir, "fake-idp-secret");
    const url = await startProgram("identity provider", "app/fakes/identity-provider.ts", [
      "--port",
      String(config.PORT + 1),
      "--client-id",
      clientId,
      "--client-secret",
      clientSecret,
      "--app-url",
      config.appUrl,
    ]);
    Object.assign(env, {
      GITHUB_CLIENT_ID: clientId,
      GITHUB_CLIENT_SECRET: clientSecret,
      GITHUB_OAUTH_BASE_URL: url,
      GITHUB_API_URL: url,
    });
  }

  if (!config.STRIPE_SECRET_KEY) {
    const webhookSecret = persistentSecret(dataDir, "fake-stripe-webhook-secret", "whsec_");
    const url = await startProgram("payments", "app/fakes/stripe/server.ts", [
      "--port",
      String(config.PORT + 2),
      "--webhook-url",
      `${config.appUrl}/api/stripe/webhook`,
      "--webhook-secret",
      webhookSecret,
      // The fake keeps its customers and subscriptions across restarts, as the database does.
      "--state-file",
      path.join(dataDir, "fake-stripe.json"),
    ]);
    Object.assign(env, { STRIPE_API_BASE: url, STRIPE_WEBHOOK_SECRET: webhookSecret });
  }

  // Migrate and load the demo region before the server opens the database (PGlite allows one process).
  const started = Date.now();
  const database = await openDatabase({ url: config.DATABASE_URL, dataDir });
  try {
    const { seedIfEmpty } = await import("../seed/load");
    const seeded = await seedIfEmpty(database.db);
    if (seeded) console.log(`Loaded the invented demo region into an empty database (${Date.now() - started} ms).`);
  } finally {
    await database.close();
  }

  // The package exports no subpath for its binary; it sits beside the app's other dependencies.
  // Create the plans' products and prices in whichever Stripe is configured (idempotent by lookup key).
  Object.assign(process.env, { STRIPE_API_BASE: env.STRIPE_API_BASE, STRIPE_WEBHOOK_SECRET: env.STRIPE_WEBHOOK_SECRET });
  const { prepareBilling } = await import("./services/billing.server");
  await prepareBilling();

  const serveBin = path.resolve("node_modules/@react-router/serve/bin.js");
  const server = spawn(process.execPath, [serveBin, "build/server/index.js"], { env, stdio: ["ignore", "pipe", "inherit"] });
  children.push(server);
  server.stdout!.on("data", (chunk: Buffer) => process.stdout.write(chunk));
  server.on("exit", (code) => {
    stopChildren();
    process.exit(code ?? 1);
  });
  console.log(`\nEquilibra is starting at ${config.appUrl}  (sign in with a demo person; Ctrl+C stops)\n`);
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : error);
  stopChildren();
  process.exit(1);
});
