/**
 * End to end against the local fake Stripe, through the real SDK and the app's own routes:
 * checkout → webhook → plan active → limits lifted → change plan → cancel at period end → the
 * period ends → back on trial limits. Also: a declined card, a failed renewal with its grace
 * period, the fake being down, and billing hidden from non-administrators.
 */
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { memberships, scenarios, stripeEvents, subscriptions } from "../../app/db/schema";
import { checkWithinPlan, getPlanStanding, requireWithinPlan } from "../../app/models/plan-limits.server";
import { linkCustomer } from "../../app/models/subscriptions.server";
import { upsertUserFromProfile } from "../../app/models/users.server";
import { action as billingAction, loader as billingLoader } from "../../app/routes/o.$org.billing";
import { loader as cancelLoader } from "../../app/routes/o.$org.billing.cancel";
import { loader as successLoader } from "../../app/routes/o.$org.billing.success";
import { ensureCatalogue } from "../../app/services/billing.server";
import { PAST_DUE_GRACE_DAYS, PLANS } from "../../app/services/plans";
import { startFakeStripe, type FakeStripe } from "../../app/fakes/stripe/server";
import { useTestDatabase } from "../support/database";
import {
  configureBilling,
  cookieFor,
  createAdministrator,
  formPost,
  get,
  routeArgs,
  startWebhookEndpoint,
  thrownResponse,
  WEBHOOK_SECRET,
} from "./support";

type BillingLoaderArgs = Parameters<typeof billingLoader>[0];
type BillingActionArgs = Parameters<typeof billingAction>[0];

const database = useTestDatabase();
let fake: FakeStripe;
let endpoint: Awaited<ReturnType<typeof startWebhookEndpoint>>;

beforeAll(async () => {
  endpoint = await startWebhookEndpoint();
  fake = await startFakeStripe({ webhookUrl: endpoint.url, webhookSecret: WEBHOOK_SECRET });
  configureBilling({ apiBase: fake.url });
});

afterAll(async () => {
  await fake?.close();
  await endpoint?.close();
});

async function subscriptionRow(organisationId: number) {
  const [row] = await database.db.select().from(subscriptions).where(eq(subscriptions.organisationId, organisationId));
  return row;
}

async function addScenarios(organisationId: number, count: number) {
  for (let n = 0; n < count; n++) {
    await database.db.insert(scenarios).values({ organisationId, name: `Scenario ${n + 1}` });
  }
}

async function billingPage(slug: string, cookie: string) {
  const result = await billingLoader(routeArgs<BillingLoaderArgs>(get(`/o/${slug}/billing`, cookie), { org: slug }));
  return result.data;
}

async function postBilling(slug: string, cookie: string, fields: Record<string, string>) {
  return billingAction(routeArgs<BillingActionArgs>(formPost(`/o/${slug}/billing`, cookie, fields), { org: slug }));
}

/** Starts checkout through the billing page's action and returns the hosted payment page's URL. */
async function startCheckout(slug: string, cookie: string, plan: string): Promise<string> {
  const response = await postBilling(slug, cookie, { intent: "subscribe", plan });
  if (!(response instanceof Response)) throw new Error(`expected a redirect to checkout, got ${JSON.stringify(response)}`);
  expect(response.status).toBe(302);
  return response.headers.get("Location") ?? "";
}

async function pay(paymentPage: string, cardNumber: string): Promise<Response> {
  return fetch(paymentPage, { method: "POST", body: new URLSearchParams({ card_number: cardNumber }), redirect: "manual" });
}

async function advanceClock(days: number, failPayment = false): Promise<void> {
  const response = await fetch(`${fake.url}/_test/advance-clock`, {
    method: "POST",
    headers: { "Content-Type": "application/json" },
    body: JSON.stringify({ days, failPayment }),
  });
  expect(response.status).toBe(200);
}

describe("the catalogue", () => {
  it("creates one product and one monthly price per paid plan, and finds them again on the next start", async () => {
    const first = await ensureCatalogue();
    const second = await ensureCatalogue();
    expect(second).toEqual(first);
    expect(fake.state.products.size).toBe(2);
    expect(fake.state.prices.size).toBe(2);
    const locality = fake.state.prices.get(first.locality.priceId);
    expect(locality?.lookup_key).toBe(PLANS.locality.lookupKey);
    expect(locality?.unit_amount).toBe(PLANS.locality.monthlyPence);
    expect(locality?.recurring?.interval).toBe("month");
  });
});

describe("an administrator subscribes, changes plan, cancels, and the plan ends", () => {
  it("runs the whole subscription life cycle", async () => {
    const { organisation, cookie } = await createAdministrator("Merrow Vale Commissioning");
    await addScenarios(organisation.id, PLANS.trial.limits.scenarios ?? 0);

    // On the trial: the scenario limit is reached, and there is no API access.
    const trialLimit = await thrownResponse(() => requireWithinPlan(organisation, "scenarios"));
    expect(trialLimit.status).toBe(403);
    expect(trialLimit.headers.get("X-Plan-Limit")).toBe("scenarios");
    expect(await trialLimit.text()).toMatch(/Scenario limit reached: the Trial plan allows 12 scenarios/);
    expect((await billingPage(organisation.slug, cookie)).plan.key).toBe("trial");

    // Checkout: redirect to the hosted page, pay with the test card, come back to the success page.
    const paymentPage = await startCheckout(organisation.slug, cookie, "locality");
    expect(paymentPage.startsWith(`${fake.url}/pay/cs_test_`)).toBe(true);
    const paid = await pay(paymentPage, "4242 4242 4242 4242");
    expect(paid.status).toBe(303);
    const successUrl = new URL(paid.headers.get("Location") ?? "");
    expect(successUrl.pathname).toBe(`/o/${organisation.slug}/billing/success`);

    // The webhook arrived before the redirect: the plan is active and the limit is lifted.
    const afterCheckout = await subscriptionRow(organisation.id);
    expect(afterCheckout.status).toBe("active");
    expect(afterCheckout.planKey).toBe("locality");
    await expect(requireWithinPlan(organisation, "scenarios")).resolves.toBeUndefined();
    expect((await checkWithinPlan(organisation, "api")).ok).toBe(false);
    const handled = await database.db.select().from(stripeEvents).where(eq(stripeEvents.organisationId, organisation.id));
    expect(handled.map((event) => event.type).sort()).toEqual([
      "checkout.session.completed",
      "customer.subscription.created",
      "invoice.paid",
    ]);

    const success = await successLoader(
      routeArgs<Parameters<typeof successLoader>[0]>(get(`${successUrl.pathname}${successUrl.search}`, cookie), { org: organisation.slug }),
    );
    expect(success.data).toMatchObject({ complete: true, planName: "Locality", problem: null });

    // The billing page: plan, status, renewal date, seats, and the first invoice with its link.
    const page = await billingPage(organisation.slug, cookie);
    expect(page.plan.name).toBe("Locality");
    expect(page.status).toBe("active");
    expect(page.usage.seats).toBe(1);
    expect(page.plan.limits.seats).toBe(25);
    expect(new Date(page.currentPeriodEnd ?? 0).getTime()).toBeGreaterThan(Date.now() + 27 * 86_400_000);
    expect(page.invoices).toHaveLength(1);
    expect(page.invoices[0]).toMatchObject({ status: "paid", amountDuePence: 39_000, amountPaidPence: 39_000, currency: "gbp" });
    const invoicePage = await fetch(page.invoices[0].url ?? "");
    expect(invoicePage.status).toBe(200);
    expect(await invoicePage.text()).toContain("£390.00");

    // Upgrade: Region includes the API.
    const changed = await postBilling(organisation.slug, cookie, { intent: "change", plan: "region" });
    expect(changed).toMatchObject({ data: { error: null } });
    await fake.settle();
    expect((await subscriptionRow(organisation.id)).planKey).toBe("region");
    await expect(requireWithinPlan(organisation, "api")).resolves.toBeUndefined();

    // Cancel at period end, change of mind, cancel again: the plan stays until the period closes.
    await postBilling(organisation.slug, cookie, { intent: "cancel" });
    expect((await subscriptionRow(organisation.id)).cancelAtPeriodEnd).toBe(true);
    await postBilling(organisation.slug, cookie, { intent: "resume" });
    expect((await subscriptionRow(organisation.id)).cancelAtPeriodEnd).toBe(false);
    await postBilling(organisation.slug, cookie, { intent: "cancel" });
    await fake.settle();
    const scheduled = await subscriptionRow(organisation.id);
    expect(scheduled).toMatchObject({ cancelAtPeriodEnd: true, status: "active", planKey: "region" });

    // The period ends: Stripe deletes the subscription and the trial's limits apply again.
    await advanceClock(32);
    const ended = await subscriptionRow(organisation.id);
    expect(ended.status).toBe("canceled");
    expect((await getPlanStanding(organisation)).plan.key).toBe("trial");
    expect((await checkWithinPlan(organisation, "scenarios")).ok).toBe(false);
    expect((await checkWithinPlan(organisation, "api")).ok).toBe(false);
    // Once the trial window has also passed, new runs stop; reading is untouched.
    const later = new Date(organisation.createdAt.getTime() + 31 * 86_400_000);
    const runs = await checkWithinPlan(organisation, "runs", {}, later);
    expect(runs.ok).toBe(false);
    if (!runs.ok) expect(runs.message).toMatch(/free trial ended .* and the paid subscription has ended/);
  });
});

describe("faults and refusals", () => {
  it("leaves the organisation on its previous plan when the card is declined", async () => {
    const { organisation, cookie } = await createAdministrator("Declined Card Commissioning");
    const paymentPage = await startCheckout(organisation.slug, cookie, "region");
    const declined = await pay(paymentPage, "4000 0000 0000 0002");
    expect(declined.status).toBe(402);
    expect(await declined.text()).toContain("Your card was declined");
    await fake.settle();

    const row = await subscriptionRow(organisation.id);
    expect(row.stripeSubscriptionId).toBeNull();
    expect(row.status).toBeNull();
    const customerSubscriptions = [...fake.state.subscriptions.values()].filter((s) => s.customer === row.stripeCustomerId);
    expect(customerSubscriptions).toHaveLength(0);
    expect((await billingPage(organisation.slug, cookie)).plan.key).toBe("trial");

    // Leaving the payment page lands on the cancel page, which says nothing changed.
    const cancelled = await cancelLoader(
      routeArgs<Parameters<typeof cancelLoader>[0]>(get(`/o/${organisation.slug}/billing/cancel`, cookie), { org: organisation.slug }),
    );
    expect(cancelled.data.planName).toBe("Trial");
  });

  it("turns a failed renewal into past_due: runs continue through the grace period, then stop; payment restores them", async () => {
    const { organisation, cookie } = await createAdministrator("Overdue Commissioning");
    await pay(await startCheckout(organisation.slug, cookie, "locality"), "4242424242424242");
    const started = await subscriptionRow(organisation.id);
    expect(started.status).toBe("active");

    await advanceClock(32, true);
    const overdue = await subscriptionRow(organisation.id);
    expect(overdue.status).toBe("past_due");
    expect(overdue.planKey).toBe("locality");
    const since = overdue.pastDueSince ?? new Date(0);
    expect((await checkWithinPlan(organisation, "runs", {}, new Date(since.getTime() + 86_400_000))).ok).toBe(true);
    const afterGrace = await checkWithinPlan(organisation, "runs", {}, new Date(since.getTime() + (PAST_DUE_GRACE_DAYS + 1) * 86_400_000));
    expect(afterGrace.ok).toBe(false);
    if (!afterGrace.ok) expect(afterGrace.message).toMatch(/grace period has ended/);
    // Read access is not a gate at all; the plan's other limits still apply during past_due.
    expect((await checkWithinPlan(organisation, "scenarios")).ok).toBe(true);

    const page = await billingPage(organisation.slug, cookie);
    expect(page.status).toBe("past_due");
    expect(page.invoices.map((invoice) => invoice.status)).toEqual(["open", "paid"]);

    // Stripe's retry succeeds: active again, the grace clock cleared.
    await advanceClock(0);
    const recovered = await subscriptionRow(organisation.id);
    expect(recovered.status).toBe("active");
    expect(recovered.pastDueSince).toBeNull();
  });

  it("says clearly when the payment service is down, and writes nothing", async () => {
    const { organisation, cookie } = await createAdministrator("Offline Commissioning");
    const closed = await startFakeStripe();
    const deadUrl = closed.url;
    await closed.close();
    configureBilling({ apiBase: deadUrl });
    try {
      const result = await postBilling(organisation.slug, cookie, { intent: "subscribe", plan: "locality" });
      expect(result).not.toBeInstanceOf(Response);
      if (result instanceof Response) return;
      expect(result.init?.status).toBe(503);
      expect(result.data.error).toMatch(/payment service could not be reached .* nothing was changed/);
      expect(await subscriptionRow(organisation.id)).toBeUndefined();
      expect((await getPlanStanding(organisation)).plan.key).toBe("trial");
    } finally {
      configureBilling({ apiBase: fake.url });
    }
  });

  it("registers a fresh customer when Stripe no longer knows the one on record", async () => {
    const { organisation, cookie } = await createAdministrator("Moved Commissioning");
    await linkCustomer(organisation.id, "cus_from_another_stripe");
    const paymentPage = await startCheckout(organisation.slug, cookie, "locality");
    expect((await pay(paymentPage, "4242 4242 4242 4242")).status).toBe(303);
    const row = await subscriptionRow(organisation.id);
    expect(row.stripeCustomerId).not.toBe("cus_from_another_stripe");
    expect(row.status).toBe("active");
  });

  it("shows billing to administrators only", async () => {
    const { organisation } = await createAdministrator("Roles Commissioning");
    const planner = await upsertUserFromProfile({ githubId: `planner-${process.pid}`, login: "planner", name: "A Planner", email: "planner@example.test" });
    await database.db.insert(memberships).values({ organisationId: organisation.id, userId: planner.id, role: "planner" });
    const cookie = await cookieFor(planner.id);
    const refused = await thrownResponse(() => billingPage(organisation.slug, cookie));
    expect(refused.status).toBe(403);
    const refusedAction = await thrownResponse(() => postBilling(organisation.slug, cookie, { intent: "subscribe", plan: "region" }));
    expect(refusedAction.status).toBe(403);
  });

  it("rejects a form that names no known plan, with a message", async () => {
    const { organisation, cookie } = await createAdministrator("Form Commissioning");
    const result = await postBilling(organisation.slug, cookie, { intent: "subscribe", plan: "platinum" });
    if (result instanceof Response) throw new Error("expected data, not a redirect");
    expect(result.init?.status).toBe(400);
    expect(result.data.error).toMatch(/choose one of the plans/);
    expect(await subscriptionRow(organisation.id)).toBeUndefined();
  });
});
