/**
 * Puts an organisation on a plan for a test by writing the subscription mirror row directly, as
 * the webhook handler would after reading Stripe (app/models/subscriptions.server.ts). Stripe
 * itself is exercised in tests/billing; tests elsewhere only need the resulting limits.
 */
import { eq } from "drizzle-orm";
import { getDb } from "../../app/db/client.server";
import { subscriptions } from "../../app/db/schema";
import { PLANS, type PaidPlanKey } from "../../app/services/plans";

export async function setSubscription(
  organisationId: number,
  planKey: PaidPlanKey,
  options: { status?: string; pastDueSince?: Date | null } = {},
): Promise<void> {
  const db = await getDb();
  const now = new Date();
  const values = {
    stripeCustomerId: `cus_test_${organisationId}`,
    stripeSubscriptionId: `sub_test_${organisationId}`,
    planKey,
    stripePriceId: `price_${PLANS[planKey].lookupKey}`,
    status: options.status ?? "active",
    currentPeriodStart: now,
    currentPeriodEnd: new Date(now.getTime() + 30 * 86_400_000),
    cancelAtPeriodEnd: false,
    pastDueSince: options.pastDueSince ?? null,
    syncedAt: now,
  };
  await db.insert(subscriptions).values({ organisationId, ...values }).onConflictDoUpdate({ target: subscriptions.organisationId, set: values });
}

/** Removes the subscription row: the organisation is back on its trial (or its trial has ended). */
export async function clearSubscription(organisationId: number): Promise<void> {
  const db = await getDb();
  await db.delete(subscriptions).where(eq(subscriptions.organisationId, organisationId));
}
