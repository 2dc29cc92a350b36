/**
 * The webhook route with Stripe replaced by nock, replaying responses recorded from the fake
 * (fixtures/record.ts → fixtures/stripe-recording.json). Events are signed here with the test
 * secret exactly as Stripe signs them (Stripe.webhooks.generateTestHeaderString).
 */
import { eq } from "drizzle-orm";
import nock, { type Definition } from "nock";
import Stripe from "stripe";
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from "vitest";
import { stripeEvents, subscriptions } from "../../app/db/schema";
import { linkCustomer } from "../../app/models/subscriptions.server";
import { action as webhookAction } from "../../app/routes/api.stripe.webhook";
import { useTestDatabase } from "../support/database";
import recording from "./fixtures/stripe-recording.json";
import { APP_ORIGIN, configureBilling, createAdministrator, routeArgs, WEBHOOK_SECRET } from "./support";

type EventName = keyof typeof recording.events;
type Stage = keyof typeof recording.retrievals;

const database = useTestDatabase();
let organisationId: number;

beforeAll(async () => {
  configureBilling({ apiBase: recording.apiBase });
  nock.disableNetConnect();
  const { organisation } = await createAdministrator("Recorded Commissioning");
  organisationId = organisation.id;
  await linkCustomer(organisation.id, recording.customerId);
});

afterEach(() => {
  // Every test states the Stripe calls it expects; none may be left over or unexpected.
  const pending = nock.pendingMocks();
  nock.cleanAll();
  expect(pending).toEqual([]);
});

afterAll(() => {
  nock.enableNetConnect();
});

/** Stripe answers one retrieve of the subscription with the state recorded at `stage`. */
function stripeReturns(stage: Stage, options: { delayMs?: number } = {}): nock.Scope {
  const definition = recording.retrievals[stage] as Definition;
  return nock(definition.scope)
    .get(definition.path as string)
    .delay(options.delayMs ?? 0)
    .reply(definition.status ?? 200, definition.response as nock.Body);
}

function signedRequest(payload: string, signature?: string): Request {
  const headers: Record<string, string> = { "Content-Type": "application/json" };
  const header = signature ?? Stripe.webhooks.generateTestHeaderString({ payload, secret: WEBHOOK_SECRET });
  if (header) headers["Stripe-Signature"] = header;
  return new Request(`${APP_ORIGIN}/api/stripe/webhook`, { method: "POST", headers, body: payload });
}

async function deliver(name: EventName, signature?: string): Promise<{ status: number; body: { outcome?: string; error?: string } }> {
  const payload = JSON.stringify(recording.events[name], null, 2);
  const response = await webhookAction(routeArgs(signedRequest(payload, signature), {}));
  return { status: response.status, body: await response.json() };
}

async function mirror() {
  const [row] = await database.db.select().from(subscriptions).where(eq(subscriptions.organisationId, organisationId));
  return row;
}

async function handledEvents() {
  return database.db.select().from(stripeEvents);
}

describe("signature verification", () => {
  it("refuses a tampered payload with 400 and changes nothing", async () => {
    const original = JSON.stringify(recording.events["checkout.session.completed:checkout"], null, 2);
    const signature = Stripe.webhooks.generateTestHeaderString({ payload: original, secret: WEBHOOK_SECRET });
    const tampered = original.replace(`"client_reference_id": "1"`, `"client_reference_id": "2"`);
    expect(tampered).not.toBe(original);
    const response = await webhookAction(routeArgs(signedRequest(tampered, signature), {}));
    expect(response.status).toBe(400);
    expect((await response.json()).error).toMatch(/signature/i);
    expect(await handledEvents()).toHaveLength(0);
    expect((await mirror()).status).toBeNull();
  });

  it("refuses a signature made with another secret, and a missing one", async () => {
    const payload = JSON.stringify(recording.events["checkout.session.completed:checkout"]);
    const foreign = Stripe.webhooks.generateTestHeaderString({ payload, secret: "whsec_someone_else" });
    expect((await webhookAction(routeArgs(signedRequest(payload, foreign), {}))).status).toBe(400);
    expect((await webhookAction(routeArgs(signedRequest(payload, ""), {}))).status).toBe(400);
    expect(await handledEvents()).toHaveLength(0);
  });
});

describe("handling events", () => {
  it("activates the plan on checkout.session.completed, and acknowledges a duplicate without acting again", async () => {
    stripeReturns("active");
    const first = await deliver("checkout.session.completed:checkout");
    expect(first).toEqual({ status: 200, body: { received: true, outcome: "applied" } });
    expect(await mirror()).toMatchObject({
      stripeSubscriptionId: recording.subscriptionIds.first,
      planKey: "locality",
      status: "active",
      cancelAtPeriodEnd: false,
    });

    // The same event again: no Stripe call is set up, so any attempt would fail the test.
    const duplicate = await deliver("checkout.session.completed:checkout");
    expect(duplicate).toEqual({ status: 200, body: { received: true, outcome: "duplicate" } });
    const handled = await handledEvents();
    expect(handled.filter((event) => event.id === recording.events["checkout.session.completed:checkout"].id)).toHaveLength(1);
  });

  it("marks the subscription past_due on invoice.payment_failed, starting the grace period, and clears it on invoice.paid", async () => {
    stripeReturns("past_due");
    expect((await deliver("invoice.payment_failed:renewal_failed")).body.outcome).toBe("applied");
    const overdue = await mirror();
    expect(overdue.status).toBe("past_due");
    expect(overdue.pastDueSince).toBeInstanceOf(Date);

    // The subscription.updated of the same failure keeps the original start of the grace period.
    stripeReturns("past_due");
    await deliver("customer.subscription.updated:renewal_failed");
    expect((await mirror()).pastDueSince).toEqual(overdue.pastDueSince);

    stripeReturns("recovered");
    await deliver("invoice.paid:recovered");
    expect(await mirror()).toMatchObject({ status: "active", pastDueSince: null });
  });

  it("never lets a late, older event move the state backwards", async () => {
    // Stripe's current state is "cancel scheduled"; the older "created" event arrives after it.
    stripeReturns("cancel_scheduled");
    await deliver("customer.subscription.updated:cancel_scheduled");
    stripeReturns("cancel_scheduled");
    const late = await deliver("customer.subscription.created:checkout");
    expect(late.status).toBe(200);
    expect(await mirror()).toMatchObject({ status: "active", cancelAtPeriodEnd: true });
  });

  it("keeps the newer read when two deliveries race and the older read finishes last", async () => {
    // The first delivery reads Stripe before the subscription ended, but its answer is slow;
    // the second reads the ended subscription and finishes first.
    stripeReturns("cancel_scheduled", { delayMs: 300 });
    const older = deliverRaw({ ...recording.events["customer.subscription.updated:cancel_scheduled"], id: "evt_race_older" });
    while (nock.pendingMocks().length > 0) await new Promise((resolve) => setTimeout(resolve, 5));
    stripeReturns("canceled");
    const newer = await deliver("customer.subscription.deleted:period_ended");
    expect(newer.body.outcome).toBe("applied");
    expect((await older).body.outcome).toBe("stale");
    expect(await mirror()).toMatchObject({ status: "canceled", planKey: "locality" });
  });

  it("does not let the old subscription's events override a newer subscription", async () => {
    stripeReturns("second_active");
    await deliver("customer.subscription.created:resubscribed");
    expect(await mirror()).toMatchObject({ stripeSubscriptionId: recording.subscriptionIds.second, status: "active" });

    // A retried delivery about the first, finished subscription.
    stripeReturns("canceled");
    const late = await deliverRaw({ ...recording.events["customer.subscription.deleted:period_ended"], id: "evt_retry_of_old" });
    expect(late.body.outcome).toBe("superseded");
    expect(await mirror()).toMatchObject({ stripeSubscriptionId: recording.subscriptionIds.second, status: "active" });
  });

  it("logs and acknowledges an event for a customer we do not know, without calling Stripe", async () => {
    const warn = vi.spyOn(console, "warn").mockImplementation(() => {});
    const before = await mirror();
    const result = await deliver("checkout.session.completed:stranger");
    expect(result).toEqual({ status: 200, body: { received: true, outcome: "unknown_customer" } });
    expect(warn).toHaveBeenCalledWith(expect.stringContaining(recording.strangerCustomerId));
    warn.mockRestore();
    expect(await mirror()).toEqual(before);
  });

  it("answers 503 when Stripe cannot be read, and handles the redelivery", async () => {
    // No interceptor and no network: the SDK's request fails to connect, as when Stripe is unreachable.
    const event = { ...recording.events["invoice.paid:resubscribed"], id: "evt_retry_after_outage" };
    const failed = await deliverRaw(event);
    expect(failed.status).toBe(503);
    expect((await handledEvents()).some((row) => row.id === event.id)).toBe(false);

    stripeReturns("second_active");
    const retried = await deliverRaw(event);
    expect(retried).toEqual({ status: 200, body: { received: true, outcome: "applied" } });
  });
});

async function deliverRaw(event: object): Promise<{ status: number; body: { outcome?: string; error?: string } }> {
  const response = await webhookAction(routeArgs(signedRequest(JSON.stringify(event)), {}));
  return { status: response.status, body: await response.json() };
}
