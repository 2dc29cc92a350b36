/**
 * Equilibra's plans and their limits: pure data and pure checks, importable by routes, models and
 * the browser alike. The database counts and Stripe state are gathered elsewhere
 * (app/models/plan-limits.server.ts) and passed in.
 *
 * Problem size is practices × sites of one scenario: it is what drives solve time and memory
 * (the engine's flow matrix has one entry per practice–site pair and service line).
 */

export const PLAN_KEYS = ["trial", "locality", "region"] as const;
export type PlanKey = (typeof PLAN_KEYS)[number];
export type PaidPlanKey = Exclude<PlanKey, "trial">;

export interface PlanLimits {
  /** Members plus pending invitations. */
  seats: number;
  /** Scenarios not archived; null = no limit. */
  scenarios: number | null;
  /** Practices × sites in one scenario. */
  problemSize: number;
  /** Programmatic access: API tokens and /api/v1/*. */
  api: boolean;
}

export interface Plan {
  key: PlanKey;
  name: string;
  summary: string;
  /** Monthly price in pence, VAT excluded; null for the free trial. */
  monthlyPence: number | null;
  /** The Stripe price's lookup key; null for the free trial (it never goes through Stripe). */
  lookupKey: string | null;
  limits: PlanLimits;
}

export const TRIAL_DAYS = 30;
/** How long a past_due subscription may still start new runs after its payment first failed. */
export const PAST_DUE_GRACE_DAYS = 7;

export const PLANS: Record<PlanKey, Plan> = {
  trial: {
    key: "trial",
    name: "Trial",
    summary: `Free for ${TRIAL_DAYS} days: one small region, a few colleagues.`,
    monthlyPence: null,
    lookupKey: null,
    limits: { seats: 8, scenarios: 12, problemSize: 300, api: false },
  },
  locality: {
    key: "locality",
    name: "Locality",
    summary: "For a commissioning team planning one area's elective care.",
    monthlyPence: 39_000,
    lookupKey: "equilibra_locality_monthly",
    limits: { seats: 25, scenarios: 30, problemSize: 3_000, api: false },
  },
  region: {
    key: "region",
    name: "Region",
    summary: "For a regional body: large problems, many teams, API access.",
    monthlyPence: 120_000,
    lookupKey: "equilibra_region_monthly",
    limits: { seats: 50, scenarios: null, problemSize: 40_000, api: true },
  },
};

export const PAID_PLANS: Plan[] = [PLANS.locality, PLANS.region];

export function isPlanKey(value: unknown): value is PlanKey {
  return typeof value === "string" && (PLAN_KEYS as readonly string[]).includes(value);
}

export function isPaidPlanKey(value: unknown): value is PaidPlanKey {
  return isPlanKey(value) && value !== "trial";
}

export function planForLookupKey(lookupKey: string | null | undefined): Plan | undefined {
  return PAID_PLANS.find((plan) => plan.lookupKey === lookupKey);
}

/** The subscription facts that decide what an organisation may do (a subset of the mirror row). */
export interface SubscriptionFacts {
  planKey: string | null;
  status: string | null;
  currentPeriodEnd: Date | null;
  cancelAtPeriodEnd: boolean;
  pastDueSince: Date | null;
}

/** Stripe statuses under which the paid plan's limits apply. */
const LIVE_STATUSES = new Set(["active", "trialing", "past_due"]);

export interface PlanStanding {
  plan: Plan;
  /** Where the plan comes from: a Stripe subscription, or the free trial every organisation starts on. */
  source: "subscription" | "trial";
  /** Stripe's status for a subscription; "trial" or "trial_ended" otherwise. */
  status: string;
  trialEndsAt: Date | null;
  graceEndsAt: Date | null;
  /** Whether new runs may start; reading is always allowed. */
  runsAllowed: boolean;
  /** Why runs are blocked, in words for the person who tried. */
  runsBlockedReason: string | null;
}

const DAY_MS = 86_400_000;

function formatDay(date: Date): string {
  return date.toLocaleDateString("en-GB", { day: "numeric", month: "long", year: "numeric", timeZone: "UTC" });
}

/** What plan an organisation is on now, and whether it may start runs. */
export function planStanding(input: {
  subscription: SubscriptionFacts | null;
  organisationCreatedAt: Date;
  now: Date;
}): PlanStanding {
  const { subscription, now } = input;
  if (subscription && subscription.status && LIVE_STATUSES.has(subscription.status) && isPaidPlanKey(subscription.planKey)) {
    const plan = PLANS[subscription.planKey];
    if (subscription.status === "past_due") {
      const since = subscription.pastDueSince ?? now;
      const graceEndsAt = new Date(since.getTime() + PAST_DUE_GRACE_DAYS * DAY_MS);
      const runsAllowed = now < graceEndsAt;
      return {
        plan,
        source: "subscription",
        status: "past_due",
        trialEndsAt: null,
        graceEndsAt,
        runsAllowed,
        runsBlockedReason: runsAllowed
          ? null
          : `The ${plan.name} plan's payment is overdue since ${formatDay(since)} and the ${PAST_DUE_GRACE_DAYS}-day grace period has ended: ` +
            "existing results stay readable, but new runs need the payment settled on the billing page.",
      };
    }
    return { plan, source: "subscription", status: subscription.status, trialEndsAt: null, graceEndsAt: null, runsAllowed: true, runsBlockedReason: null };
  }

  const trialEndsAt = new Date(input.organisationCreatedAt.getTime() + TRIAL_DAYS * DAY_MS);
  const onTrial = now < trialEndsAt;
  return {
    plan: PLANS.trial,
    source: "trial",
    status: onTrial ? "trial" : "trial_ended",
    trialEndsAt,
    graceEndsAt: null,
    runsAllowed: onTrial,
    runsBlockedReason: onTrial
      ? null
      : `The free trial ended on ${formatDay(trialEndsAt)}${subscription?.status === "canceled" ? " and the paid subscription has ended" : ""}: ` +
        "existing results stay readable; an administrator can subscribe on the billing page to start new runs.",
  };
}

export type PlanGate = "scenarios" | "seats" | "problemSize" | "api" | "runs";

export interface PlanUsage {
  /** Current members plus pending invitations. */
  seats?: number;
  /** Current scenarios not archived. */
  scenarios?: number;
  /** The scenario to be saved or run. */
  practices?: number;
  sites?: number;
}

export type PlanCheck = { ok: true } | { ok: false; gate: PlanGate; message: string };

function upgradeHint(plan: Plan, better: (limits: PlanLimits) => boolean): string {
  const next = PAID_PLANS.find((candidate) => candidate.key !== plan.key && better(candidate.limits));
  return next ? ` The ${next.name} plan allows more; an administrator can change plan on the billing page.` : "";
}

/**
 * Whether one more of the gated thing fits the plan. `usage` carries the counts before the action
 * (for seats and scenarios the action adds one) or the size of the scenario (problemSize).
 */
export function checkPlanLimit(standing: PlanStanding, gate: PlanGate, usage: PlanUsage = {}): PlanCheck {
  const { plan } = standing;
  const limits = plan.limits;
  switch (gate) {
    case "runs":
      return standing.runsAllowed ? { ok: true } : { ok: false, gate, message: standing.runsBlockedReason ?? "New runs are not allowed." };
    case "api":
      return limits.api
        ? { ok: true }
        : { ok: false, gate, message: `API access is not included in the ${plan.name} plan.${upgradeHint(plan, (l) => l.api)}` };
    case "seats": {
      const used = usage.seats ?? 0;
      return used + 1 <= limits.seats
        ? { ok: true }
        : {
            ok: false,
            gate,
            message:
              `Seat limit reached: the ${plan.name} plan allows ${limits.seats} seats (members and pending invitations) and ${used} are in use.` +
              upgradeHint(plan, (l) => l.seats > limits.seats),
          };
    }
    case "scenarios": {
      const used = usage.scenarios ?? 0;
      if (limits.scenarios === null || used + 1 <= limits.scenarios) return { ok: true };
      return {
        ok: false,
        gate,
        message:
          `Scenario limit reached: the ${plan.name} plan allows ${limits.scenarios} scenarios and the organisation has ${used}. Archive one, or upgrade.` +
          upgradeHint(plan, (l) => l.scenarios === null || l.scenarios > (limits.scenarios ?? 0)),
      };
    }
    case "problemSize": {
      const practices = usage.practices ?? 0;
      const sites = usage.sites ?? 0;
      const size = practices * sites;
      return size <= limits.problemSize
        ? { ok: true }
        : {
            ok: false,
            gate,
            message:
              `Problem size limit: this scenario has ${practices.toLocaleString("en-GB")} practices × ${sites.toLocaleString("en-GB")} sites = ${size.toLocaleString("en-GB")}, ` +
              `and the ${plan.name} plan allows up to ${limits.problemSize.toLocaleString("en-GB")} practices × sites.` +
              upgradeHint(plan, (l) => l.problemSize >= size),
          };
    }
  }
}

export function formatPence(pence: number): string {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: "GBP" }).format(pence / 100);
}
