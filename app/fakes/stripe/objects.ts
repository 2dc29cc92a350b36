/**
 * The shapes of the objects the fake Stripe server keeps and returns.
 *
 * Each is the subset of fields we implement, picked from the Stripe SDK's own types: if an SDK
 * upgrade renames, removes or retypes one of these fields, `tsc` fails here rather than the app
 * drifting away from the real wire format unnoticed. Fields the app never reads are left out on
 * purpose; the SDK tolerates missing fields at run time.
 */
import type Stripe from "stripe";

export interface FakeList<T> {
  object: "list";
  data: T[];
  has_more: boolean;
  url: string;
}

export type FakeProduct = Pick<
  Stripe.Product,
  "id" | "object" | "active" | "created" | "description" | "livemode" | "metadata" | "name" | "updated"
>;

export type FakePrice = Pick<
  Stripe.Price,
  | "id"
  | "object"
  | "active"
  | "created"
  | "currency"
  | "livemode"
  | "lookup_key"
  | "metadata"
  | "nickname"
  | "product"
  | "recurring"
  | "type"
  | "unit_amount"
>;

export type FakeCustomer = Pick<
  Stripe.Customer,
  "id" | "object" | "created" | "email" | "livemode" | "metadata" | "name"
>;

export type FakeSubscriptionItem = Pick<
  Stripe.SubscriptionItem,
  "id" | "object" | "created" | "current_period_end" | "current_period_start" | "metadata" | "quantity" | "subscription"
> & { price: FakePrice };

export type FakeSubscription = Pick<
  Stripe.Subscription,
  | "id"
  | "object"
  | "billing_cycle_anchor"
  | "cancel_at"
  | "cancel_at_period_end"
  | "canceled_at"
  | "collection_method"
  | "created"
  | "currency"
  | "customer"
  | "ended_at"
  | "latest_invoice"
  | "livemode"
  | "metadata"
  | "start_date"
  | "status"
> & { items: FakeList<FakeSubscriptionItem> };

export type FakeInvoiceLine = Pick<
  Stripe.InvoiceLineItem,
  "id" | "object" | "amount" | "currency" | "description" | "invoice" | "livemode" | "metadata" | "period" | "quantity" | "subtotal"
>;

export type FakeInvoice = Pick<
  Stripe.Invoice,
  | "id"
  | "object"
  | "amount_due"
  | "amount_paid"
  | "amount_remaining"
  | "attempt_count"
  | "attempted"
  | "billing_reason"
  | "collection_method"
  | "created"
  | "currency"
  | "customer"
  | "customer_email"
  | "customer_name"
  | "hosted_invoice_url"
  | "invoice_pdf"
  | "livemode"
  | "metadata"
  | "next_payment_attempt"
  | "number"
  | "parent"
  | "period_end"
  | "period_start"
  | "status"
  | "status_transitions"
  | "subtotal"
  | "total"
> & { lines: FakeList<FakeInvoiceLine> };

export type FakeCheckoutSession = Pick<
  Stripe.Checkout.Session,
  | "id"
  | "object"
  | "amount_subtotal"
  | "amount_total"
  | "cancel_url"
  | "client_reference_id"
  | "created"
  | "currency"
  | "customer"
  | "customer_email"
  | "expires_at"
  | "invoice"
  | "livemode"
  | "metadata"
  | "mode"
  | "payment_status"
  | "status"
  | "subscription"
  | "success_url"
  | "url"
> & {
  /** Kept beside the session (Stripe keeps them too, behind `line_items`). */
  line_items: FakeList<{ price: string; quantity: number }>;
  /** Copied onto the subscription the session creates (`subscription_data[metadata]`). */
  subscription_metadata: Stripe.Metadata;
};

export type FakeObject = FakeProduct | FakePrice | FakeCustomer | FakeSubscription | FakeInvoice | FakeCheckoutSession;

export type FakeEventType =
  | "checkout.session.completed"
  | "customer.subscription.created"
  | "customer.subscription.updated"
  | "customer.subscription.deleted"
  | "invoice.paid"
  | "invoice.payment_failed";

export type FakeEvent = Pick<
  Stripe.EventBase,
  "id" | "object" | "api_version" | "created" | "livemode" | "pending_webhooks" | "request"
> & {
  type: FakeEventType;
  data: { object: FakeObject; previous_attributes?: Record<string, unknown> };
};

/** Error bodies as Stripe sends them, with a 4xx status. */
export interface FakeErrorBody {
  error: { type: "invalid_request_error" | "card_error" | "api_error" | "idempotency_error"; code?: string; message: string; param?: string };
}
