/**
 * A local fake of the parts of Stripe that Equilibra uses, served over plain HTTP on loopback so the
 * app can talk to it through the real Stripe SDK (`host`, `port`, `protocol: "http"`).
 *
 *   npx tsx app/fakes/stripe/server.ts --port 12111 \
 *     --webhook-url http://localhost:3000/api/stripe/webhook --webhook-secret whsec_local \
 *     [--state-file data/fake-stripe.json]
 *
 * API: /v1/products, /v1/prices, /v1/customers, /v1/checkout/sessions, /v1/subscriptions,
 * /v1/invoices, /v1/events. Pages: /pay/{session} (hosted payment), /invoice/{id}.
 * Test controls: POST /_test/reset, POST /_test/advance-clock {days|seconds, failPayment},
 * GET /_test/events (with delivery outcomes).
 *
 * Bodies are form-encoded with bracket keys, as the SDK sends them; every POST may carry an
 * Idempotency-Key whose first response is replayed. Events are delivered one at a time, in order,
 * signed with the webhook secret.
 */
import { existsSync, readFileSync, renameSync, writeFileSync } from "node:fs";
import { createServer, type IncomingMessage, type ServerResponse } from "node:http";
import type { AddressInfo } from "node:net";
import { pathToFileURL } from "node:url";
import qs from "qs";
import Stripe from "stripe";
import type {
  FakeCheckoutSession,
  FakeCustomer,
  FakeErrorBody,
  FakeEvent,
  FakeInvoice,
  FakePrice,
  FakeProduct,
  FakeSubscription,
} from "./objects";
import { checkoutPage, invoicePage, notFoundPage, TEST_CARDS } from "./pages";
import { FakeStripeError, FakeStripeState, listOf, missing, newId, type FakeStripeSnapshot } from "./state";

export interface FakeStripeOptions {
  /** 0 picks a free port. */
  port?: number;
  /** Where events are POSTed; without it events are only recorded. */
  webhookUrl?: string;
  webhookSecret?: string;
  /** A JSON file to keep the fake's state in across restarts (the app's database remembers customers). */
  stateFile?: string;
}

export interface FakeStripe {
  /** e.g. http://127.0.0.1:12111 */
  url: string;
  port: number;
  state: FakeStripeState;
  /** Resolves once every event recorded so far has been delivered (or given up on). */
  settle(): Promise<void>;
  close(): Promise<void>;
}

interface Delivery {
  eventId: string;
  type: string;
  attempts: number;
  status: number | null;
  error?: string;
}

type Params = Record<string, unknown>;

const RETRY_DELAYS_MS = [0, 200, 1000];

function str(value: unknown): string | undefined {
  return typeof value === "string" ? value : undefined;
}

function bool(value: unknown): boolean | undefined {
  if (value === true || value === "true") return true;
  if (value === false || value === "false") return false;
  return undefined;
}

function metadataOf(value: unknown): Record<string, string> {
  if (!value || typeof value !== "object") return {};
  return Object.fromEntries(Object.entries(value as Record<string, unknown>).map(([k, v]) => [k, String(v)]));
}

function arrayOf(value: unknown): unknown[] {
  if (Array.isArray(value)) return value;
  if (value && typeof value === "object") return Object.values(value);
  return value === undefined ? [] : [value];
}

function required(params: Params, name: string): string {
  const value = str(params[name]);
  if (!value) throw new FakeStripeError(400, "invalid_request_error", `Missing required param: ${name}.`, "parameter_missing", name);
  return value;
}

function newestFirst<T extends { created: number }>(items: T[]): T[] {
  return [...items].sort((a, b) => b.created - a.created);
}

function paginate<T extends { id: string; created: number }>(items: T[], params: Params, url: string) {
  const limit = Math.min(100, Math.max(1, Number(params.limit ?? 10) || 10));
  let sorted = newestFirst(items);
  const after = str(params.starting_after);
  if (after) sorted = sorted.slice(sorted.findIndex((item) => item.id === after) + 1);
  const list = listOf(sorted.slice(0, limit), url);
  list.has_more = sorted.length > limit;
  return list;
}

async function readBody(request: IncomingMessage): Promise<string> {
  const chunks: Buffer[] = [];
  for await (const chunk of request) chunks.push(chunk as Buffer);
  return Buffer.concat(chunks).toString("utf8");
}

function parseBody(raw: string, contentType: string | undefined): Params {
  if (!raw) return {};
  if (contentType?.includes("application/json")) return JSON.parse(raw) as Params;
  // The SDK sends arrays as a[0]=…; qs's default arrayLimit (20) would turn longer ones into objects.
  return qs.parse(raw, { arrayLimit: 1000, depth: 10 }) as Params;
}

export async function startFakeStripe(options: FakeStripeOptions = {}): Promise<FakeStripe> {
  const deliveries: Delivery[] = [];
  let chain: Promise<void> = Promise.resolve();
  let baseUrl = "";
  const state = new FakeStripeState("");

  async function deliver(event: FakeEvent): Promise<void> {
    const record: Delivery = { eventId: event.id, type: event.type, attempts: 0, status: null };
    deliveries.push(record);
    if (!options.webhookUrl) return;
    const payload = JSON.stringify(event, null, 2);
    for (const delay of RETRY_DELAYS_MS) {
      if (delay) await new Promise((resolve) => setTimeout(resolve, delay));
      record.attempts += 1;
      try {
        const header = Stripe.webhooks.generateTestHeaderString({ payload, secret: options.webhookSecret ?? "" });
        const response = await fetch(options.webhookUrl, {
          method: "POST",
          headers: { "content-type": "application/json", "stripe-signature": header },
          body: payload,
        });
        record.status = response.status;
        await response.arrayBuffer();
        if (response.ok) {
          event.pending_webhooks = 0;
          return;
        }
      } catch (error) {
        record.error = error instanceof Error ? error.message : String(error);
      }
    }
  }

  if (options.stateFile && existsSync(options.stateFile)) {
    state.restore(JSON.parse(readFileSync(options.stateFile, "utf8")) as FakeStripeSnapshot);
  }
  function persist(): void {
    if (!options.stateFile) return;
    // Write-then-rename, so a crash mid-write leaves the previous state rather than half a file.
    writeFileSync(`${options.stateFile}.tmp`, JSON.stringify(state.snapshot()));
    renameSync(`${options.stateFile}.tmp`, options.stateFile);
  }

  state.onEvent = (event) => {
    chain = chain.then(() => deliver(event));
  };

  async function settle(): Promise<void> {
    // New events may be queued while earlier ones are delivered (the app calls back during delivery).
    let current: Promise<void>;
    do {
      current = chain;
      await current;
    } while (current !== chain);
  }

  function api(method: string, path: string, params: Params): unknown {
    const parts = path.split("/").filter(Boolean).slice(1); // drop "v1"
    const [resource, id, action] = parts;
    const now = state.now();

    if (resource === "products") {
      if (method === "POST" && !id) {
        const product: FakeProduct = {
          id: str(params.id) ?? newId("prod"),
          object: "product",
          active: bool(params.active) ?? true,
          created: now,
          description: str(params.description) ?? null,
          livemode: false,
          metadata: metadataOf(params.metadata),
          name: required(params, "name"),
          updated: now,
        };
        if (state.products.has(product.id)) {
          throw new FakeStripeError(400, "invalid_request_error", `Product already exists: ${product.id}`, "resource_already_exists", "id");
        }
        state.products.set(product.id, product);
        return product;
      }
      if (method === "GET" && !id) {
        const active = bool(params.active);
        return paginate([...state.products.values()].filter((p) => active === undefined || p.active === active), params, "/v1/products");
      }
      const product = id ? state.products.get(id) : undefined;
      if (!product || !id) throw missing("product", id ?? "");
      if (method === "GET") return product;
    }

    if (resource === "prices") {
      if (method === "POST" && !id) {
        const productId = required(params, "product");
        if (!state.products.has(productId)) throw missing("product", productId, "product");
        const recurring = params.recurring as Params | undefined;
        const lookupKey = str(params.lookup_key) ?? null;
        if (lookupKey) {
          const holder = [...state.prices.values()].find((p) => p.lookup_key === lookupKey);
          if (holder && bool(params.transfer_lookup_key) !== true) {
            throw new FakeStripeError(
              400,
              "invalid_request_error",
              `A price (\`${holder.id}\`) already uses that lookup key.`,
              "lookup_key_exists",
              "lookup_key",
            );
          }
          if (holder) holder.lookup_key = null;
        }
        const interval = str(recurring?.interval);
        if (interval && !["day", "week", "month", "year"].includes(interval)) {
          throw new FakeStripeError(400, "invalid_request_error", `Invalid recurring[interval]: ${interval}`, "parameter_invalid", "recurring[interval]");
        }
        const price: FakePrice = {
          id: newId("price"),
          object: "price",
          active: bool(params.active) ?? true,
          created: now,
          currency: required(params, "currency").toLowerCase(),
          livemode: false,
          lookup_key: lookupKey,
          metadata: metadataOf(params.metadata),
          nickname: str(params.nickname) ?? null,
          product: productId,
          recurring: interval
            ? {
                interval: interval as Stripe.Price.Recurring.Interval,
                interval_count: Number(recurring?.interval_count ?? 1),
                meter: null,
                trial_period_days: null,
                usage_type: "licensed",
              }
            : null,
          type: interval ? "recurring" : "one_time",
          unit_amount: Number(required(params, "unit_amount")),
        };
        state.prices.set(price.id, price);
        return price;
      }
      if (method === "GET" && !id) {
        const active = bool(params.active);
        const lookupKeys = arrayOf(params.lookup_keys).map(String);
        const product = str(params.product);
        return paginate(
          [...state.prices.values()].filter(
            (p) =>
              (active === undefined || p.active === active) &&
              (lookupKeys.length === 0 || (p.lookup_key !== null && lookupKeys.includes(p.lookup_key))) &&
              (!product || p.product === product),
          ),
          params,
          "/v1/prices",
        );
      }
      if (method === "GET" && id) return state.price(id, "id");
    }

    if (resource === "customers") {
      if (method === "POST" && !id) {
        const customer: FakeCustomer = {
          id: newId("cus"),
          object: "customer",
          created: now,
          email: str(params.email) ?? null,
          livemode: false,
          metadata: metadataOf(params.metadata),
          name: str(params.name) ?? null,
        };
        state.customers.set(customer.id, customer);
        return customer;
      }
      const customer = id ? state.customers.get(id) : undefined;
      if (!customer || !id) throw missing("customer", id ?? "");
      if (method === "GET") return customer;
      if (method === "POST") {
        if (params.email !== undefined) customer.email = str(params.email) ?? null;
        if (params.name !== undefined) customer.name = str(params.name) ?? null;
        if (params.metadata !== undefined) customer.metadata = { ...customer.metadata, ...metadataOf(params.metadata) };
        return customer;
      }
    }

    if (resource === "checkout" && id === "sessions") {
      const sessionId = action;
      if (method === "POST" && !sessionId) return createCheckoutSession(params, now);
      const session = sessionId ? state.sessions.get(sessionId) : undefined;
      if (!session || !sessionId) throw missing("checkout.session", sessionId ?? "");
      if (method === "GET") return session;
    }

    if (resource === "subscriptions") {
      if (method === "GET" && !id) {
        const customer = str(params.customer);
        const status = str(params.status);
        return paginate(
          [...state.subscriptions.values()].filter(
            (s) =>
              (!customer || s.customer === customer) &&
              // Stripe's default list leaves out canceled subscriptions.
              (status === "all" ? true : status ? s.status === status : s.status !== "canceled"),
          ),
          params,
          "/v1/subscriptions",
        );
      }
      if (!id) throw missing("subscription", "");
      const subscription = state.subscription(id);
      if (method === "GET" && !action) return subscription;
      if (method === "POST" && !action) return updateSubscription(subscription, params, now);
      if (method === "DELETE" && !action) {
        if (subscription.status === "canceled") {
          throw new FakeStripeError(400, "invalid_request_error", `The subscription ${id} has already been canceled.`, "resource_missing", "id");
        }
        subscription.status = "canceled";
        subscription.canceled_at = now;
        subscription.ended_at = now;
        state.emit("customer.subscription.deleted", subscription);
        return subscription;
      }
    }

    if (resource === "invoices") {
      if (method === "GET" && !id) {
        const customer = str(params.customer);
        const subscription = str(params.subscription);
        const status = str(params.status);
        return paginate(
          [...state.invoices.values()].filter(
            (i) =>
              (!customer || i.customer === customer) &&
              (!subscription || i.parent?.subscription_details?.subscription === subscription) &&
              (!status || i.status === status),
          ),
          params,
          "/v1/invoices",
        );
      }
      const invoice = id ? state.invoices.get(id) : undefined;
      if (!invoice || !id) throw missing("invoice", id ?? "");
      if (method === "GET" && !action) return invoice;
    }

    if (resource === "events") {
      if (method === "GET" && !id) {
        const type = str(params.type);
        return paginate(state.events.filter((e) => !type || e.type === type), params, "/v1/events");
      }
      const event = state.events.find((e) => e.id === id);
      if (!event || !id) throw missing("event", id ?? "");
      if (method === "GET") return event;
    }

    throw new FakeStripeError(404, "invalid_request_error", `Unrecognized request URL (${method}: ${path}).`);
  }

  function createCheckoutSession(params: Params, now: number): FakeCheckoutSession {
    const mode = required(params, "mode");
    if (mode !== "subscription") {
      throw new FakeStripeError(400, "invalid_request_error", `This fake supports mode=subscription only, not ${mode}.`, "parameter_invalid", "mode");
    }
    const successUrl = required(params, "success_url");
    const lines = arrayOf(params.line_items) as Params[];
    if (lines.length !== 1) {
      throw new FakeStripeError(400, "invalid_request_error", "Exactly one line item is supported.", "parameter_invalid", "line_items");
    }
    const price = state.price(required(lines[0], "price"), "line_items[0][price]");
    if (!price.recurring) {
      throw new FakeStripeError(400, "invalid_request_error", "A subscription needs a recurring price.", "parameter_invalid", "line_items[0][price]");
    }
    const quantity = Number(lines[0].quantity ?? 1);
    const customer = str(params.customer) ?? null;
    if (customer && !state.customers.has(customer)) throw missing("customer", customer, "customer");
    const id = newId("cs_test");
    const amount = (price.unit_amount ?? 0) * quantity;
    const subscriptionData = params.subscription_data as Params | undefined;
    const session: FakeCheckoutSession = {
      id,
      object: "checkout.session",
      amount_subtotal: amount,
      amount_total: amount,
      cancel_url: str(params.cancel_url) ?? null,
      client_reference_id: str(params.client_reference_id) ?? null,
      created: now,
      currency: price.currency,
      customer,
      customer_email: str(params.customer_email) ?? (customer ? (state.customers.get(customer)?.email ?? null) : null),
      expires_at: now + 24 * 3600,
      invoice: null,
      livemode: false,
      metadata: metadataOf(params.metadata),
      mode: "subscription",
      payment_status: "unpaid",
      status: "open",
      subscription: null,
      success_url: successUrl,
      url: `${baseUrl}/pay/${id}`,
      line_items: listOf([{ price: price.id, quantity }], `/v1/checkout/sessions/${id}/line_items`),
      subscription_metadata: metadataOf(subscriptionData?.metadata),
    };
    state.sessions.set(id, session);
    return session;
  }

  function updateSubscription(subscription: FakeSubscription, params: Params, now: number): FakeSubscription {
    if (subscription.status === "canceled") {
      throw new FakeStripeError(
        400,
        "invalid_request_error",
        "A canceled subscription can only update its cancellation_details and metadata.",
        undefined,
        "id",
      );
    }
    const previous: Record<string, unknown> = {};
    const items = arrayOf(params.items) as Params[];
    if (items.length > 0) {
      const item = subscription.items.data[0];
      const itemId = str(items[0].id);
      if (itemId && itemId !== item.id) throw missing("subscription_item", itemId, "items[0][id]");
      const priceId = str(items[0].price);
      if (priceId && priceId !== item.price.id) {
        const price = state.price(priceId, "items[0][price]");
        previous.items = { data: [{ ...item, price: item.price }] };
        item.price = price;
      }
      if (items[0].quantity !== undefined) item.quantity = Number(items[0].quantity);
    }
    const cancelAtPeriodEnd = bool(params.cancel_at_period_end);
    if (cancelAtPeriodEnd !== undefined && cancelAtPeriodEnd !== subscription.cancel_at_period_end) {
      previous.cancel_at_period_end = subscription.cancel_at_period_end;
      previous.cancel_at = subscription.cancel_at;
      previous.canceled_at = subscription.canceled_at;
      subscription.cancel_at_period_end = cancelAtPeriodEnd;
      subscription.cancel_at = cancelAtPeriodEnd ? subscription.items.data[0].current_period_end : null;
      subscription.canceled_at = cancelAtPeriodEnd ? now : null;
    }
    if (params.metadata !== undefined) {
      previous.metadata = subscription.metadata;
      subscription.metadata = { ...subscription.metadata, ...metadataOf(params.metadata) };
    }
    if (Object.keys(previous).length > 0) state.emit("customer.subscription.updated", subscription, previous);
    return subscription;
  }

  async function handle(request: IncomingMessage, response: ServerResponse): Promise<void> {
    const url = new URL(request.url ?? "/", baseUrl);
    const method = request.method ?? "GET";
    const raw = await readBody(request);

    const send = (status: number, body: unknown, headers: Record<string, string> = {}) => {
      response.writeHead(status, { "content-type": "application/json", "request-id": newId("req"), ...headers });
      response.end(typeof body === "string" ? body : JSON.stringify(body));
    };
    const html = (status: number, body: string) => {
      response.writeHead(status, { "content-type": "text/html; charset=utf-8" });
      response.end(body);
    };

    if (url.pathname.startsWith("/v1/")) {
      const authorization = request.headers.authorization ?? "";
      if (!/^Bearer \S+/.test(authorization)) {
        const body: FakeErrorBody = {
          error: { type: "invalid_request_error", message: "You did not provide an API key. Send it as a Bearer token." },
        };
        send(401, body);
        return;
      }
      const idempotencyKey = method === "POST" ? request.headers["idempotency-key"] : undefined;
      const replayKey = typeof idempotencyKey === "string" ? `${url.pathname} ${idempotencyKey}` : undefined;
      const replay = replayKey ? state.idempotent.get(replayKey) : undefined;
      if (replay) {
        send(replay.status, replay.body, { "idempotent-replayed": "true" });
        return;
      }
      const params = method === "GET" || method === "DELETE" ? (qs.parse(url.search.slice(1), { arrayLimit: 1000 }) as Params) : parseBody(raw, request.headers["content-type"]);
      let status = 200;
      let body: string;
      try {
        body = JSON.stringify(api(method, url.pathname, params));
      } catch (error) {
        if (!(error instanceof FakeStripeError)) throw error;
        status = error.status;
        const errorBody: FakeErrorBody = { error: { type: error.type, message: error.message } };
        if (error.code) errorBody.error.code = error.code;
        if (error.param) errorBody.error.param = error.param;
        body = JSON.stringify(errorBody);
      }
      // Stripe stores the first result for a key, errors included, and replays it for retries.
      if (replayKey && status < 500) state.idempotent.set(replayKey, { status, body });
      send(status, body);
      return;
    }

    const [, first, second] = url.pathname.split("/");
    if (first === "pay" && second) {
      const session = state.sessions.get(second);
      if (!session) return html(404, notFoundPage("This checkout session does not exist or has been reset."));
      const price = state.price(session.line_items.data[0].price);
      const product = state.products.get(price.product as string);
      if (method === "GET") return html(200, checkoutPage({ session, price, product }));
      if (method === "POST") {
        if (session.status !== "open") return html(409, checkoutPage({ session, price, product }));
        const form = parseBody(raw, request.headers["content-type"]);
        const typed = str(form.card_number) ?? "";
        const digits = typed.replace(/\D/g, "");
        if (digits === TEST_CARDS.declined.replace(/\D/g, "")) {
          return html(402, checkoutPage({ session, price, product, cardNumber: typed, error: "Your card was declined. No payment was taken." }));
        }
        if (digits !== TEST_CARDS.succeeds.replace(/\D/g, "")) {
          return html(
            400,
            checkoutPage({
              session,
              price,
              product,
              cardNumber: typed,
              error: `Card number not recognised. Use the test card ${TEST_CARDS.succeeds} (accepted) or ${TEST_CARDS.declined} (declined).`,
            }),
          );
        }
        if (!session.customer) {
          const customer: FakeCustomer = {
            id: newId("cus"),
            object: "customer",
            created: state.now(),
            email: session.customer_email,
            livemode: false,
            metadata: {},
            name: str(form.cardholder) || null,
          };
          state.customers.set(customer.id, customer);
          session.customer = customer.id;
        }
        state.completeCheckout(session);
        // The app hears about the subscription before the customer lands on its success page.
        await settle();
        response.writeHead(303, { location: (session.success_url ?? "/").replace("{CHECKOUT_SESSION_ID}", session.id) });
        response.end();
        return;
      }
    }

    if (first === "invoice" && second && method === "GET") {
      const invoice: FakeInvoice | undefined = state.invoices.get(second);
      return invoice ? html(200, invoicePage(invoice)) : html(404, notFoundPage("No such invoice."));
    }

    if (first === "_test") {
      if (second === "reset" && method === "POST") {
        await settle();
        state.reset();
        deliveries.length = 0;
        return send(200, { ok: true });
      }
      if (second === "advance-clock" && method === "POST") {
        const params = parseBody(raw, request.headers["content-type"]);
        const seconds = Number(params.seconds ?? 0) + Number(params.days ?? 0) * 86_400;
        if (!Number.isFinite(seconds) || seconds < 0) {
          return send(400, { error: { type: "invalid_request_error", message: "days/seconds must be a number ≥ 0", param: "days" } });
        }
        state.advanceClock(seconds, bool(params.failPayment) ?? false);
        await settle();
        return send(200, { now: state.now() });
      }
      if (second === "events" && method === "GET") return send(200, { events: state.events, deliveries });
      if (second === "health") return send(200, { ok: true, now: state.now() });
    }

    send(404, { error: { type: "invalid_request_error", message: `Unrecognized request URL (${method}: ${url.pathname}).` } });
  }

  const server = createServer((request, response) => {
    handle(request, response)
      .then(() => {
        if (request.method !== "GET") persist();
      })
      .catch((error: unknown) => {
        console.error("fake stripe: request failed", error);
        if (!response.headersSent) response.writeHead(500, { "content-type": "application/json" });
        response.end(JSON.stringify({ error: { type: "api_error", message: "The fake Stripe server failed; see its log." } }));
      });
  });
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(options.port ?? 0, "127.0.0.1", () => resolve());
  });
  const port = (server.address() as AddressInfo).port;
  baseUrl = `http://127.0.0.1:${port}`;
  (state as { baseUrl: string }).baseUrl = baseUrl;

  return {
    url: baseUrl,
    port,
    state,
    settle,
    close: async () => {
      await settle();
      await new Promise<void>((resolve, reject) => {
        server.close((error) => (error ? reject(error) : resolve()));
        server.closeAllConnections();
      });
    },
  };
}

function argument(name: string): string | undefined {
  const index = process.argv.indexOf(`--${name}`);
  return index >= 0 ? process.argv[index + 1] : undefined;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const port = Number(argument("port") ?? process.env.FAKE_STRIPE_PORT ?? 12111);
  const webhookUrl = argument("webhook-url") ?? process.env.FAKE_STRIPE_WEBHOOK_URL;
  const webhookSecret = argument("webhook-secret") ?? process.env.STRIPE_WEBHOOK_SECRET;
  const stateFile = argument("state-file");
  if (webhookUrl && !webhookSecret) {
    console.error("fake stripe: --webhook-url needs --webhook-secret (or STRIPE_WEBHOOK_SECRET) to sign events");
    process.exit(2);
  }
  const fake = await startFakeStripe({ port, webhookUrl, webhookSecret, stateFile });
  console.log(`Fake Stripe listening on ${fake.url}${webhookUrl ? `, delivering events to ${webhookUrl}` : " (events recorded, not delivered)"}`);
  const stop = () => {
    fake.close().finally(() => process.exit(0));
  };
  process.on("SIGINT", stop);
  process.on("SIGTERM", stop);
}
