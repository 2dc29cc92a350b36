/**
 * The billing page's markup in each state, rendered on the server as the app would, so that the
 * labels browser journeys rely on ("Subscribe to Locality", "Cancel at end of period", "Resume
 * subscription", "View invoice …", data-testid="current-plan") stay put.
 */
import { renderToString } from "react-dom/server";
import { createRoutesStub } from "react-router";
import { describe, expect, it } from "vitest";
import Billing, { type loader } from "../../app/routes/o.$org.billing";
import { PLANS } from "../../app/services/plans";

type PageData = Awaited<ReturnType<typeof loader>>["data"];

const base: PageData = {
  organisationName: "Merrow Vale Commissioning",
  plan: PLANS.trial,
  source: "trial",
  status: "trial",
  trialEndsAt: "2026-04-01T00:00:00.000Z",
  graceEndsAt: null,
  runsAllowed: true,
  runsBlockedReason: null,
  live: false,
  currentPeriodEnd: null,
  cancelAtPeriodEnd: false,
  usage: { seats: 2, scenarios: 4 },
  invoices: [],
  invoicesError: null,
};

function render(page: Partial<PageData>): string {
  const loaderData = { ...base, ...page };
  const Stub = createRoutesStub([{ id: "billing", path: "/o/:org/billing", Component: Billing as never, loader: () => loaderData }]);
  return renderToString(<Stub initialEntries={["/o/merrow-vale/billing"]} hydrationData={{ loaderData: { billing: loaderData } }} />);
}

describe("the billing page", () => {
  it("offers checkout for each paid plan while on the trial, with usage against the trial's limits", () => {
    const html = render({});
    expect(html).toContain('data-testid="current-plan" class="font-semibold">Trial</dd>');
    expect(html).toContain("Free trial");
    expect(html).toContain("Trial ends on");
    expect(html).toMatch(/data-testid="seats-used">2(<!-- -->)? of (<!-- -->)?8(<!-- -->)? used/);
    expect(html).toContain(">Subscribe to Locality</button>");
    expect(html).toContain(">Subscribe to Region</button>");
    expect(html).not.toContain("Cancel at end of period");
    expect(html).toContain("No invoices yet.");
  });

  it("shows an active subscription's renewal date, plan switches, cancellation and invoice links", () => {
    const html = render({
      plan: PLANS.locality,
      source: "subscription",
      status: "active",
      live: true,
      currentPeriodEnd: "2026-05-01T00:00:00.000Z",
      invoices: [
        {
          id: "in_1",
          number: "FAKE-0001",
          status: "paid",
          amountDuePence: 39_000,
          amountPaidPence: 39_000,
          currency: "gbp",
          createdAt: "2026-04-01T00:00:00.000Z",
          periodStart: "2026-04-01T00:00:00.000Z",
          periodEnd: "2026-05-01T00:00:00.000Z",
          url: "http://127.0.0.1:12111/invoice/in_1",
        },
      ],
    });
    expect(html).toContain("Renews on");
    expect(html).toContain('data-testid="renewal-date">1 May 2026</dd>');
    expect(html).toContain(">Switch to Region</button>");
    expect(html).not.toContain("Subscribe to");
    expect(html).toContain(">Cancel at end of period</button>");
    expect(html).toContain("£390.00");
    expect(html).toMatch(/href="http:\/\/127.0.0.1:12111\/invoice\/in_1"[^>]*>View invoice (<!-- -->)?FAKE-0001/);
  });

  it("offers to resume a subscription set to end, and says when it ends", () => {
    const html = render({
      plan: PLANS.region,
      source: "subscription",
      status: "active",
      live: true,
      cancelAtPeriodEnd: true,
      currentPeriodEnd: "2026-05-01T00:00:00.000Z",
    });
    expect(html).toContain("Ends on");
    expect(html).toContain(">Resume subscription</button>");
    expect(html).not.toContain("Cancel at end of period");
  });

  it("warns about an overdue payment and a payment service that cannot be reached", () => {
    const html = render({
      plan: PLANS.locality,
      source: "subscription",
      status: "past_due",
      live: true,
      graceEndsAt: "2026-05-08T00:00:00.000Z",
      invoicesError: "The payment service could not be reached while trying to list the invoices, so nothing was changed.",
    });
    expect(html).toContain("Payment overdue");
    expect(html).toContain("new runs remain possible until <!-- -->8 May 2026");
    expect(html).toContain("could not be reached while trying to list the invoices");
  });
});
