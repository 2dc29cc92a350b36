/**
 * The one server-side gate for plan limits. Every gated action and API call goes through
 * `requireWithinPlan(organisation, gate, …)`, which throws a 403 whose text names the limit:
 *
 *   await requireWithinPlan(organisation, "scenarios");                       // before creating one
 *   await requireWithinPlan(organisation, "seats");                           // before inviting
 *   await requireWithinPlan(organisation, "problemSize", { practices, sites }); // before save/run/import
 *   await requireWithinPlan(organisation, "api");                             // every /api/v1 call
 *   await requireWithinPlan(organisation, "runs");                            // before solving
 */
import { checkPlanLimit, planStanding, type PlanCheck, type PlanGate, type PlanStanding } from "~/services/plans";
import { countUsage, getSubscriptionRow } from "./subscriptions.server";

export interface PlanSubject {
  id: number;
  createdAt: Date;
}

export async function getPlanStanding(organisation: PlanSubject, now: Date = new Date()): Promise<PlanStanding> {
  const row = await getSubscriptionRow(organisation.id);
  return planStanding({ subscription: row ?? null, organisationCreatedAt: organisation.createdAt, now });
}

export async function checkWithinPlan(
  organisation: PlanSubject,
  gate: PlanGate,
  size: { practices?: number; sites?: number } = {},
  now: Date = new Date(),
): Promise<PlanCheck> {
  return checkWithinPlanGates(organisation, [gate], size, now);
}

/**
 * The first of `gates` (in the order given) that the plan refuses, or the last check when all
 * pass; the subscription and the usage counts are read once for all of them. `size` applies to
 * the "problemSize" gate.
 */
export async function checkWithinPlanGates(
  organisation: PlanSubject,
  gates: readonly PlanGate[],
  size: { practices?: number; sites?: number } = {},
  now: Date = new Date(),
): Promise<PlanCheck> {
  const standing = await getPlanStanding(organisation, now);
  const usage = gates.some((gate) => gate === "seats" || gate === "scenarios") ? await countUsage(organisation.id, now) : {};
  let check: PlanCheck = { ok: true };
  for (const gate of gates) {
    check = checkPlanLimit(standing, gate, { ...usage, ...(gate === "problemSize" ? size : {}) });
    if (!check.ok) return check;
  }
  return check;
}

/** Resolves when the action fits the plan; otherwise throws a 403 whose text names the limit. */
export async function requireWithinPlan(
  organisation: PlanSubject,
  gate: PlanGate,
  size: { practices?: number; sites?: number } = {},
  now: Date = new Date(),
): Promise<void> {
  const check = await checkWithinPlan(organisation, gate, size, now);
  if (!check.ok) {
    throw new Response(check.message, {
      status: 403,
      headers: { "Content-Type": "text/plain; charset=utf-8", "X-Plan-Limit": check.gate },
    });
  }
}
