/**
 * The fake Stripe's in-memory state and the billing rules it simulates: checkout creating a
 * subscription and its first paid invoice, renewals when the clock passes a period end, failed
 * payments turning a subscription past_due, and cancellation at period end.
 *
 * Every change that Stripe would announce is recorded as an event; the server delivers them.
 */
import { randomBytes } from "node:crypto";
import type Stripe from "stripe";
import type {
  FakeCheckoutSession,
  FakeCustomer,
  FakeEvent,
  FakeEventType,
  FakeInvoice,
  FakeList,
  FakeObject,
  FakePrice,
  FakeProduct,
  FakeSubscription,
} from "./objects";

/** The API version our events claim; the SDK's own, so that the app parses them as it would real ones. */
export const FAKE_API_VERSION = "2026-10-28.endive";

export class FakeStripeError extends Error {
  constructor(
    readonly status: number,
    readonly type: "invalid_request_error" | "card_error" | "api_error" | "idempotency_error",
    message: string,
    readonly code?: string,
    readonly param?: string,
  ) {
    super(message);
  }
}

export function missing(kind: string, id: string, param = "id"): FakeStripeError {
  return new FakeStripeError(404, "invalid_request_error", `No such ${kind}: '${id}'`, "resource_missing", param);
}

const ALPHABET = "0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz";
export function newId(prefix: string): string {
  const bytes = randomBytes(24);
  let id = "";
  for (const byte of bytes) id += ALPHABET[byte % ALPHABET.length];
  return `${prefix}_${id}`;
}

/** Adds calendar months in UTC, keeping the day of month where it exists (31 Jan + 1 month = 28/29 Feb). */
export function addInterval(seconds: number, interval: Stripe.Price.Recurring.Interval, count: number): number {
  const date = new Date(seconds * 1000);
  if (interval === "day") return seconds + 86_400 * count;
  if (interval === "week") return seconds + 7 * 86_400 * count;
  const months = interval === "year" ? 12 * count : count;
  const day = date.getUTCDate();
  date.setUTCDate(1);
  date.setUTCMonth(date.getUTCMonth() + months);
  const lastDay = new Date(Date.UTC(date.getUTCFullYear(), date.getUTCMonth() + 1, 0)).getUTCDate();
  date.setUTCDate(Math.min(day, lastDay));
  return Math.floor(date.getTime() / 1000);
}

/** The end of the period starting at `periodStart`, counted in whole intervals from the billing anchor. */
export function nextPeriodEnd(anchor: number, periodStart: number, interval: Stripe.Price.Recurring.Interval, count: number): number {
  let periods = 1;
  while (addInterval(anchor, interval, count * periods) <= periodStart) periods += 1;
  return addInterval(anchor, interval, count * periods);
}

export function listOf<T>(data: T[], url: string): FakeList<T> {
  return { object: "list", data, has_more: false, url };
}

export interface FakeStripeSnapshot {
  products: FakeProduct[];
  prices: FakePrice[];
  customers: FakeCustomer[];
  sessions: FakeCheckoutSession[];
  subscriptions: FakeSubscription[];
  invoices: FakeInvoice[];
  events: FakeEvent[];
  clockOffset: number;
  invoiceCounter: number;
}

export class FakeStripeState {
  products = new Map<string, FakeProduct>();
  prices = new Map<string, FakePrice>();
  customers = new Map<string, FakeCustomer>();
  sessions = new Map<string, FakeCheckoutSession>();
  subscriptions = new Map<string, FakeSubscription>();
  invoices = new Map<string, FakeInvoice>();
  events: FakeEvent[] = [];
  /** Responses by Idempotency-Key, replayed when a request is retried. */
  idempotent = new Map<string, { status: number; body: string }>();
  /** Seconds added to the wall clock by the test control. */
  clockOffset = 0;
  invoiceCounter = 0;
  /** Called for every new event, in order. */
  onEvent: (event: FakeEvent) => void = () => {};

  constructor(readonly baseUrl: string) {}

  now(): number {
    return Math.floor(Date.now() / 1000) + this.clockOffset;
  }

  reset(): void {
    for (const map of [this.products, this.prices, this.customers, this.sessions, this.subscriptions, this.invoices, this.idempotent]) {
      map.clear();
    }
    this.events = [];
    this.clockOffset = 0;
    this.invoiceCounter = 0;
  }

  /** Everything worth keeping across restarts of the fake (idempotency keys expire anyway). */
  snapshot(): FakeStripeSnapshot {
    return {
      products: [...this.products.values()],
      prices: [...this.prices.values()],
      customers: [...this.customers.values()],
      sessions: [...this.sessions.values()],
      subscriptions: [...this.subscriptions.values()],
      invoices: [...this.invoices.values()],
      events: this.events,
      clockOffset: this.clockOffset,
      invoiceCounter: this.invoiceCounter,
    };
  }

  restore(snapshot: FakeStripeSnapshot): void {
    this.reset();
    for (const product of snapshot.products) this.products.set(product.id, product);
    for (const price of snapshot.prices) this.prices.set(price.id, price);
    for (const customer of snapshot.customers) this.customers.set(customer.id, customer);
    for (const session of snapshot.sessions) this.sessions.set(session.id, session);
    for (const subscription of snapshot.subscriptions) this.subscriptions.set(subscription.id, subscription);
    for (const invoice of snapshot.invoices) this.invoices.set(invoice.id, invoice);
    this.events = snapshot.events;
    this.clockOffset = snapshot.clockOffset;
    this.invoiceCounter = snapshot.invoiceCounter;
  }

  emit(type: FakeEventType, object: FakeObject, previous?: Record<string, unknown>): void {
    const event: FakeEvent = {
      id: newId("evt"),
      object: "event",
      api_version: FAKE_API_VERSION,
      created: this.now(),
      livemode: false,
      pending_webhooks: 1,
      request: { id: null, idempotency_key: null },
      type,
      // A snapshot, as Stripe sends: later changes to the object must not alter a queued event.
      data: previous ? { object: structuredClone(object), previous_attributes: previous } : { object: structuredClone(object) },
    };
    this.events.push(event);
    this.onEvent(event);
  }

  price(id: string, param = "price"): FakePrice {
    const price = this.prices.get(id);
    if (!price) throw missing("price", id, param);
    return price;
  }

  subscription(id: string): FakeSubscription {
    const subscription = this.subscriptions.get(id);
    if (!subscription) throw missing("subscription", id);
    return subscription;
  }

  /** The card was accepted on the hosted page: the session's subscription starts and its first invoice is paid. */
  completeCheckout(session: FakeCheckoutSession): FakeSubscription {
    const now = this.now();
    const customerId = session.customer as string;
    const line = session.line_items.data[0];
    const price = this.price(line.price);
    const subscriptionId = newId("sub");
    const periodEnd = addInterval(now, price.recurring?.interval ?? "month", price.recurring?.interval_count ?? 1);
    const subscription: FakeSubscription = {
      id: subscriptionId,
      object: "subscription",
      billing_cycle_anchor: now,
      cancel_at: null,
      cancel_at_period_end: false,
      canceled_at: null,
      collection_method: "charge_automatically",
      created: now,
      currency: price.currency,
      customer: customerId,
      ended_at: null,
      latest_invoice: null,
      livemode: false,
      metadata: { ...session.subscription_metadata },
      start_date: now,
      status: "active",
      items: listOf(
        [
          {
            id: newId("si"),
            object: "subscription_item",
            created: now,
            current_period_start: now,
            current_period_end: periodEnd,
            metadata: {},
            quantity: line.quantity,
            subscription: subscriptionId,
            price,
          },
        ],
        `/v1/subscription_items?subscription=${subscriptionId}`,
      ),
    };
    this.subscriptions.set(subscription.id, subscription);
    const invoice = this.createInvoice(subscription, "subscription_create", true);
    subscription.latest_invoice = invoice.id;
    session.status = "complete";
    session.payment_status = "paid";
    session.subscription = subscription.id;
    session.invoice = invoice.id;

    this.emit("customer.subscription.created", subscription);
    this.emit("invoice.paid", invoice);
    this.emit("checkout.session.completed", session);
    return subscription;
  }

  createInvoice(subscription: FakeSubscription, reason: Stripe.Invoice.BillingReason, paid: boolean): FakeInvoice {
    const now = this.now();
    const item = subscription.items.data[0];
    const amount = (item.price.unit_amount ?? 0) * (item.quantity ?? 1);
    const customer = this.customers.get(subscription.customer as string);
    const id = newId("in");
    this.invoiceCounter += 1;
    const product = this.products.get(item.price.product as string);
    const invoice: FakeInvoice = {
      id,
      object: "invoice",
      amount_due: amount,
      amount_paid: paid ? amount : 0,
      amount_remaining: paid ? 0 : amount,
      attempt_count: 1,
      attempted: true,
      billing_reason: reason,
      collection_method: "charge_automatically",
      created: now,
      currency: item.price.currency,
      customer: subscription.customer as string,
      customer_email: customer?.email ?? null,
      customer_name: customer?.name ?? null,
      hosted_invoice_url: `${this.baseUrl}/invoice/${id}`,
      invoice_pdf: null,
      livemode: false,
      metadata: {},
      next_payment_attempt: paid ? null : now + 3 * 86_400,
      number: `FAKE-${String(this.invoiceCounter).padStart(4, "0")}`,
      parent: {
        type: "subscription_details",
        quote_details: null,
        subscription_details: { metadata: subscription.metadata, subscription: subscription.id },
      },
      period_start: item.current_period_start,
      period_end: item.current_period_end,
      status: paid ? "paid" : "open",
      status_transitions: { finalized_at: now, marked_uncollectible_at: null, paid_at: paid ? now : null, voided_at: null },
      subtotal: amount,
      total: amount,
      lines: listOf(
        [
          {
            id: newId("il"),
            object: "line_item",
            amount,
            currency: item.price.currency,
            description: `${item.quantity ?? 1} × ${product?.name ?? item.price.id}`,
            invoice: id,
            livemode: false,
            metadata: {},
            period: { start: item.current_period_start, end: item.current_period_end },
            quantity: item.quantity ?? 1,
            subtotal: amount,
          },
        ],
        `/v1/invoices/${id}/lines`,
      ),
    };
    this.invoices.set(id, invoice);
    return invoice;
  }

  /**
   * Moves the clock forward and does what Stripe's billing would have done meanwhile: ends
   * subscriptions set to cancel, renews the others (charging the card, or failing when asked),
   * and retries open invoices of past_due subscriptions.
   */
  advanceClock(seconds: number, failPayment: boolean): void {
    this.clockOffset += Math.max(0, Math.floor(seconds));
    const now = this.now();
    for (const subscription of this.subscriptions.values()) {
      if (subscription.status === "canceled") continue;
      if (subscription.status === "past_due") this.retryOpenInvoices(subscription, failPayment);
      // A long jump may cross several periods; each one is billed in turn.
      while (subscription.status !== "canceled" && subscription.items.data[0].current_period_end <= now) {
        const item = subscription.items.data[0];
        if (subscription.cancel_at_period_end) {
          subscription.status = "canceled";
          subscription.canceled_at ??= item.current_period_end;
          subscription.ended_at = item.current_period_end;
          this.emit("customer.subscription.deleted", subscription);
          break;
        }
        const previousStatus = subscription.status;
        const previousPeriod = { start: item.current_period_start, end: item.current_period_end };
        item.current_period_start = item.current_period_end;
        item.current_period_end = nextPeriodEnd(
          subscription.billing_cycle_anchor,
          item.current_period_start,
          item.price.recurring?.interval ?? "month",
          item.price.recurring?.interval_count ?? 1,
        );
        const invoice = this.createInvoice(subscription, "subscription_cycle", !failPayment);
        subscription.latest_invoice = invoice.id;
        subscription.status = failPayment ? "past_due" : "active";
        this.emit(failPayment ? "invoice.payment_failed" : "invoice.paid", invoice);
        this.emit("customer.subscription.updated", subscription, {
          status: previousStatus,
          items: { data: [{ current_period_start: previousPeriod.start, current_period_end: previousPeriod.end }] },
        });
        if (failPayment) break;
      }
    }
  }

  private retryOpenInvoices(subscription: FakeSubscription, failPayment: boolean): void {
    const open = [...this.invoices.values()].filter(
      (invoice) => invoice.status === "open" && invoice.parent?.subscription_details?.subscription === subscription.id,
    );
    for (const invoice of open) {
      invoice.attempt_count += 1;
      if (failPayment) {
        this.emit("invoice.payment_failed", invoice);
        continue;
      }
      invoice.status = "paid";
      invoice.amount_paid = invoice.amount_due;
      invoice.amount_remaining = 0;
      invoice.next_payment_attempt = null;
      invoice.status_transitions.paid_at = this.now();
      this.emit("invoice.paid", invoice);
    }
    if (!failPayment && open.length > 0) {
      subscription.status = "active";
      this.emit("customer.subscription.updated", subscription, { status: "past_due" });
    }
  }
}
