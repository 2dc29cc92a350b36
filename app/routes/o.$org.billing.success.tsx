/**
 * Where Stripe Checkout returns after a successful payment. The subscription is confirmed by
 * reading the checkout session back from Stripe (the webhook may not have arrived yet).
 */
import { data, Link } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { getPlanStanding } from "~/models/plan-limits.server";
import { BillingError, confirmCheckout } from "~/services/billing.server";
import type { Route } from "./+types/o.$org.billing.success";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, ["administrator"]);
  const sessionId = new URL(request.url).searchParams.get("session_id");
  let complete = false;
  let problem: string | null = null;
  if (!sessionId) {
    problem = "The address has no checkout session id, so the payment cannot be confirmed here. The billing page shows the current plan.";
  } else {
    try {
      complete = (await confirmCheckout(organisation.id, sessionId)).complete;
    } catch (error) {
      if (!(error instanceof BillingError)) throw error;
      problem = error.message;
    }
  }
  const standing = await getPlanStanding(organisation);
  return data({ slug: organisation.slug, complete, problem, planName: standing.plan.name, source: standing.source });
}

export default function BillingSuccess({ loaderData }: Route.ComponentProps) {
  const { slug, complete, problem, planName, source } = loaderData;
  return (
    <div className="max-w-2xl space-y-4 py-4">
      <h1 className="text-2xl font-semibold">{complete ? "Thank you — the subscription is active" : "Checking the payment"}</h1>
      {problem && (
        <p role="alert" className="rounded border border-warn bg-warn-soft p-4">
          {problem}
        </p>
      )}
      {complete && source === "subscription" && (
        <p role="status" data-testid="subscribed-plan">
          The organisation is now on the {planName} plan.
        </p>
      )}
      {!complete && !problem && <p>The payment has not been confirmed yet. It usually takes a few seconds; the billing page will show it.</p>}
      <Link to={`/o/${slug}/billing`} className="inline-block rounded bg-accent px-4 py-2 font-semibold text-white">
        Back to plan &amp; billing
      </Link>
    </div>
  );
}

export function meta() {
  return [{ title: "Subscription · Equilibra" }];
}
