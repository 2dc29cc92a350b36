/**
 * The fake's hosted pages: the payment page a checkout session redirects to, and an invoice page.
 * Their look is deliberately plain and labelled as a local test service, so nobody mistakes it
 * for a real payment page.
 */
import type { FakeCheckoutSession, FakeInvoice, FakePrice, FakeProduct } from "./objects";

export const TEST_CARDS = { succeeds: "4242 4242 4242 4242", declined: "4000 0000 0000 0002" } as const;

function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" })[c] ?? c);
}

export function formatMoney(amountMinor: number, currency: string): string {
  return new Intl.NumberFormat("en-GB", { style: "currency", currency: currency.toUpperCase() }).format(amountMinor / 100);
}

function formatDate(seconds: number): string {
  return new Date(seconds * 1000).toLocaleDateString("en-GB", { day: "numeric", month: "long", year: "numeric", timeZone: "UTC" });
}

function layout(title: string, body: string): string {
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(title)}</title>
<style>
  body { font-family: system-ui, sans-serif; background: #eef1ee; color: #1d2b24; margin: 0; }
  .banner { background: #1d2b24; color: #f4f7f4; padding: .5rem 1rem; font-size: .85rem; letter-spacing: .02em; }
  main { max-width: 30rem; margin: 2.5rem auto; background: #fff; border: 1px solid #c8d2cb; border-radius: .5rem; padding: 1.5rem 2rem; }
  h1 { font-size: 1.3rem; margin-top: 0; }
  label { display: block; margin-top: 1rem; font-weight: 600; font-size: .9rem; }
  input { width: 100%; box-sizing: border-box; padding: .55rem; font-size: 1rem; border: 1px solid #98a89d; border-radius: .3rem; margin-top: .25rem; }
  button { margin-top: 1.5rem; width: 100%; padding: .7rem; font-size: 1rem; background: #2f6b4f; color: #fff; border: 0; border-radius: .3rem; cursor: pointer; }
  .amount { font-size: 1.6rem; font-weight: 700; }
  .error { background: #fbeaea; border: 1px solid #c24d4d; color: #7a1f1f; padding: .6rem .8rem; border-radius: .3rem; margin-top: 1rem; }
  .hint { color: #55645a; font-size: .85rem; }
  table { width: 100%; border-collapse: collapse; margin-top: 1rem; }
  td, th { padding: .4rem 0; border-bottom: 1px solid #e1e7e2; text-align: left; }
  td.num { text-align: right; font-variant-numeric: tabular-nums; }
</style></head>
<body><div class="banner">Local test payments — no real card is charged</div><main>${body}</main></body></html>`;
}

export function checkoutPage(input: {
  session: FakeCheckoutSession;
  price: FakePrice;
  product: FakeProduct | undefined;
  error?: string;
  cardNumber?: string;
}): string {
  const { session, price, product, error } = input;
  const interval = price.recurring?.interval ?? "month";
  if (session.status !== "open") {
    return layout(
      "Checkout closed",
      `<h1>This checkout is ${escapeHtml(session.status ?? "closed")}</h1><p>Nothing more to pay here.</p>` +
        (session.success_url && session.status === "complete"
          ? `<p><a href="${escapeHtml(session.success_url.replace("{CHECKOUT_SESSION_ID}", session.id))}">Return to the service</a></p>`
          : ""),
    );
  }
  return layout(
    "Subscribe",
    `<h1>Subscribe to ${escapeHtml(product?.name ?? price.id)}</h1>
<p class="amount">${formatMoney(price.unit_amount ?? 0, price.currency)} <span class="hint">per ${escapeHtml(interval)}</span></p>
${session.customer_email ? `<p class="hint">Billed to ${escapeHtml(session.customer_email)}</p>` : ""}
${error ? `<p class="error" role="alert">${escapeHtml(error)}</p>` : ""}
<form method="post" action="/pay/${escapeHtml(session.id)}">
  <label for="card-number">Card number</label>
  <input id="card-number" name="card_number" inputmode="numeric" autocomplete="cc-number" placeholder="${TEST_CARDS.succeeds}" value="${escapeHtml(input.cardNumber ?? "")}" required>
  <label for="card-expiry">Expiry (MM/YY)</label>
  <input id="card-expiry" name="card_expiry" placeholder="12/34" value="12/34">
  <label for="card-cvc">Security code</label>
  <input id="card-cvc" name="card_cvc" placeholder="123" value="123">
  <label for="cardholder">Name on card</label>
  <input id="cardholder" name="cardholder" value="">
  <button type="submit">Pay and subscribe</button>
</form>
<p class="hint">Test cards: ${TEST_CARDS.succeeds} is accepted; ${TEST_CARDS.declined} is declined.</p>
${session.cancel_url ? `<p><a href="${escapeHtml(session.cancel_url)}">Cancel and return</a></p>` : ""}`,
  );
}

export function invoicePage(invoice: FakeInvoice): string {
  const rows = invoice.lines.data
    .map(
      (line) =>
        `<tr><td>${escapeHtml(line.description ?? "")}<br><span class="hint">${formatDate(line.period.start)} – ${formatDate(line.period.end)}</span></td><td class="num">${formatMoney(line.amount, line.currency)}</td></tr>`,
    )
    .join("");
  return layout(
    `Invoice ${invoice.number ?? invoice.id}`,
    `<h1>Invoice ${escapeHtml(invoice.number ?? invoice.id)}</h1>
<p>Status: <strong data-testid="invoice-status">${escapeHtml(invoice.status ?? "draft")}</strong></p>
<p class="hint">Issued ${formatDate(invoice.created)}${invoice.customer_name ? ` to ${escapeHtml(invoice.customer_name)}` : ""}</p>
<table><tbody>${rows}
<tr><th>Total</th><td class="num"><strong>${formatMoney(invoice.total, invoice.currency)}</strong></td></tr>
<tr><th>Paid</th><td class="num">${formatMoney(invoice.amount_paid, invoice.currency)}</td></tr>
<tr><th>Remaining</th><td class="num">${formatMoney(invoice.amount_remaining, invoice.currency)}</td></tr>
</tbody></table>`,
  );
}

export function notFoundPage(what: string): string {
  return layout("Not found", `<h1>Not found</h1><p>${escapeHtml(what)}</p>`);
}
