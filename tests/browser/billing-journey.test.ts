/**
 * Browser journey (issue: subscriptions): an administrator of the demo organisation subscribes with
 * the test card on the local fake Stripe's hosted payment page and, back in the app, sees the plan
 * active and the invoice listed on the billing page.
 *
 * Stripe delivers webhooks asynchronously, so the billing page is reloaded (bounded in count and
 * time) until the webhook has been mirrored.
 */
import type { Browser, Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { TEST_CARDS } from "../../app/fakes/stripe/pages";
import { PAID_PLANS } from "../../app/services/plans";
import { signInAs, useRunningApp, type RunningApp } from "./harness";

let app: RunningApp;
let browser: Browser;

useRunningApp((started) => ({ app, browser } = started));

/** Reloads the billing page until `ready` holds, at most `attempts` times over about `attempts` × 0.5 s. */
async function reloadUntil(page: Page, ready: () => Promise<boolean>, attempts = 40): Promise<boolean> {
  for (let attempt = 0; attempt < attempts; attempt++) {
    if (await ready()) return true;
    await page.waitForTimeout(500);
    await page.goto(`${app.url}/o/caldervey/billing`);
  }
  return ready();
}

describe("subscribing through the fake Stripe's hosted payment page", () => {
  it("leaves the plan active and the invoice on the billing page", async () => {
    const plan = PAID_PLANS[0];
    const context = await browser.newContext();
    const page = await context.newPage();
    await signInAs(page, app, "administrator");

    await page.goto(`${app.url}/o/caldervey/billing`);
    // The demo organisation starts on the free trial, with no invoices.
    expect(await page.getByTestId("plan-status").textContent()).toMatch(/trial/i);
    expect(await page.getByText("No invoices yet.").isVisible()).toBe(true);

    await page.getByRole("button", { name: `Subscribe to ${plan.name}` }).click();
    // The app redirects to the fake's checkout session URL, on its own loopback port.
    await page.waitForURL((url) => url.pathname.startsWith("/pay/") || /checkout/i.test(url.pathname), { timeout: 30_000 });
    expect(new URL(page.url()).origin).not.toBe(app.url);
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toContain(plan.name);

    await page.locator("#card-number").fill(TEST_CARDS.succeeds);
    await page.locator("#cardholder").fill("Ada Pellow");
    await page.getByRole("button", { name: "Pay and subscribe" }).click();

    // Back in the app on the success page, which reads the checkout session back from Stripe.
    await page.waitForURL((url) => url.origin === app.url && url.pathname === "/o/caldervey/billing/success", { timeout: 30_000 });
    expect(await page.getByRole("heading", { level: 1 }).textContent()).toMatch(/subscription is active|checking the payment/i);

    await page.getByRole("link", { name: /back to plan/i }).click();
    await page.waitForURL(`${app.url}/o/caldervey/billing`);

    const invoiceRows = page.locator("table[aria-labelledby='invoices-heading'] tbody tr");
    const settled = await reloadUntil(
      page,
      async () => (await page.getByTestId("plan-status").textContent()) === "Active" && (await invoiceRows.count()) > 0 && /Paid/.test((await invoiceRows.first().textContent()) ?? ""),
    );
    expect(settled, "the billing page never showed the active plan with a paid invoice").toBe(true);

    expect(await page.getByTestId("current-plan").textContent()).toBe(plan.name);
    expect(await page.getByTestId("plan-status").textContent()).toBe("Active");
    expect(await page.getByTestId("renewal-date").textContent()).toMatch(/\d{4}$/);
    expect(await invoiceRows.count()).toBe(1);
    const invoice = (await invoiceRows.first().textContent()) ?? "";
    // The first invoice is the plan's monthly price, paid.
    const price = new Intl.NumberFormat("en-GB", { style: "currency", currency: "GBP" }).format((plan.monthlyPence ?? 0) / 100);
    expect(invoice).toContain(price);
    expect(invoice).toContain("Paid");

    // The invoice link opens the fake's hosted invoice page, which reports it paid.
    const link = invoiceRows.first().getByRole("link", { name: /view invoice/i });
    const href = await link.getAttribute("href");
    expect(href).toBeTruthy();
    const invoicePage = await context.newPage();
    await invoicePage.goto(href!);
    expect(await invoicePage.getByTestId("invoice-status").textContent()).toBe("paid");

    // The plan's card no longer offers to subscribe: it says it is the current plan.
    const card = page.getByRole("form", { name: `${plan.name} plan` });
    expect(await card.getByText("Current plan", { exact: true }).isVisible()).toBe(true);
    expect(await card.getByRole("button").count()).toBe(0);
    await context.close();
  }, 150_000);
});
