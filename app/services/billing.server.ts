/**
 * Billing through the Stripe SDK — against Stripe itself when STRIPE_SECRET_KEY is set, or the
 * local fake (app/fakes/stripe) at STRIPE_API_BASE otherwise. Everything the billing page does
 * goes through here; what it learns is mirrored by app/models/subscriptions.server.ts.
 *
 * Failure policy: a Stripe that cannot be reached or refuses a request becomes a BillingError
 * with a message for the administrator, thrown *before* anything is written locally, so that no
 * half-made subscription is left behind.
 */
import Stripe from "stripe";
import { config } from "~/config.server";
import { recordAudit } from "~/models/audit.server";
import { getSubscriptionRow, linkCustomer, syncSubscription, type SubscriptionRow } from "~/models/subscriptions.server";
import { PAID_PLANS, PLANS, type PaidPlanKey } from "./plans";

/** The key the SDK sends to the local fake, which accepts any bearer token. */
const FAKE_SECRET_KEY = "sk_test_equilibra_local_fake";

export class BillingError extends Error {
  constructor(
    /** unavailable: Stripe could not be reached; rejected: Stripe refused; state: not possible now. */
    readonly kind: "unavailable" | "rejected" | "state" | "not_configured",
    message: string,
  ) {
    super(message);
    this.name = "BillingError";
  }
}

let cachedClient: { signature: string; stripe: Stripe } | undefined;

/** The SDK client for the configured Stripe (real, or the local fake over plain HTTP). */
export function stripeClient(): Stripe {
  const { STRIPE_SECRET_KEY, STRIPE_API_BASE } = config();
  if (!STRIPE_SECRET_KEY && !STRIPE_API_BASE) {
    throw new BillingError(
      "not_configured",
      "Billing is not configured: set STRIPE_SECRET_KEY, or STRIPE_API_BASE for the local fake Stripe server.",
    );
  }
  const signature = `${STRIPE_SECRET_KEY ?? ""} ${STRIPE_API_BASE ?? ""}`;
  if (cachedClient?.signature === signature) return cachedClient.stripe;
  const options: Stripe.StripeConfig = { maxNetworkRetries: 0, telemetry: false, timeout: 15_000 };
  if (STRIPE_API_BASE) {
    const base = new URL(STRIPE_API_BASE);
    options.host = base.hostname;
    options.port = base.port ? Number(base.port) : base.protocol === "https:" ? 443 : 80;
    options.protocol = base.protocol === "https:" ? "https" : "http";
  }
  const stripe = new Stripe(STRIPE_SECRET_KEY ?? FAKE_SECRET_KEY, options);
  cachedClient = { signature, stripe };
  return stripe;
}

/** Runs a Stripe call, turning the SDK's errors into messages an administrator can act on. */
async function viaStripe<T>(what: string, call: () => Promise<T>): Promise<T> {
  try {
    return await call();
  } catch (error) {
    if (error instanceof Stripe.errors.StripeConnectionError) {
      throw new BillingError(
        "unavailable",
        `The payment service could not be reached while trying to ${what}, so nothing was changed. Please try again in a few minutes.`,
      );
    }
    if (error instanceof Stripe.errors.StripeError) {
      throw new BillingError("rejected", `The payment service refused to ${what}: ${error.message}`);
    }
    throw error;
  }
}

// ---------------------------------------------------------------------------------------------
// Catalogue
// ---------------------------------------------------------------------------------------------

export type Catalogue = Record<PaidPlanKey, { productId: string; priceId: string }>;

let cachedCatalogue: { signature: string; catalogue: Catalogue } | undefined;

/**
 * Makes sure every paid plan exists as a Stripe product with a monthly price carrying the plan's
 * lookup key. Safe to run at every start-up and from several processes at once: products have
 * fixed ids, prices are found by lookup key, and creations carry idempotency keys derived from
 * the plan and amount.
 */
export async function ensureCatalogue(stripe: Stripe = stripeClient()): Promise<Catalogue> {
  const lookupKeys = PAID_PLANS.map((plan) => plan.lookupKey as string);
  const existing = await viaStripe("read the price list", () => stripe.prices.list({ lookup_keys: lookupKeys, active: true, limit: 100 }));
  const entries: Partial<Catalogue> = {};
  for (const plan of PAID_PLANS) {
    const key = plan.key as PaidPlanKey;
    const amount = plan.monthlyPence as number;
    const found = existing.data.find((price) => price.lookup_key === plan.lookupKey);
    if (found && found.unit_amount === amount && found.currency === "gbp") {
      entries[key] = { productId: typeof found.product === "string" ? found.product : found.product.id, priceId: found.id };
      continue;
    }
    const productId = `equilibra_${plan.key}`;
    await viaStripe(`set up the ${plan.name} product`, async () => {
      try {
        await stripe.products.retrieve(productId);
      } catch (error) {
        if (!(error instanceof Stripe.errors.StripeInvalidRequestError) || error.statusCode !== 404) throw error;
        await stripe.products.create(
          { id: productId, name: `Equilibra ${plan.name}`, description: plan.summary, metadata: { plan: plan.key } },
          { idempotencyKey: `equilibra-product-${plan.key}` },
        );
      }
    });
    const price = await viaStripe(`set up the ${plan.name} price`, () =>
      stripe.prices.create(
        {
          product: productId,
          currency: "gbp",
          unit_amount: amount,
          recurring: { interval: "month" },
          lookup_key: plan.lookupKey as string,
          // A changed amount gets a new price; the lookup key moves to it.
          transfer_lookup_key: true,
          nickname: `${plan.name} monthly`,
          metadata: { plan: plan.key },
        },
        { idempotencyKey: `equilibra-price-${plan.key}-${amount}` },
      ),
    );
    entries[key] = { productId, priceId: price.id };
  }
  const catalogue = entries as Catalogue;
  cachedCatalogue = { signature: `${config().STRIPE_SECRET_KEY ?? ""} ${config().STRIPE_API_BASE ?? ""}`, catalogue };
  return catalogue;
}

/**
 * The start-up step: creates the catalogue if billing is configured, retrying briefly because the
 * local fake may still be starting beside the app. Never throws: checkout retries on first use.
 */
export async function prepareBilling(options: { attempts?: number; delayMs?: number } = {}): Promise<Catalogue | undefined> {
  const { STRIPE_SECRET_KEY, STRIPE_API_BASE } = config();
  if (!STRIPE_SECRET_KEY && !STRIPE_API_BASE) return undefined;
  const attempts = options.attempts ?? 10;
  for (let attempt = 1; attempt <= attempts; attempt++) {
    try {
      return await ensureCatalogue();
    } catch (error) {
      if (attempt === attempts) {
        console.warn(`billing: could not set up the plan catalogue (${error instanceof Error ? error.message : String(error)}); will retry at first checkout`);
        return undefined;
      }
      await new Promise((resolve) => setTimeout(resolve, options.delayMs ?? 500));
    }
  }
  return undefined;
}

async function priceIdFor(planKey: PaidPlanKey): Promise<string> {
  const signature = `${config().STRIPE_SECRET_KEY ?? ""} ${config().STRIPE_API_BASE ?? ""}`;
  const catalogue = cachedCatalogue?.signature === signature ? cachedCatalogue.catalogue : await ensureCatalogue();
  return catalogue[planKey].priceId;
}

/** Forgets the cached client and catalogue (tests point the app at a fresh fake). */
export function resetBillingForTests(): void {
  cachedClient = undefined;
  cachedCatalogue = undefined;
}

// ---------------------------------------------------------------------------------------------
// Subscribing and managing a subscription
// ---------------------------------------------------------------------------------------------

export interface BillingOrganisation {
  id: number;
  name: string;
  slug: string;
}

const LIVE_STATUSES = new Set(["active", "trialing", "past_due", "unpaid", "incomplete"]);

export function hasLiveSubscription(row: SubscriptionRow | undefined): boolean {
  return Boolean(row?.stripeSubscriptionId && row.status && LIVE_STATUSES.has(row.status));
}

async function customerExists(stripe: Stripe, customerId: string): Promise<boolean> {
  return viaStripe("read the customer", async () => {
    try {
      return !(await stripe.customers.retrieve(customerId)).deleted;
    } catch (error) {
      if (error instanceof Stripe.errors.StripeInvalidRequestError && error.statusCode === 404) return false;
      throw error;
    }
  });
}

/**
 * Creates a Checkout session for a paid plan and returns its URL. The organisation is linked to
 * a Stripe customer first (a customer alone is not a subscription); the subscription itself only
 * appears here when Stripe reports a completed payment.
 */
export async function startCheckout(input: {
  organisation: BillingOrganisation;
  planKey: PaidPlanKey;
  appUrl: string;
  userId: number;
  email: string | null;
}): Promise<string> {
  const { organisation, planKey, appUrl } = input;
  const row = await getSubscriptionRow(organisation.id);
  if (hasLiveSubscription(row)) {
    throw new BillingError("state", "This organisation already has a subscription: change its plan instead of subscribing again.");
  }
  const stripe = stripeClient();
  const priceId = await priceIdFor(planKey);
  let customerId = row?.stripeCustomerId;
  if (customerId && !(await customerExists(stripe, customerId))) {
    // Stripe no longer knows the customer we kept (e.g. the app moved from the local fake to real
    // Stripe): start afresh rather than fail every checkout.
    customerId = undefined;
  }
  if (!customerId) {
    const customer = await viaStripe("register the organisation as a customer", () =>
      stripe.customers.create(
        { name: organisation.name, email: input.email ?? undefined, metadata: { organisationId: String(organisation.id), slug: organisation.slug } },
        { idempotencyKey: `equilibra-customer-${organisation.id}-${row?.stripeCustomerId ?? "first"}` },
      ),
    );
    customerId = customer.id;
    await linkCustomer(organisation.id, customerId);
  }
  const base = `${appUrl.replace(/\/$/, "")}/o/${organisation.slug}/billing`;
  const session = await viaStripe("open a checkout", () =>
    stripe.checkout.sessions.create({
      mode: "subscription",
      customer: customerId,
      line_items: [{ price: priceId, quantity: 1 }],
      success_url: `${base}/success?session_id={CHECKOUT_SESSION_ID}`,
      cancel_url: `${base}/cancel`,
      client_reference_id: String(organisation.id),
      metadata: { organisationId: String(organisation.id), plan: planKey },
      subscription_data: { metadata: { organisationId: String(organisation.id), plan: planKey } },
    }),
  );
  if (!session.url) throw new BillingError("rejected", "The payment service opened a checkout without a payment page address.");
  await recordAudit(organisation.id, input.userId, "billing.checkout_started", session.id, { plan: planKey });
  return session.url;
}

/**
 * The success page's check: reads the session and, when paid, mirrors its subscription at once
 * rather than waiting for the webhook.
 */
export async function confirmCheckout(organisationId: number, sessionId: string): Promise<{ complete: boolean }> {
  const stripe = stripeClient();
  const session = await viaStripe("read the checkout", () => stripe.checkout.sessions.retrieve(sessionId));
  if (session.client_reference_id !== String(organisationId)) {
    throw new BillingError("state", "This checkout belongs to another organisation.");
  }
  if (session.status !== "complete" || !session.subscription) return { complete: false };
  const subscriptionId = typeof session.subscription === "string" ? session.subscription : session.subscription.id;
  const readAt = new Date();
  const subscription = await viaStripe("read the new subscription", () => stripe.subscriptions.retrieve(subscriptionId));
  await syncSubscription(subscription, readAt);
  return { complete: true };
}

async function requireLiveSubscription(organisationId: number): Promise<SubscriptionRow & { stripeSubscriptionId: string }> {
  const row = await getSubscriptionRow(organisationId);
  if (!row || !hasLiveSubscription(row) || !row.stripeSubscriptionId) {
    throw new BillingError("state", "This organisation has no current subscription. Choose a plan to subscribe.");
  }
  return row as SubscriptionRow & { stripeSubscriptionId: string };
}

async function updateAndMirror(subscriptionId: string, what: string, params: Stripe.SubscriptionUpdateParams): Promise<void> {
  const stripe = stripeClient();
  const updated = await viaStripe(what, () => stripe.subscriptions.update(subscriptionId, params));
  // The webhook will say the same; mirroring now lets the page show the change straight away.
  await syncSubscription(updated, new Date());
}

/** Moves the subscription to another paid plan from now on (Stripe prorates the difference). */
export async function changePlan(organisationId: number, planKey: PaidPlanKey, userId: number): Promise<void> {
  const row = await requireLiveSubscription(organisationId);
  if (row.planKey === planKey) throw new BillingError("state", `The organisation is already on the ${PLANS[planKey].name} plan.`);
  const stripe = stripeClient();
  const subscription = await viaStripe("read the subscription", () => stripe.subscriptions.retrieve(row.stripeSubscriptionId));
  const item = subscription.items.data[0];
  const priceId = await priceIdFor(planKey);
  await updateAndMirror(row.stripeSubscriptionId, "change the plan", {
    items: [{ id: item.id, price: priceId }],
    proration_behavior: "create_prorations",
    cancel_at_period_end: false,
  });
  await recordAudit(organisationId, userId, "billing.plan_changed", row.stripeSubscriptionId, { from: row.planKey, to: planKey });
}

export async function cancelAtPeriodEnd(organisationId: number, userId: number): Promise<void> {
  const row = await requireLiveSubscription(organisationId);
  if (row.cancelAtPeriodEnd) throw new BillingError("state", "The subscription is already set to end at the close of this period.");
  await updateAndMirror(row.stripeSubscriptionId, "cancel the subscription", { cancel_at_period_end: true });
  await recordAudit(organisationId, userId, "billing.cancel_scheduled", row.stripeSubscriptionId, {});
}

/** Undoes a scheduled cancellation while the period is still running. */
export async function resumeSubscription(organisationId: number, userId: number): Promise<void> {
  const row = await requireLiveSubscription(organisationId);
  if (!row.cancelAtPeriodEnd) throw new BillingError("state", "The subscription is not set to end, so there is nothing to resume.");
  await updateAndMirror(row.stripeSubscriptionId, "resume the subscription", { cancel_at_period_end: false });
  await recordAudit(organisationId, userId, "billing.resumed", row.stripeSubscriptionId, {});
}

export interface InvoiceSummary {
  id: string;
  number: string | null;
  status: string | null;
  amountDuePence: number;
  amountPaidPence: number;
  currency: string;
  createdAt: Date;
  periodStart: Date;
  periodEnd: Date;
  url: string | null;
}

/** The organisation's most recent invoices, newest first. */
export async function listInvoices(organisationId: number, limit = 12): Promise<InvoiceSummary[]> {
  const row = await getSubscriptionRow(organisationId);
  if (!row) return [];
  const stripe = stripeClient();
  const invoices = await viaStripe("list the invoices", () => stripe.invoices.list({ customer: row.stripeCustomerId, limit }));
  return invoices.data.map((invoice) => {
    // The period an invoice pays for is its line's; the invoice's own period_* describe pending items.
    const line = invoice.lines?.data[0];
    return {
      id: invoice.id,
      number: invoice.number,
      status: invoice.status,
      amountDuePence: invoice.amount_due,
      amountPaidPence: invoice.amount_paid,
      currency: invoice.currency,
      createdAt: new Date(invoice.created * 1000),
      periodStart: new Date((line?.period.start ?? invoice.period_start) * 1000),
      periodEnd: new Date((line?.period.end ?? invoice.period_end) * 1000),
      url: invoice.hosted_invoice_url ?? null,
    };
  });
}
