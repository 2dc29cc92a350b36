/**
 * Environment variables, parsed once by one zod schema. Every variable is documented in README.md.
 * Absent hosted-service credentials mean "use the local fake", which the start script launches.
 */
import { z } from "zod";

const optionalString = z
  .string()
  .optional()
  .transform((value) => (value === undefined || value.trim() === "" ? undefined : value.trim()));

const environmentSchema = z.object({
  PORT: z.coerce.number().int().min(1).max(65535).default(3000),
  /** The public URL of the app; its scheme decides whether cookies are `secure`. */
  APP_URL: optionalString,
  DATA_DIR: z.string().default("./data"),
  DATABASE_URL: optionalString,
  SESSION_SECRET: optionalString,
  GITHUB_CLIENT_ID: optionalString,
  GITHUB_CLIENT_SECRET: optionalString,
  /** Where the OAuth authorize and token endpoints live (GitHub's by default; the local fake's otherwise). */
  GITHUB_OAUTH_BASE_URL: z.string().url().default("https://github.com"),
  GITHUB_API_URL: z.string().url().default("https://api.github.com"),
  SMTP_URL: optionalString,
  MAIL_FROM: z.string().default("Equilibra <no-reply@equilibra.invalid>"),
  STRIPE_SECRET_KEY: optionalString,
  STRIPE_WEBHOOK_SECRET: optionalString,
  /** Base URL of the Stripe API (the local fake's when no real key is configured). */
  STRIPE_API_BASE: optionalString,
  /** Worker threads that solve scenarios (default: one per CPU but one, at least 1). */
  SOLVE_WORKERS: z.coerce.number().int().min(1).max(256).optional(),
  /** Solves that may wait for a worker; beyond this a solve is answered 503 with Retry-After. */
  SOLVE_QUEUE_LIMIT: z.coerce.number().int().min(0).default(64),
  /** A solve running longer than this is stopped (its worker replaced) and answered 504. */
  SOLVE_TIMEOUT_SECONDS: z.coerce.number().positive().default(120),
});

export type AppConfig = z.infer<typeof environmentSchema> & { appUrl: string; secureCookies: boolean };

export class ConfigurationError extends Error {}

export function parseConfig(environment: NodeJS.ProcessEnv = process.env): AppConfig {
  const parsed = environmentSchema.safeParse(environment);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((issue) => `  ${issue.path.join(".")}: ${issue.message}`);
    throw new ConfigurationError(`Invalid environment configuration:\n${lines.join("\n")}`);
  }
  const appUrl = (parsed.data.APP_URL ?? `http://localhost:${parsed.data.PORT}`).replace(/\/$/, "");
  return { ...parsed.data, appUrl, secureCookies: appUrl.startsWith("https:") };
}

let cached: AppConfig | undefined;

/** The process's configuration, parsed on first use. */
export function config(): AppConfig {
  cached ??= parseConfig();
  return cached;
}

/** Tests change the environment between files; this forgets the parsed copy. */
export function resetConfigForTests(): void {
  cached = undefined;
}
