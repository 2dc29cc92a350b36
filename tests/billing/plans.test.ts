/**
 * Plan standing and limit checks (app/services/plans.ts): pure functions, checked message by
 * message. The numbers are our own plan definitions; the statuses are Stripe's documented
 * subscription statuses (Stripe API reference, "The Subscription object", `status`).
 */
import { describe, expect, it } from "vitest";
import {
  checkPlanLimit,
  PAST_DUE_GRACE_DAYS,
  planForLookupKey,
  planStanding,
  PLANS,
  TRIAL_DAYS,
  type SubscriptionFacts,
} from "../../app/services/plans";

const DAY = 86_400_000;
const created = new Date("2026-03-01T09:00:00Z");

function facts(overrides: Partial<SubscriptionFacts>): SubscriptionFacts {
  return { planKey: "locality", status: "active", currentPeriodEnd: null, cancelAtPeriodEnd: false, pastDueSince: null, ...overrides };
}

describe("planStanding", () => {
  it("puts an organisation without a subscription on the trial, which allows runs for its first 30 days only", () => {
    const during = planStanding({ subscription: null, organisationCreatedAt: created, now: new Date(created.getTime() + 29 * DAY) });
    expect(during).toMatchObject({ source: "trial", status: "trial", runsAllowed: true });
    expect(during.trialEndsAt).toEqual(new Date(created.getTime() + TRIAL_DAYS * DAY));

    const after = planStanding({ subscription: null, organisationCreatedAt: created, now: new Date(created.getTime() + 31 * DAY) });
    expect(after).toMatchObject({ source: "trial", status: "trial_ended", runsAllowed: false });
    expect(after.runsBlockedReason).toBe(
      "The free trial ended on 31 March 2026: existing results stay readable; an administrator can subscribe on the billing page to start new runs.",
    );
  });

  it("gives an active or trialing subscription its paid plan", () => {
    for (const status of ["active", "trialing"]) {
      const standing = planStanding({ subscription: facts({ status, planKey: "region" }), organisationCreatedAt: created, now: created });
      expect(standing).toMatchObject({ source: "subscription", runsAllowed: true });
      expect(standing.plan.key).toBe("region");
    }
  });

  it("keeps a past_due subscription's plan, allowing runs until the grace period ends", () => {
    const since = new Date("2026-05-10T00:00:00Z");
    const subscription = facts({ status: "past_due", pastDueSince: since });
    const lastMoment = new Date(since.getTime() + PAST_DUE_GRACE_DAYS * DAY - 1);
    const graceOver = new Date(since.getTime() + PAST_DUE_GRACE_DAYS * DAY);
    expect(planStanding({ subscription, organisationCreatedAt: created, now: lastMoment })).toMatchObject({
      plan: PLANS.locality,
      status: "past_due",
      runsAllowed: true,
    });
    const blocked = planStanding({ subscription, organisationCreatedAt: created, now: graceOver });
    expect(blocked).toMatchObject({ plan: PLANS.locality, runsAllowed: false });
    expect(blocked.runsBlockedReason).toBe(
      "The Locality plan's payment is overdue since 10 May 2026 and the 7-day grace period has ended: existing results stay readable, but new runs need the payment settled on the billing page.",
    );
  });

  it("falls back to the trial's limits when the subscription is canceled, incomplete or names no plan of ours", () => {
    const now = new Date(created.getTime() + 90 * DAY);
    for (const subscription of [
      facts({ status: "canceled" }),
      facts({ status: "incomplete_expired" }),
      facts({ status: "unpaid" }),
      facts({ planKey: "gold" }),
      facts({ planKey: null }),
    ]) {
      const standing = planStanding({ subscription, organisationCreatedAt: created, now });
      expect(standing.plan.key).toBe("trial");
      expect(standing.runsAllowed).toBe(false);
    }
    const ended = planStanding({ subscription: facts({ status: "canceled" }), organisationCreatedAt: created, now });
    expect(ended.runsBlockedReason).toContain("and the paid subscription has ended");
  });
});

describe("checkPlanLimit", () => {
  const trial = planStanding({ subscription: null, organisationCreatedAt: created, now: created });
  const locality = planStanding({ subscription: facts({}), organisationCreatedAt: created, now: created });
  const region = planStanding({ subscription: facts({ planKey: "region" }), organisationCreatedAt: created, now: created });

  it("allows the last seat and refuses the next, naming the limit and what is in use", () => {
    expect(checkPlanLimit(trial, "seats", { seats: 7 })).toEqual({ ok: true });
    expect(checkPlanLimit(trial, "seats", { seats: 8 })).toEqual({
      ok: false,
      gate: "seats",
      message:
        "Seat limit reached: the Trial plan allows 8 seats (members and pending invitations) and 8 are in use. " +
        "The Locality plan allows more; an administrator can change plan on the billing page.",
    });
  });

  it("counts scenarios against the plan, with no limit on Region", () => {
    expect(checkPlanLimit(locality, "scenarios", { scenarios: 29 }).ok).toBe(true);
    expect(checkPlanLimit(locality, "scenarios", { scenarios: 30 })).toEqual({
      ok: false,
      gate: "scenarios",
      message:
        "Scenario limit reached: the Locality plan allows 30 scenarios and the organisation has 30. Archive one, or upgrade. " +
        "The Region plan allows more; an administrator can change plan on the billing page.",
    });
    expect(checkPlanLimit(region, "scenarios", { scenarios: 10_000 }).ok).toBe(true);
  });

  it("measures problem size as practices × sites and names both in the refusal", () => {
    // The demo region (40 practices × 7 sites = 280) fits the trial.
    expect(checkPlanLimit(trial, "problemSize", { practices: 40, sites: 7 }).ok).toBe(true);
    expect(checkPlanLimit(trial, "problemSize", { practices: 41, sites: 8 })).toEqual({
      ok: false,
      gate: "problemSize",
      message:
        "Problem size limit: this scenario has 41 practices × 8 sites = 328, and the Trial plan allows up to 300 practices × sites. " +
        "The Locality plan allows more; an administrator can change plan on the billing page.",
    });
    const huge = checkPlanLimit(region, "problemSize", { practices: 2_000, sites: 30 });
    expect(huge).toEqual({
      ok: false,
      gate: "problemSize",
      message: "Problem size limit: this scenario has 2,000 practices × 30 sites = 60,000, and the Region plan allows up to 40,000 practices × sites.",
    });
  });

  it("grants API access on Region only", () => {
    expect(checkPlanLimit(trial, "api")).toEqual({
      ok: false,
      gate: "api",
      message: "API access is not included in the Trial plan. The Region plan allows more; an administrator can change plan on the billing page.",
    });
    expect(checkPlanLimit(locality, "api").ok).toBe(false);
    expect(checkPlanLimit(region, "api").ok).toBe(true);
  });
});

describe("planForLookupKey", () => {
  it("maps each paid plan's Stripe lookup key back to the plan, and nothing else", () => {
    expect(planForLookupKey("equilibra_locality_monthly")?.key).toBe("locality");
    expect(planForLookupKey("equilibra_region_monthly")?.key).toBe("region");
    expect(planForLookupKey(null)).toBeUndefined();
    expect(planForLookupKey("equilibra_trial")).toBeUndefined();
  });
});
