/**
 * The database's copy of each organisation's Stripe subscription, and the log of handled Stripe
 * events. Stripe is the source of truth: rows here are only ever overwritten by a *newer read* of
 * Stripe's state, so events that arrive twice or out of order cannot move the copy backwards.
 */
import { and, eq, gt, isNull, lte, or } from "drizzle-orm";
import type Stripe from "stripe";
import { getDb, type Database } from "~/db/client.server";
import { invitations, memberships, organisations, scenarios, stripeEvents, subscriptions } from "~/db/schema";
import { planForLookupKey } from "~/services/plans";

export type SubscriptionRow = typeof subscriptions.$inferSelect;

export async function getSubscriptionRow(organisationId: number, executor?: Database): Promise<SubscriptionRow | undefined> {
  const db = executor ?? (await getDb());
  const [row] = await db.select().from(subscriptions).where(eq(subscriptions.organisationId, organisationId)).limit(1);
  return row;
}

export async function findOrganisationIdByCustomer(customerId: string): Promise<number | undefined> {
  const db = await getDb();
  const [row] = await db
    .select({ organisationId: subscriptions.organisationId })
    .from(subscriptions)
    .where(eq(subscriptions.stripeCustomerId, customerId))
    .limit(1);
  return row?.organisationId;
}

/** Links an organisation to its Stripe customer (before checkout); no subscription yet. */
export async function linkCustomer(organisationId: number, customerId: string): Promise<void> {
  const db = await getDb();
  await db
    .insert(subscriptions)
    .values({ organisationId, stripeCustomerId: customerId })
    .onConflictDoUpdate({ target: subscriptions.organisationId, set: { stripeCustomerId: customerId } });
}

export async function getOrganisationCreatedAt(organisationId: number): Promise<Date | undefined> {
  const db = await getDb();
  const [row] = await db.select({ createdAt: organisations.createdAt }).from(organisations).where(eq(organisations.id, organisationId)).limit(1);
  return row?.createdAt;
}

const LIVE = new Set(["active", "trialing", "past_due", "incomplete", "unpaid", "paused"]);

export type SyncOutcome = "applied" | "stale" | "unknown_customer" | "superseded";

function customerIdOf(subscription: Stripe.Subscription): string {
  return typeof subscription.customer === "string" ? subscription.customer : subscription.customer.id;
}

/**
 * Mirrors a subscription as read from Stripe at `readAt`.
 * - unknown customer → nothing written;
 * - a read older than the copy we hold → nothing written ("stale");
 * - a finished subscription that is not the organisation's current one (it subscribed again
 *   since) → nothing written ("superseded").
 */
export async function syncSubscription(subscription: Stripe.Subscription, readAt: Date): Promise<{ outcome: SyncOutcome; organisationId?: number }> {
  const db = await getDb();
  const customerId = customerIdOf(subscription);
  return db.transaction(async (tx) => {
    const [row] = await tx.select().from(subscriptions).where(eq(subscriptions.stripeCustomerId, customerId)).for("update").limit(1);
    if (!row) return { outcome: "unknown_customer" };
    const organisationId = row.organisationId;
    if (row.syncedAt && row.syncedAt > readAt) return { outcome: "stale", organisationId };
    if (row.stripeSubscriptionId && row.stripeSubscriptionId !== subscription.id && !LIVE.has(subscription.status)) {
      return { outcome: "superseded", organisationId };
    }
    const item = subscription.items.data[0];
    const plan = planForLookupKey(item?.price.lookup_key);
    const sameSpell = row.stripeSubscriptionId === subscription.id && row.status === "past_due";
    const pastDueSince = subscription.status === "past_due" ? (sameSpell && row.pastDueSince ? row.pastDueSince : readAt) : null;
    const seconds = (value: number | null | undefined) => (value ? new Date(value * 1000) : null);
    const updated = await tx
      .update(subscriptions)
      .set({
        stripeSubscriptionId: subscription.id,
        planKey: plan?.key ?? null,
        stripePriceId: item?.price.id ?? null,
        status: subscription.status,
        currentPeriodStart: seconds(item?.current_period_start),
        currentPeriodEnd: seconds(item?.current_period_end),
        cancelAtPeriodEnd: subscription.cancel_at_period_end,
        endedAt: seconds(subscription.ended_at),
        pastDueSince,
        syncedAt: readAt,
      })
      .where(
        and(
          eq(subscriptions.organisationId, organisationId),
          or(isNull(subscriptions.syncedAt), lte(subscriptions.syncedAt, readAt)),
        ),
      )
      .returning({ organisationId: subscriptions.organisationId });
    return { outcome: updated.length > 0 ? "applied" : "stale", organisationId };
  });
}

export async function hasHandledEvent(eventId: string): Promise<boolean> {
  const db = await getDb();
  const [row] = await db.select({ id: stripeEvents.id }).from(stripeEvents).where(eq(stripeEvents.id, eventId)).limit(1);
  return Boolean(row);
}

/** Records an event as handled; false when it was already recorded (a concurrent duplicate). */
export async function recordHandledEvent(event: { id: string; type: string }, outcome: string, organisationId?: number): Promise<boolean> {
  const db = await getDb();
  const inserted = await db
    .insert(stripeEvents)
    .values({ id: event.id, type: event.type, outcome, organisationId: organisationId ?? null })
    .onConflictDoNothing()
    .returning({ id: stripeEvents.id });
  return inserted.length > 0;
}

export async function listHandledEvents(organisationId?: number): Promise<Array<typeof stripeEvents.$inferSelect>> {
  const db = await getDb();
  const query = db.select().from(stripeEvents);
  return organisationId === undefined
    ? query.orderBy(stripeEvents.receivedAt)
    : query.where(eq(stripeEvents.organisationId, organisationId)).orderBy(stripeEvents.receivedAt);
}

/** Counts for seat and scenario limits: members plus live invitations, and scenarios not archived. */
export async function countUsage(organisationId: number, now: Date = new Date()): Promise<{ seats: number; scenarios: number }> {
  const db = await getDb();
  const [members, pending, liveScenarios] = await Promise.all([
    db.$count(memberships, eq(memberships.organisationId, organisationId)),
    db.$count(
      invitations,
      and(
        eq(invitations.organisationId, organisationId),
        isNull(invitations.acceptedAt),
        isNull(invitations.revokedAt),
        gt(invitations.expiresAt, now),
      ),
    ),
    db.$count(scenarios, and(eq(scenarios.organisationId, organisationId), isNull(scenarios.archivedAt))),
  ]);
  return { seats: members + pending, scenarios: liveScenarios };
}
