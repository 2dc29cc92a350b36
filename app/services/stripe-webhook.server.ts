/**
 * Receiving Stripe's webhooks: verify the signature on the raw body, skip events already handled,
 * and mirror the subscription each event concerns.
 *
 * Why events are not applied from their payloads: Stripe does not promise delivery order, and a
 * retried old event can arrive after a newer one. Each event is taken only as a hint of *which*
 * subscription changed; its current state is read back from Stripe, and the mirror keeps the most
 * recent read (app/models/subscriptions.server.ts). A duplicate or late event therefore changes
 * nothing it should not.
 */
import Stripe from "stripe";
import { config } from "~/config.server";
import { recordAudit } from "~/models/audit.server";
import { findOrganisationIdByCustomer, hasHandledEvent, recordHandledEvent, syncSubscription } from "~/models/subscriptions.server";
import { stripeClient } from "./billing.server";

export const HANDLED_EVENT_TYPES = [
  "checkout.session.completed",
  "customer.subscription.created",
  "customer.subscription.updated",
  "customer.subscription.deleted",
  "invoice.paid",
  "invoice.payment_failed",
] as const;

export interface WebhookOutcome {
  status: number;
  body: { received: boolean; outcome?: string; error?: string };
}

type Reference = string | { id: string } | null | undefined;

function idOf(reference: Reference): string | undefined {
  if (!reference) return undefined;
  return typeof reference === "string" ? reference : reference.id;
}

/** The customer and subscription an event is about, for the event types we handle. */
function referencesOf(event: Stripe.Event): { customerId?: string; subscriptionId?: string } | undefined {
  switch (event.type) {
    case "checkout.session.completed":
      return { customerId: idOf(event.data.object.customer), subscriptionId: idOf(event.data.object.subscription) };
    case "customer.subscription.created":
    case "customer.subscription.updated":
    case "customer.subscription.deleted":
      return { customerId: idOf(event.data.object.customer), subscriptionId: event.data.object.id };
    case "invoice.paid":
    case "invoice.payment_failed":
      return {
        customerId: idOf(event.data.object.customer),
        subscriptionId: idOf(event.data.object.parent?.subscription_details?.subscription),
      };
    default:
      return undefined;
  }
}

const AUDITED: Partial<Record<string, string>> = {
  "checkout.session.completed": "billing.subscribed",
  "customer.subscription.deleted": "billing.subscription_ended",
  "invoice.payment_failed": "billing.payment_failed",
};

export async function receiveStripeWebhook(rawBody: string, signature: string | null): Promise<WebhookOutcome> {
  const secret = config().STRIPE_WEBHOOK_SECRET;
  if (!secret) {
    return { status: 500, body: { received: false, error: "STRIPE_WEBHOOK_SECRET is not set, so events cannot be verified." } };
  }
  let event: Stripe.Event;
  try {
    event = await Stripe.webhooks.constructEventAsync(rawBody, signature ?? "", secret);
  } catch (error) {
    const message = error instanceof Error ? error.message : String(error);
    return { status: 400, body: { received: false, error: `Webhook signature verification failed: ${message}` } };
  }

  if (await hasHandledEvent(event.id)) return { status: 200, body: { received: true, outcome: "duplicate" } };

  const references = referencesOf(event);
  if (!references) {
    await recordHandledEvent(event, "ignored");
    return { status: 200, body: { received: true, outcome: "ignored" } };
  }

  const organisationId = references.customerId ? await findOrganisationIdByCustomer(references.customerId) : undefined;
  if (organisationId === undefined) {
    // Acknowledged so that Stripe stops retrying: nothing of ours refers to this customer.
    console.warn(`stripe webhook: ${event.type} ${event.id} for unknown customer ${references.customerId ?? "(none)"}; acknowledged, nothing changed`);
    await recordHandledEvent(event, "unknown_customer");
    return { status: 200, body: { received: true, outcome: "unknown_customer" } };
  }
  if (!references.subscriptionId) {
    await recordHandledEvent(event, "no_subscription", organisationId);
    return { status: 200, body: { received: true, outcome: "no_subscription" } };
  }

  const readAt = new Date();
  let subscription: Stripe.Subscription;
  try {
    subscription = await stripeClient().subscriptions.retrieve(references.subscriptionId);
  } catch (error) {
    if (error instanceof Stripe.errors.StripeInvalidRequestError && error.statusCode === 404) {
      await recordHandledEvent(event, "subscription_missing", organisationId);
      return { status: 200, body: { received: true, outcome: "subscription_missing" } };
    }
    // Not recorded: Stripe retries a failed delivery, and the retry will read the state again.
    const message = error instanceof Error ? error.message : String(error);
    return { status: 503, body: { received: false, error: `Could not read the subscription from Stripe: ${message}` } };
  }

  const sync = await syncSubscription(subscription, readAt);
  const fresh = await recordHandledEvent(event, sync.outcome, sync.organisationId ?? organisationId);
  const auditAction = AUDITED[event.type];
  if (fresh && auditAction && sync.organisationId !== undefined) {
    await recordAudit(sync.organisationId, null, auditAction, subscription.id, { event: event.id, status: subscription.status });
  }
  return { status: 200, body: { received: true, outcome: sync.outcome } };
}
