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
  const standing = await getPlanStanding(organisation, now);
  const usage = gate === "seats" || gate === "scenarios" ? await countUsage(organisation.id, now) : {};
  return checkPlanLimit(standing, gate, { ...usage, ...size });
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
