/**
 * The fake Stripe server's wire behaviour, checked against Stripe's published API reference
 * (Stripe, "API reference", docs.stripe.com/api): list objects ("Pagination"), error objects
 * ("Errors"), idempotent requests ("Idempotent requests"), webhook signatures ("Check the webhook
 * signatures": header `t=…,v1=…`, v1 = HMAC-SHA256 of "{t}.{payload}" with the endpoint secret),
 * and billing-cycle dates ("Billing cycle": an anchor on the 31st bills on the month's last day).
 */
import { createHmac } from "node:crypto";
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { createServer, type Server } from "node:http";
import type { AddressInfo } from "node:net";
import Stripe from "stripe";
import { afterAll, beforeAll, beforeEach, describe, expect, it } from "vitest";
import { startFakeStripe, type FakeStripe } from "../../app/fakes/stripe/server";
import { addInterval, nextPeriodEnd } from "../../app/fakes/stripe/state";

const SECRET = "whsec_fake_stripe_tests";
let fake: FakeStripe;
let stripe: Stripe;
let hook: Server;
let hookUrl: string;
let received: Array<{ signature: string; body: string }> = [];
let failNext = 0;

beforeAll(async () => {
  hook = createServer(async (request, response) => {
    const chunks: Buffer[] = [];
    for await (const chunk of request) chunks.push(chunk as Buffer);
    if (failNext > 0) {
      failNext -= 1;
      response.writeHead(500).end();
      return;
    }
    received.push({ signature: String(request.headers["stripe-signature"]), body: Buffer.concat(chunks).toString("utf8") });
    response.writeHead(200).end("{}");
  });
  await new Promise<void>((resolve) => hook.listen(0, "127.0.0.1", resolve));
  hookUrl = `http://127.0.0.1:${(hook.address() as AddressInfo).port}/hook`;
  fake = await startFakeStripe({ webhookUrl: hookUrl, webhookSecret: SECRET });
  stripe = new Stripe("sk_test_fake_tests", { host: "127.0.0.1", port: fake.port, protocol: "http", maxNetworkRetries: 0, telemetry: false });
});

beforeEach(async () => {
  await fetch(`${fake.url}/_test/reset`, { method: "POST" });
  received = [];
  failNext = 0;
});

afterAll(async () => {
  await fake.close();
  await new Promise((resolve) => hook.close(resolve));
});

async function monthlyPrice(lookupKey = "plan_monthly", unitAmount = 1_000) {
  const product = await stripe.products.create({ name: "Test plan" });
  return stripe.prices.create({ product: product.id, currency: "gbp", unit_amount: unitAmount, recurring: { interval: "month" }, lookup_key: lookupKey });
}

async function subscribe(priceId: string, card = "4242 4242 4242 4242") {
  const customer = await stripe.customers.create({ email: "buyer@example.test" });
  const session = await stripe.checkout.sessions.create({
    mode: "subscription",
    customer: customer.id,
    line_items: [{ price: priceId, quantity: 1 }],
    success_url: "http://localhost:3000/done?session_id={CHECKOUT_SESSION_ID}",
    cancel_url: "http://localhost:3000/cancelled",
  });
  const paid = await fetch(session.url ?? "", { method: "POST", body: new URLSearchParams({ card_number: card }), redirect: "manual" });
  return { customer, session, paid };
}

describe("wire format", () => {
  it("answers lists as {object: 'list', data, has_more, url}", async () => {
    await monthlyPrice("a");
    await monthlyPrice("b");
    const response = await fetch(`${fake.url}/v1/prices?limit=1`, { headers: { Authorization: "Bearer sk_test_x" } });
    const body = await response.json();
    expect(Object.keys(body).sort()).toEqual(["data", "has_more", "object", "url"]);
    expect(body).toMatchObject({ object: "list", has_more: true, url: "/v1/prices" });
    expect(body.data).toHaveLength(1);
  });

  it("reports errors as {error: {type, code, message, param}} with a 4xx status, which the SDK raises as typed errors", async () => {
    const raw = await fetch(`${fake.url}/v1/subscriptions/sub_missing`, { headers: { Authorization: "Bearer sk_test_x" } });
    expect(raw.status).toBe(404);
    expect(await raw.json()).toEqual({
      error: { type: "invalid_request_error", code: "resource_missing", message: "No such subscription: 'sub_missing'", param: "id" },
    });
    await expect(stripe.customers.retrieve("cus_missing")).rejects.toBeInstanceOf(Stripe.errors.StripeInvalidRequestError);
    const unauthenticated = await fetch(`${fake.url}/v1/customers`, { method: "POST" });
    expect(unauthenticated.status).toBe(401);
  });

  it("names a missing required parameter", async () => {
    const product = await stripe.products.create({ name: "P" });
    const error = await stripe.prices.create({ product: product.id, unit_amount: 100 } as Stripe.PriceCreateParams).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(Stripe.errors.StripeInvalidRequestError);
    expect((error as Stripe.errors.StripeError).param).toBe("currency");
  });

  it("reads bracket-keyed arrays longer than qs's default limit of 20 as arrays", async () => {
    await monthlyPrice("key_24");
    const lookupKeys = Array.from({ length: 25 }, (_, n) => `key_${n}`);
    const found = await stripe.prices.list({ lookup_keys: lookupKeys });
    expect(found.data.map((price) => price.lookup_key)).toEqual(["key_24"]);
  });

  it("replays the first response for a repeated Idempotency-Key", async () => {
    const first = await stripe.customers.create({ email: "once@example.test" }, { idempotencyKey: "same-key" });
    const second = await stripe.customers.create({ email: "once@example.test" }, { idempotencyKey: "same-key" });
    expect(second.id).toBe(first.id);
    expect(fake.state.customers.size).toBe(1);
  });

  it("refuses a second price with the same lookup key unless asked to transfer it", async () => {
    const first = await monthlyPrice("unique_key");
    await expect(monthlyPrice("unique_key")).rejects.toThrow(/already uses that lookup key/);
    const product = await stripe.products.create({ name: "Another" });
    const moved = await stripe.prices.create({
      product: product.id,
      currency: "gbp",
      unit_amount: 2_000,
      recurring: { interval: "month" },
      lookup_key: "unique_key",
      transfer_lookup_key: true,
    });
    expect(moved.lookup_key).toBe("unique_key");
    expect((await stripe.prices.retrieve(first.id)).lookup_key).toBeNull();
  });
});

describe("checkout and the subscription life cycle", () => {
  it("creates an active subscription and a paid invoice for the accepted test card, then redirects to success_url", async () => {
    const price = await monthlyPrice();
    const { customer, session, paid } = await subscribe(price.id);
    expect(paid.status).toBe(303);
    expect(paid.headers.get("location")).toBe(`http://localhost:3000/done?session_id=${session.id}`);
    const [subscription] = (await stripe.subscriptions.list({ customer: customer.id })).data;
    expect(subscription.status).toBe("active");
    const item = subscription.items.data[0];
    expect(item.current_period_end).toBe(addInterval(item.current_period_start, "month", 1));
    const [invoice] = (await stripe.invoices.list({ customer: customer.id })).data;
    expect(invoice).toMatchObject({ status: "paid", amount_paid: 1_000, billing_reason: "subscription_create" });
    expect(invoice.parent?.subscription_details?.subscription).toBe(subscription.id);
    expect((await stripe.checkout.sessions.retrieve(session.id)).status).toBe("complete");
  });

  it("declines the declined test card without creating anything, and rejects unknown numbers with a hint", async () => {
    const price = await monthlyPrice();
    const { session, paid } = await subscribe(price.id, "4000000000000002");
    expect(paid.status).toBe(402);
    expect(await paid.text()).toContain("Your card was declined");
    expect(fake.state.subscriptions.size).toBe(0);
    expect(fake.state.invoices.size).toBe(0);
    expect((await stripe.checkout.sessions.retrieve(session.id)).status).toBe("open");

    const unknown = await fetch(session.url ?? "", { method: "POST", body: new URLSearchParams({ card_number: "1234" }), redirect: "manual" });
    expect(unknown.status).toBe(400);
    expect(await unknown.text()).toContain("Use the test card 4242 4242 4242 4242");
  });

  it("serves a payment page with labelled fields, and refuses to take a completed session's payment twice", async () => {
    const price = await monthlyPrice();
    const { session } = await subscribe(price.id);
    const page = await (await fetch(session.url ?? "")).text();
    expect(page).toContain("This checkout is complete");
    const again = await fetch(session.url ?? "", { method: "POST", body: new URLSearchParams({ card_number: "4242424242424242" }), redirect: "manual" });
    expect(again.status).toBe(409);
    expect(fake.state.subscriptions.size).toBe(1);

    const fresh = await stripe.checkout.sessions.create({
      mode: "subscription",
      line_items: [{ price: price.id, quantity: 1 }],
      success_url: "http://localhost:3000/done",
      customer_email: "new@example.test",
    });
    const form = await (await fetch(fresh.url ?? "")).text();
    expect(form).toContain('<label for="card-number">Card number</label>');
  });

  it("renews at period end, fails a renewal on request (past_due), and ends a subscription set to cancel", async () => {
    const price = await monthlyPrice();
    const { customer } = await subscribe(price.id);
    const [subscription] = (await stripe.subscriptions.list({ customer: customer.id })).data;
    const firstEnd = subscription.items.data[0].current_period_end;

    await fetch(`${fake.url}/_test/advance-clock`, { method: "POST", body: new URLSearchParams({ days: "32" }) });
    const renewed = await stripe.subscriptions.retrieve(subscription.id);
    expect(renewed.status).toBe("active");
    expect(renewed.items.data[0].current_period_start).toBe(firstEnd);
    const invoices = (await stripe.invoices.list({ subscription: subscription.id })).data;
    expect(invoices.map((invoice) => [invoice.billing_reason, invoice.status])).toEqual([
      ["subscription_cycle", "paid"],
      ["subscription_create", "paid"],
    ]);

    await fetch(`${fake.url}/_test/advance-clock`, { method: "POST", body: new URLSearchParams({ days: "31", failPayment: "true" }) });
    expect((await stripe.subscriptions.retrieve(subscription.id)).status).toBe("past_due");

    await stripe.subscriptions.update(subscription.id, { cancel_at_period_end: true });
    await fetch(`${fake.url}/_test/advance-clock`, { method: "POST", body: new URLSearchParams({ days: "40" }) });
    const ended = await stripe.subscriptions.retrieve(subscription.id);
    expect(ended.status).toBe("canceled");
    expect(ended.ended_at).not.toBeNull();
    expect((await stripe.subscriptions.list({ customer: customer.id })).data).toHaveLength(0);
    expect((await stripe.subscriptions.list({ customer: customer.id, status: "all" })).data).toHaveLength(1);
    await expect(stripe.subscriptions.update(subscription.id, { cancel_at_period_end: false })).rejects.toThrow(/canceled subscription/);
  });

  it("changes a subscription's price, and cancels immediately on DELETE", async () => {
    const cheap = await monthlyPrice("cheap", 1_000);
    const dear = await monthlyPrice("dear", 5_000);
    const { customer } = await subscribe(cheap.id);
    const [subscription] = (await stripe.subscriptions.list({ customer: customer.id })).data;
    const updated = await stripe.subscriptions.update(subscription.id, { items: [{ id: subscription.items.data[0].id, price: dear.id }] });
    expect(updated.items.data[0].price.id).toBe(dear.id);
    const canceled = await stripe.subscriptions.cancel(subscription.id);
    expect(canceled.status).toBe("canceled");
  });
});

describe("webhook delivery", () => {
  it("signs each event as Stripe does: v1 = HMAC-SHA256(secret, t + '.' + payload)", async () => {
    const price = await monthlyPrice();
    await subscribe(price.id);
    await fake.settle();
    expect(received.map((delivery) => JSON.parse(delivery.body).type)).toEqual([
      "customer.subscription.created",
      "invoice.paid",
      "checkout.session.completed",
    ]);
    for (const delivery of received) {
      const parts = Object.fromEntries(delivery.signature.split(",").map((part) => part.split("=") as [string, string]));
      const expected = createHmac("sha256", SECRET).update(`${parts.t}.${delivery.body}`).digest("hex");
      expect(parts.v1).toBe(expected);
      const event = await Stripe.webhooks.constructEventAsync(delivery.body, delivery.signature, SECRET);
      expect(event.api_version).toBe(Stripe.API_VERSION);
    }
  });

  it("retries a delivery the endpoint refused", async () => {
    failNext = 1;
    const price = await monthlyPrice();
    await subscribe(price.id);
    await fake.settle();
    const deliveries = (await (await fetch(`${fake.url}/_test/events`)).json()).deliveries as Array<{ attempts: number; status: number }>;
    expect(deliveries[0]).toMatchObject({ attempts: 2, status: 200 });
    expect(received).toHaveLength(3);
  });
});

describe("state file", () => {
  it("keeps customers, subscriptions and the clock across a restart", async () => {
    const directory = mkdtempSync(path.join(os.tmpdir(), "fake-stripe-state-"));
    const stateFile = path.join(directory, "state.json");
    try {
      const first = await startFakeStripe({ stateFile });
      const client = new Stripe("sk_test_x", { host: "127.0.0.1", port: first.port, protocol: "http", maxNetworkRetries: 0, telemetry: false });
      const customer = await client.customers.create({ name: "Kept" });
      await fetch(`${first.url}/_test/advance-clock`, { method: "POST", body: new URLSearchParams({ days: "3" }) });
      const clockBefore = first.state.now();
      await first.close();

      const second = await startFakeStripe({ stateFile });
      const again = new Stripe("sk_test_x", { host: "127.0.0.1", port: second.port, protocol: "http", maxNetworkRetries: 0, telemetry: false });
      const kept = await again.customers.retrieve(customer.id);
      expect(kept.deleted).toBeUndefined();
      expect(kept).toMatchObject({ id: customer.id, name: "Kept" });
      expect(second.state.now()).toBeGreaterThanOrEqual(clockBefore);
      await second.close();
    } finally {
      rmSync(directory, { recursive: true, force: true });
    }
  });
});

describe("billing-cycle dates", () => {
  it("keeps the anchor day where the month has it and uses the month's last day otherwise", () => {
    const seconds = (iso: string) => Date.parse(iso) / 1000;
    expect(addInterval(seconds("2027-01-31T10:00:00Z"), "month", 1)).toBe(seconds("2027-02-28T10:00:00Z"));
    expect(addInterval(seconds("2028-01-31T10:00:00Z"), "month", 1)).toBe(seconds("2028-02-29T10:00:00Z"));
    expect(addInterval(seconds("2027-03-15T00:00:00Z"), "month", 1)).toBe(seconds("2027-04-15T00:00:00Z"));
    expect(addInterval(seconds("2027-12-31T00:00:00Z"), "year", 1)).toBe(seconds("2028-12-31T00:00:00Z"));
  });

  it("counts periods from the anchor, so a short month does not shift later billing dates", () => {
    const seconds = (iso: string) => Date.parse(iso) / 1000;
    const anchor = seconds("2027-01-31T10:00:00Z");
    expect(nextPeriodEnd(anchor, seconds("2027-02-28T10:00:00Z"), "month", 1)).toBe(seconds("2027-03-31T10:00:00Z"));
    expect(nextPeriodEnd(anchor, seconds("2027-03-31T10:00:00Z"), "month", 1)).toBe(seconds("2027-04-30T10:00:00Z"));
  });
});
