/**
 * POST /api/stripe/webhook — Stripe's billing events. A resource route: no CSRF origin check, and
 * the body is read raw, because the signature covers the exact bytes Stripe sent.
 */
import { receiveStripeWebhook } from "~/services/stripe-webhook.server";
import type { Route } from "./+types/api.stripe.webhook";

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  const outcome = await receiveStripeWebhook(await request.text(), request.headers.get("stripe-signature"));
  return Response.json(outcome.body, { status: outcome.status });
}

export function loader() {
  return Response.json({ error: "Stripe sends events here with POST." }, { status: 405, headers: { Allow: "POST" } });
}
