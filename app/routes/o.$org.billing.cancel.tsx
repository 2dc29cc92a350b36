/** Where Stripe Checkout returns when the administrator leaves without paying. */
import { data, Link } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { getPlanStanding } from "~/models/plan-limits.server";
import type { Route } from "./+types/o.$org.billing.cancel";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, ["administrator"]);
  const standing = await getPlanStanding(organisation);
  return data({ slug: organisation.slug, planName: standing.plan.name });
}

export default function BillingCancel({ loaderData }: Route.ComponentProps) {
  return (
    <div className="max-w-2xl space-y-4 py-4">
      <h1 className="text-2xl font-semibold">Checkout cancelled</h1>
      <p role="status">
        No payment was taken. The organisation stays on the <span data-testid="current-plan">{loaderData.planName}</span> plan.
      </p>
      <Link to={`/o/${loaderData.slug}/billing`} className="inline-block rounded bg-accent px-4 py-2 font-semibold text-white">
        Back to plan &amp; billing
      </Link>
    </div>
  );
}

export function meta() {
  return [{ title: "Checkout cancelled · Equilibra" }];
}
