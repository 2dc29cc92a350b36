/**
 * The query strings the outlook pages and their API twins read (`?run=12&rule=optimum&target=92`),
 * one zod schema each, so a page and its API answer the same question the same way. A bad value
 * comes back as 400 naming the parameter and what it must be. (Not a route: `app/routes.ts` lists routes.)
 */
import { z } from "zod";
import { apiError } from "~/auth/api-guards.server";
import type { Role } from "~/db/schema";
import type { RuleKey } from "~/engine/problem";
import { DEFAULT_TARGET_SHARE } from "~/engine/site-outlook";

/** Who opens which outlook (the shell's navigation shows the same). */
export const SITE_OUTLOOK_ROLES: readonly Role[] = ["administrator", "planner", "provider_manager"];
export const BALKING_OUTLOOK_ROLES: readonly Role[] = ["administrator", "planner", "access_officer"];

const RULE_KEYS = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"] as const satisfies readonly RuleKey[];

const optionalText = z
  .string()
  .trim()
  .optional()
  .transform((value) => (value ? value : undefined));

/** An empty field of a GET form (`?standard=`) means "not given". */
function blankAsMissing<T extends z.ZodType>(schema: T) {
  return z.preprocess((value) => (typeof value === "string" && value.trim() === "" ? undefined : value), schema);
}

const runParam = optionalText.pipe(
  z
    .string()
    .regex(/^\d+$/, { error: "run must be a run number, e.g. run=12" })
    .transform(Number)
    .optional(),
);

const ruleParam = optionalText.pipe(z.enum(RULE_KEYS, { error: `rule must be one of ${RULE_KEYS.join(", ")}` }).default("choice"));

export const siteOutlookQuery = z.object({
  run: runParam,
  rule: ruleParam,
  line: optionalText,
  target: blankAsMissing(
    z.coerce
      .number({ error: "target must be a percentage, e.g. target=92" })
      .gt(0, { error: "target must be a percentage above 0 and below 100" })
      .lt(100, { error: "target must be a percentage above 0 and below 100" })
      .default(DEFAULT_TARGET_SHARE * 100),
  ),
  standard: blankAsMissing(z.coerce.number({ error: "standard must be a number of weeks, e.g. standard=18" }).min(0, { error: "standard must be a number of weeks ≥ 0" }).optional()),
  format: optionalText,
});

export type SiteOutlookQuery = z.output<typeof siteOutlookQuery>;

export const balkingOutlookQuery = z.object({
  run: runParam,
  rule: ruleParam,
  line: optionalText,
  period: optionalText,
  format: optionalText,
});

export type BalkingOutlookQuery = z.output<typeof balkingOutlookQuery>;

function issuesOf(error: z.ZodError): { path: string; message: string }[] {
  return error.issues.map((issue) => ({ path: issue.path.join(".") || "query", message: issue.message }));
}

/** For pages: the parsed query, or a thrown 400 whose text names every bad parameter. */
export function readPageQuery<T extends z.ZodType>(schema: T, url: URL): z.output<T> {
  const parsed = schema.safeParse(Object.fromEntries(url.searchParams));
  if (parsed.success) return parsed.data;
  throw new Response(issuesOf(parsed.error).map((issue) => `${issue.path}: ${issue.message}`).join("\n"), {
    status: 400,
    headers: { "Content-Type": "text/plain; charset=utf-8" },
  });
}

/** For the API: the parsed query, or a thrown 400 in the API's error shape. */
export function readApiQuery<T extends z.ZodType>(schema: T, url: URL): z.output<T> {
  const parsed = schema.safeParse(Object.fromEntries(url.searchParams));
  if (parsed.success) return parsed.data;
  throw apiError(400, "The query string is not valid.", issuesOf(parsed.error));
}
