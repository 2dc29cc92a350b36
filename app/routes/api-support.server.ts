/**
 * Small pieces every `/api/v1` resource route uses: reading a JSON body within a size limit and
 * reading numeric ids from the path, each failing with the API's JSON error shape.
 * (Not a route: `app/routes.ts` lists routes explicitly.)
 */
import { apiError } from "~/auth/api-guards.server";
import { planRefusal, type ScenarioSize } from "~/models/plan-gates.server";
import type { PlanSubject } from "~/models/plan-limits.server";
import type { PlanGate } from "~/services/plans";

/** Largest request body accepted: a region of thousands of practices with a km matrix fits. */
export const MAX_BODY_BYTES = 12 * 1024 * 1024;

export async function readJsonBody(request: Request): Promise<unknown> {
  const declared = Number(request.headers.get("Content-Length") ?? "0");
  if (declared > MAX_BODY_BYTES) throw tooLarge(declared);
  const text = await request.text();
  const bytes = new TextEncoder().encode(text).length;
  if (bytes > MAX_BODY_BYTES) throw tooLarge(bytes);
  if (text.trim() === "") throw apiError(400, "The request body is empty: send a JSON document.");
  try {
    return JSON.parse(text);
  } catch (error) {
    throw apiError(400, `The request body is not valid JSON: ${(error as Error).message}`);
  }
}

export function tooLarge(bytes: number): Response {
  return apiError(413, `The request is ${(bytes / 1024 / 1024).toFixed(1)} MB; the limit is ${MAX_BODY_BYTES / 1024 / 1024} MB.`);
}

/** Throws the API's 403 naming the limit when the organisation's plan refuses one of `gates`. */
export async function requireApiPlan(organisation: PlanSubject, gates: readonly PlanGate[], size: Partial<ScenarioSize> = {}): Promise<void> {
  const refusal = await planRefusal(organisation, gates, size);
  if (refusal) throw apiError(403, refusal.message);
}

export function idParam(value: string | undefined, what: string): number {
  const id = Number(value);
  if (!value || !/^\d+$/.test(value) || !Number.isSafeInteger(id)) throw apiError(404, `No such ${what}.`);
  return id;
}

export function methodNotAllowed(allowed: string[]): Response {
  return Response.json(
    { error: { status: 405, message: `Use ${allowed.join(" or ")} here.` } },
    { status: 405, headers: { Allow: allowed.join(", ") } },
  );
}

/** A file name from a scenario name: "Winter, 80% theatre" → "winter-80-theatre". */
export function fileStem(name: string): string {
  return name.toLowerCase().replace(/[^a-z0-9]+/g, "-").replace(/^-|-$/g, "").slice(0, 60) || "scenario";
}
