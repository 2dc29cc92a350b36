/**
 * Plan & billing, for administrators only: the current plan and its standing, usage against the
 * plan's limits, invoices, and the changes an administrator can make (subscribe through Stripe
 * Checkout, change plan, cancel at period end, resume).
 */
import { data, Form, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { requireRole } from "~/auth/guards.server";
import { config } from "~/config.server";
import { getPlanStanding } from "~/models/plan-limits.server";
import { countUsage, getSubscriptionRow } from "~/models/subscriptions.server";
import {
  BillingError,
  cancelAtPeriodEnd,
  changePlan,
  hasLiveSubscription,
  listInvoices,
  resumeSubscription,
  startCheckout,
  type InvoiceSummary,
} from "~/services/billing.server";
import { formatPence, PAID_PLANS, PAST_DUE_GRACE_DAYS, PLAN_KEYS, type Plan } from "~/services/plans";
import type { Route } from "./+types/o.$org.billing";

const paidPlanKey = z.enum(PLAN_KEYS).exclude(["trial"]);

const billingFormSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("subscribe"), plan: paidPlanKey }),
  z.object({ intent: z.literal("change"), plan: paidPlanKey }),
  z.object({ intent: z.literal("cancel") }),
  z.object({ intent: z.literal("resume") }),
]);

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, ["administrator"]);
  const [standing, row, usage] = await Promise.all([
    getPlanStanding(organisation),
    getSubscriptionRow(organisation.id),
    countUsage(organisation.id),
  ]);
  let invoices: InvoiceSummary[] = [];
  let invoicesError: string | null = null;
  try {
    invoices = await listInvoices(organisation.id);
  } catch (error) {
    if (!(error instanceof BillingError)) throw error;
    invoicesError = error.message;
  }
  const iso = (date: Date | null | undefined) => (date ? date.toISOString() : null);
  return data({
    organisationName: organisation.name,
    plan: standing.plan,
    source: standing.source,
    status: standing.status,
    trialEndsAt: iso(standing.trialEndsAt),
    graceEndsAt: iso(standing.graceEndsAt),
    runsAllowed: standing.runsAllowed,
    runsBlockedReason: standing.runsBlockedReason,
    live: hasLiveSubscription(row),
    currentPeriodEnd: iso(row?.currentPeriodEnd),
    cancelAtPeriodEnd: row?.cancelAtPeriodEnd ?? false,
    usage,
    invoices: invoices.map((invoice) => ({
      ...invoice,
      createdAt: invoice.createdAt.toISOString(),
      periodStart: invoice.periodStart.toISOString(),
      periodEnd: invoice.periodEnd.toISOString(),
    })),
    invoicesError,
  });
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireRole(request, params.org, ["administrator"]);
  const parsed = billingFormSchema.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) {
    return data({ error: "The billing form was not understood: choose one of the plans shown and try again.", notice: null }, { status: 400 });
  }
  const form = parsed.data;
  try {
    switch (form.intent) {
      case "subscribe": {
        const appUrl = config().APP_URL ?? new URL(request.url).origin;
        const url = await startCheckout({ organisation, planKey: form.plan, appUrl, userId: user.id, email: user.email });
        return redirect(url);
      }
      case "change":
        await changePlan(organisation.id, form.plan, user.id);
        return data({ error: null, notice: `The plan is now ${PAID_PLANS.find((plan) => plan.key === form.plan)?.name}.` });
      case "cancel":
        await cancelAtPeriodEnd(organisation.id, user.id);
        return data({ error: null, notice: "The subscription will end at the close of the current period. You can resume it until then." });
      case "resume":
        await resumeSubscription(organisation.id, user.id);
        return data({ error: null, notice: "The subscription will continue and renew as usual." });
    }
  } catch (error) {
    if (!(error instanceof BillingError)) throw error;
    const status = error.kind === "unavailable" || error.kind === "not_configured" ? 503 : error.kind === "state" ? 409 : 502;
    return data({ error: error.message, notice: null }, { status });
  }
}

const STATUS_LABELS: Record<string, string> = {
  active: "Active",
  trialing: "Active (trial period)",
  past_due: "Payment overdue",
  trial: "Free trial",
  trial_ended: "Trial ended",
};

function formatDate(iso: string | null): string {
  if (!iso) return "—";
  return new Date(iso).toLocaleDateString("en-GB", { day: "numeric", month: "long", year: "numeric", timeZone: "UTC" });
}

function formatAmount(pence: number, currency: string): string {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(pence / 100);
}

function limitText(value: number | null, unit: string): string {
  return value === null ? `Unlimited ${unit}` : `${value.toLocaleString("en-GB")} ${unit}`;
}

export default function Billing({ loaderData, actionData }: Route.ComponentProps) {
  const page = loaderData;
  const navigation = useNavigation();
  const busy = navigation.state !== "idle";
  const limits = page.plan.limits;
  return (
    <div className="max-w-5xl space-y-8">
      <h1 className="text-2xl font-semibold">Plan &amp; billing</h1>

      {actionData?.error && (
        <p role="alert" className="rounded border border-bad bg-white p-4 text-bad">
          {actionData.error}
        </p>
      )}
      {actionData?.notice && (
        <p role="status" className="rounded border border-good bg-white p-4 text-good">
          {actionData.notice}
        </p>
      )}

      <section aria-labelledby="current-plan-heading" className="rounded border border-rule bg-white p-5">
        <h2 id="current-plan-heading" className="text-lg font-semibold">
          Current plan
        </h2>
        <dl className="mt-3 grid grid-cols-[max-content_1fr] gap-x-6 gap-y-2">
          <dt className="text-ink-soft">Plan</dt>
          <dd data-testid="current-plan" className="font-semibold">
            {page.plan.name}
          </dd>
          <dt className="text-ink-soft">Status</dt>
          <dd data-testid="plan-status">{STATUS_LABELS[page.status] ?? page.status}</dd>
          {page.source === "subscription" ? (
            <>
              <dt className="text-ink-soft">{page.cancelAtPeriodEnd ? "Ends on" : "Renews on"}</dt>
              <dd data-testid="renewal-date">{formatDate(page.currentPeriodEnd)}</dd>
            </>
          ) : (
            <>
              <dt className="text-ink-soft">{page.status === "trial" ? "Trial ends on" : "Trial ended on"}</dt>
              <dd data-testid="trial-end">{formatDate(page.trialEndsAt)}</dd>
            </>
          )}
          <dt className="text-ink-soft">Seats</dt>
          <dd data-testid="seats-used">
            {page.usage.seats} of {limits.seats} used
          </dd>
          <dt className="text-ink-soft">Scenarios</dt>
          <dd>{limits.scenarios === null ? `${page.usage.scenarios} (no limit)` : `${page.usage.scenarios} of ${limits.scenarios}`}</dd>
          <dt className="text-ink-soft">Problem size</dt>
          <dd>up to {limits.problemSize.toLocaleString("en-GB")} practices × sites per scenario</dd>
          <dt className="text-ink-soft">API access</dt>
          <dd>{limits.api ? "Included" : "Not included"}</dd>
        </dl>

        {page.status === "past_due" && (
          <p role="alert" className="mt-4 rounded border border-warn bg-warn-soft p-3 text-sm">
            The last payment failed. Everything stays readable; new runs remain possible until {formatDate(page.graceEndsAt)} (
            {PAST_DUE_GRACE_DAYS} days' grace). Stripe retries the card; update the payment details to settle the invoice.
          </p>
        )}
        {!page.runsAllowed && page.runsBlockedReason && (
          <p role="alert" className="mt-4 rounded border border-warn bg-warn-soft p-3 text-sm">
            {page.runsBlockedReason}
          </p>
        )}

        {page.live && (
          <Form method="post" className="mt-4">
            {page.cancelAtPeriodEnd ? (
              <>
                <p className="mb-2 text-sm">The subscription is set to end on {formatDate(page.currentPeriodEnd)}.</p>
                <button name="intent" value="resume" disabled={busy} className="rounded bg-accent px-4 py-2 font-semibold text-white">
                  Resume subscription
                </button>
              </>
            ) : (
              <button name="intent" value="cancel" disabled={busy} className="rounded border border-bad px-4 py-2 text-bad">
                Cancel at end of period
              </button>
            )}
          </Form>
        )}
      </section>

      <section aria-labelledby="plans-heading">
        <h2 id="plans-heading" className="text-lg font-semibold">
          {page.live ? "Change plan" : "Choose a plan"}
        </h2>
        <div className="mt-3 grid gap-4 md:grid-cols-2">
          {PAID_PLANS.map((plan) => (
            <PlanCard key={plan.key} plan={plan} current={page.live && page.plan.key === plan.key} live={page.live} busy={busy} />
          ))}
        </div>
        {!page.live && (
          <p className="mt-3 text-sm text-ink-soft">
            Payment is taken on Stripe's checkout page; you return here afterwards. Prices exclude VAT.
          </p>
        )}
      </section>

      <section aria-labelledby="invoices-heading">
        <h2 id="invoices-heading" className="text-lg font-semibold">
          Invoices
        </h2>
        {page.invoicesError ? (
          <p role="alert" className="mt-3 rounded border border-warn bg-warn-soft p-3 text-sm">
            {page.invoicesError}
          </p>
        ) : page.invoices.length === 0 ? (
          <p className="mt-3 text-ink-soft">No invoices yet.</p>
        ) : (
          <table className="mt-3 w-full border-collapse bg-white text-sm" aria-labelledby="invoices-heading">
            <thead>
              <tr className="border-b border-rule text-left">
                <th className="p-2">Invoice</th>
                <th className="p-2">Issued</th>
                <th className="p-2">Period</th>
                <th className="num p-2">Amount</th>
                <th className="p-2">Status</th>
                <th className="p-2">
                  <span className="sr-only">Link</span>
                </th>
              </tr>
            </thead>
            <tbody>
              {page.invoices.map((invoice) => (
                <tr key={invoice.id} className="border-b border-rule">
                  <td className="p-2">{invoice.number ?? invoice.id}</td>
                  <td className="p-2">{formatDate(invoice.createdAt)}</td>
                  <td className="p-2">
                    {formatDate(invoice.periodStart)} – {formatDate(invoice.periodEnd)}
                  </td>
                  <td className="num p-2">{formatAmount(invoice.amountDuePence, invoice.currency)}</td>
                  <td className="p-2">{invoice.status === "paid" ? "Paid" : invoice.status === "open" ? "Unpaid" : (invoice.status ?? "Draft")}</td>
                  <td className="p-2">
                    {invoice.url && (
                      <a href={invoice.url} target="_blank" rel="noreferrer" className="text-accent underline">
                        View invoice {invoice.number ?? ""}
                      </a>
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
        )}
      </section>
    </div>
  );
}

function PlanCard({ plan, current, live, busy }: { plan: Plan; current: boolean; live: boolean; busy: boolean }) {
  return (
    <Form method="post" className={`rounded border bg-white p-5 ${current ? "border-accent" : "border-rule"}`} aria-label={`${plan.name} plan`}>
      <h3 className="text-base font-semibold">{plan.name}</h3>
      <p className="text-sm text-ink-soft">{plan.summary}</p>
      <p className="mt-2 text-xl font-semibold">
        {formatPence(plan.monthlyPence ?? 0)} <span className="text-sm font-normal text-ink-soft">per month</span>
      </p>
      <ul className="mt-2 list-disc pl-5 text-sm">
        <li>{limitText(plan.limits.seats, "seats")}</li>
        <li>{limitText(plan.limits.scenarios, "scenarios")}</li>
        <li>Up to {plan.limits.problemSize.toLocaleString("en-GB")} practices × sites</li>
        <li>{plan.limits.api ? "API access" : "No API access"}</li>
      </ul>
      <input type="hidden" name="plan" value={plan.key} />
      {current ? (
        <p className="mt-4 font-semibold text-accent">Current plan</p>
      ) : (
        <button
          name="intent"
          value={live ? "change" : "subscribe"}
          disabled={busy}
          className="mt-4 rounded bg-accent px-4 py-2 font-semibold text-white disabled:opacity-60"
        >
          {live ? `Switch to ${plan.name}` : `Subscribe to ${plan.name}`}
        </button>
      )}
    </Form>
  );
}

export function meta() {
  return [{ title: "Plan & billing · Equilibra" }];
}
