/**
 * What routes ask before a gated action: the first plan limit that refuses it, if any.
 * The limits themselves and their messages live in `app/services/plans.ts`; the subscription
 * state behind them in `plan-limits.server.ts`. Routes turn a refusal into a 403 — a form error on
 * pages, `{ error }` JSON in the API — so every caller hears the same sentence naming the limit.
 */
import type { PlanGate } from "~/services/plans";
import { listOrganisationsForUser } from "./organisations.server";
import { checkWithinPlanGates, type PlanSubject } from "./plan-limits.server";

export interface PlanRefusal {
  gate: PlanGate;
  message: string;
}

export interface ScenarioSize {
  practices: number;
  sites: number;
}

/**
 * Practices × sites of an exchange-format document, counted before validation so that an
 * over-size upload is refused without solving or storing it. Anything not an array counts 0
 * (the scenario's own checks report it).
 */
export function scenarioSize(document: unknown): ScenarioSize {
  const record = typeof document === "object" && document !== null ? (document as Record<string, unknown>) : {};
  const count = (value: unknown) => (Array.isArray(value) ? value.length : 0);
  return { practices: count(record.sources), sites: count(record.providers) };
}

/** The first of `gates` the organisation's plan refuses (in the order given), or null. */
export async function planRefusal(
  organisation: PlanSubject,
  gates: readonly PlanGate[],
  size: Partial<ScenarioSize> = {},
  now: Date = new Date(),
): Promise<PlanRefusal | null> {
  const check = await checkWithinPlanGates(organisation, gates, size, now);
  return check.ok ? null : { gate: check.gate, message: check.message };
}

/**
 * For a signed-in person solving outside any one organisation (`POST /api/v1/solve` from a
 * session): allowed when any of their organisations' plans allows it; otherwise the refusal of
 * the first (their default organisation). A person in no organisation has no plan at all.
 */
export async function planRefusalForPerson(
  userId: number,
  gates: readonly PlanGate[],
  size: Partial<ScenarioSize> = {},
  now: Date = new Date(),
): Promise<PlanRefusal | null> {
  const memberships = await listOrganisationsForUser(userId);
  if (memberships.length === 0) {
    return { gate: gates[0] ?? "runs", message: "Solving needs a plan: join or create an organisation first." };
  }
  let first: PlanRefusal | null = null;
  for (const { organisation } of memberships) {
    const refusal = await planRefusal(organisation, gates, size, now);
    if (!refusal) return null;
    first ??= refusal;
  }
  return first;
}
