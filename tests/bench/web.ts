/**
 * `npm run bench:web`: the web targets of the scenario workspace, measured against the production
 * build started as in the browser tests (`tests/browser/harness.ts`: its own data directory, local
 * fakes, loopback ports only).
 *
 *  (a) the workspace page of the demo scenario, server-rendered for a signed-in planner, without a
 *      run and with one run shown (target: under 300 ms);
 *  (b) `POST /api/v1/solve` with the demo scenario (`seed/demo-scenario.json`) from 20 concurrent
 *      clients for 30 s, authenticated by a personal API token created through the app's own page
 *      after subscribing the demo body to a plan with API access on the fake Stripe (or, should
 *      that fail, by the planner's session) (target: no errors; requests/s and p95 reported), and
 *      the workspace page fetched one request at a time while that load runs (solves run on worker
 *      threads, so the page should stay near its idle figure in (a));
 *  (c) a what-if re-solve in the browser's Web Worker: from a slider change to the page showing the
 *      new result — the comparison and map rendered and the next frame drawn (target: under 100 ms);
 *      the worker round trip the page measures itself, the first what-if after the page loaded, and
 *      the worker's solve alone in Node as a cross-check.
 *
 * Baselines measured in the same run on the same server: a static asset and the sign-in page
 * (latency floor of the HTTP stack and of a small server render), and one solve at a time.
 *
 * Every loop is bounded in count and time. Environment: BENCH_WEB_SECONDS (default 30),
 * BENCH_WEB_CLIENTS (default 20), BENCH_WEB_SAMPLES (default 30), BENCH_WEB_FULL=1 to load-test the
 * full solve (all periods) as well — at several seconds per solve that phase takes minutes.
 */
import { existsSync, readdirSync, readFileSync } from "node:fs";
import os from "node:os";
import type { Page } from "playwright-core";
import { DEMO_PEOPLE } from "../../seed/people";
import { TEST_CARDS } from "../../app/fakes/stripe/pages";
import { PAID_PLANS } from "../../app/services/plans";
import { handleWorkerRequest } from "../../app/engine/worker";
import { WHAT_IF_RULES } from "../../app/routes/scenario-workspace/use-engine-worker";
import { launchBrowser, startApp, type RunningApp } from "../browser/harness";

const SECONDS = Number(process.env.BENCH_WEB_SECONDS ?? 30);
const CLIENTS = Number(process.env.BENCH_WEB_CLIENTS ?? 20);
const SAMPLES = Number(process.env.BENCH_WEB_SAMPLES ?? 30);
const FULL = process.env.BENCH_WEB_FULL === "1";
/** No single request may hang the bench: each is aborted after this long. */
const REQUEST_TIMEOUT_MS = 120_000;

interface Row {
  measure: string;
  n: number;
  p50: number | null;
  p95: number | null;
  extra: string;
  target: string;
}

const rows: Row[] = [];

function quantile(sorted: number[], q: number): number | null {
  if (sorted.length === 0) return null;
  // Nearest-rank: the smallest value with at least q of the sample at or below it.
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil(q * sorted.length) - 1))];
}

function record(measure: string, samples: number[], extra = "", target = "") {
  const sorted = [...samples].sort((a, b) => a - b);
  rows.push({ measure, n: samples.length, p50: quantile(sorted, 0.5), p95: quantile(sorted, 0.95), extra, target });
}

/** Targets are read on the median: the p95 is printed beside it. */
function verdict(value: number | null, limit: number): string {
  return value === null ? "no data" : value < limit ? `median < ${limit} ms: met` : `median < ${limit} ms: NOT met`;
}

/** Times `count` sequential GETs (after `warmup` untimed ones); every answer must have `status`. */
async function timeGets(url: string, headers: Record<string, string>, count: number, status = 200, warmup = 3): Promise<number[]> {
  const times: number[] = [];
  for (let i = 0; i < warmup + count; i++) {
    const started = performance.now();
    const response = await fetch(url, { headers, redirect: "manual", signal: AbortSignal.timeout(REQUEST_TIMEOUT_MS) });
    await response.arrayBuffer();
    const elapsed = performance.now() - started;
    if (response.status !== status) throw new Error(`GET ${url} answered ${response.status}, expected ${status}`);
    if (i >= warmup) times.push(elapsed);
  }
  return times;
}

/** Times sequential GETs of `url` (each must answer 200) until `running` settles; at most 10 000. */
async function timeGetsUntil(url: string, headers: Record<string, string>, running: Promise<unknown>): Promise<number[]> {
  let settled = false;
  void running.finally(() => (settled = true));
  const times: number[] = [];
  while (!settled && times.length < 10_000) {
    const started = performance.now();
    const response = await fetch(url, { headers, redirect: "manual", signal: AbortSignal.timeout(REQUEST_TIMEOUT_MS) });
    await response.arrayBuffer();
    if (response.status !== 200) throw new Error(`GET ${url} answered ${response.status} under load, expected 200`);
    times.push(performance.now() - started);
  }
  return times;
}

async function signIn(page: Page, app: RunningApp, role: "planner" | "administrator"): Promise<void> {
  const person = DEMO_PEOPLE.find((candidate) => candidate.role === role && candidate.organisation === "caldervey");
  if (!person) throw new Error(`No demo ${role} of caldervey`);
  await page.goto(`${app.url}/sign-in`);
  await page.getByRole("button", { name: /sign in/i }).first().click();
  await page.locator("button.person", { hasText: person.name }).click();
  await page.waitForURL((url) => url.origin === app.url && !url.pathname.startsWith("/auth/"));
}

/**
 * API tokens need a plan with API access: an administrator subscribes the demo body to the first
 * such plan with the fake Stripe's test card (as in tests/browser/billing-journey.test.ts), then
 * creates a personal token on the tokens page, the way a person does. Returns null, saying why,
 * when any step fails; the bench then authenticates by session instead.
 */
async function createToken(page: Page, app: RunningApp): Promise<string | null> {
  try {
    const plan = PAID_PLANS.find((candidate) => candidate.limits.api);
    if (!plan) throw new Error("no plan includes API access");
    await page.goto(`${app.url}/o/caldervey/billing`);
    await page.getByRole("button", { name: `Subscribe to ${plan.name}` }).click();
    await page.waitForURL((url) => url.origin !== app.url, { timeout: 30_000 });
    await page.locator("#card-number").fill(TEST_CARDS.succeeds);
    await page.getByRole("button", { name: "Pay and subscribe" }).click();
    await page.waitForURL((url) => url.origin === app.url, { timeout: 30_000 });
    // The webhook arrives asynchronously: reload the billing page (at most 40 times, 0.5 s apart).
    for (let attempt = 0; ; attempt++) {
      await page.goto(`${app.url}/o/caldervey/billing`);
      if ((await page.getByTestId("plan-status").textContent()) === "Active") break;
      if (attempt >= 40) throw new Error("the subscription never showed as active");
      await page.waitForTimeout(500);
    }
    await page.goto(`${app.url}/o/caldervey/settings/tokens`);
    await page.locator('input[name="name"]').fill("web benchmark");
    await page.getByRole("button", { name: "Create token" }).click();
    const token = (await page.getByTestId("new-token").textContent({ timeout: 30_000 }))?.trim();
    if (!token) throw new Error("the tokens page showed no new token");
    return token;
  } catch (error) {
    console.log(`No API token (${error instanceof Error ? error.message.split("\n")[0] : String(error)}): the API is called with the planner's session instead.`);
    return null;
  }
}

interface LoadResult {
  latencies: number[];
  solveMs: number[];
  errors: number;
  errorSamples: string[];
  elapsedS: number;
}

/**
 * `clients` loops each sending one request at a time until `seconds` have passed (no new request
 * starts after that; those in flight finish or hit the per-request timeout).
 */
async function load(url: string, init: () => RequestInit, clients: number, seconds: number): Promise<LoadResult> {
  const result: LoadResult = { latencies: [], solveMs: [], errors: 0, errorSamples: [], elapsedS: 0 };
  const started = performance.now();
  const stopAt = started + seconds * 1000;
  const maxPerClient = 100_000;
  const client = async () => {
    for (let sent = 0; sent < maxPerClient && performance.now() < stopAt; sent++) {
      const begun = performance.now();
      try {
        const response = await fetch(url, { ...init(), signal: AbortSignal.timeout(REQUEST_TIMEOUT_MS) });
        const body = await response.text();
        const latency = performance.now() - begun;
        if (response.status === 200 && body.includes('"schema"')) {
          result.latencies.push(latency);
          const solve = Number(response.headers.get("x-solve-milliseconds"));
          if (Number.isFinite(solve)) result.solveMs.push(solve);
        } else {
          result.errors++;
          if (result.errorSamples.length < 3) result.errorSamples.push(`${response.status}: ${body.slice(0, 200)}`);
        }
      } catch (error) {
        result.errors++;
        if (result.errorSamples.length < 3) result.errorSamples.push(String(error));
      }
    }
  };
  await Promise.all(Array.from({ length: clients }, client));
  result.elapsedS = (performance.now() - started) / 1000;
  return result;
}

function recordLoad(label: string, outcome: LoadResult) {
  const rate = outcome.latencies.length / outcome.elapsedS;
  record(
    label,
    outcome.latencies,
    `${rate.toFixed(2)} req/s over ${outcome.elapsedS.toFixed(1)} s; ${outcome.errors} errors; solve itself p50 ${quantile([...outcome.solveMs].sort((a, b) => a - b), 0.5)?.toFixed(0) ?? "–"} ms`,
    outcome.errors === 0 ? "no errors: met" : "no errors: NOT met",
  );
  for (const sample of outcome.errorSamples) console.log(`  error sample (${label}): ${sample}`);
}

/**
 * Moves the willingness-to-travel slider the way a hand does (an input event React hears) and
 * waits for the status to report the new result, then for the next frame to be drawn. The page
 * renders the status, the comparison and the map's data from the answer in one commit, so the
 * status changing means the result is in the page. Returns the wall time from the change to that
 * frame, and the worker round trip the page itself measured.
 */
async function whatIfOnce(page: Page, value: number): Promise<{ wallMs: number; workerMs: number; settledMs: number }> {
  return page.evaluate(async (kmPerWeek) => {
    const slider = document.querySelector<HTMLInputElement>('input[aria-label="Willingness to travel, km per week"]');
    const status = document.querySelector('[data-testid="what-if-status"]');
    if (!slider || !status) throw new Error("The what-if slider or its status is missing");
    const setValue = Object.getOwnPropertyDescriptor(HTMLInputElement.prototype, "value")!.set!;
    const started = performance.now();
    // Each answer carries the worker request's id (data-solved): wait for a newer one than now.
    const before = status.getAttribute("data-solved") ?? "";
    const done = new Promise<{ wallMs: number; workerMs: number; settledMs: number }>((resolve, reject) => {
      const timer = setTimeout(() => {
        observer.disconnect();
        reject(new Error(`No what-if result within 30 s (status: ${status.textContent})`));
      }, 30_000);
      const check = () => {
        const solved = status.getAttribute("data-solved") ?? "";
        const match = /What-if solved in (\d+) ms/.exec(status.textContent ?? "");
        if (solved === "" || solved === before || !match) return;
        observer.disconnect();
        clearTimeout(timer);
        // A task queued from the next animation frame runs after that frame's layout and paint. The
        // charts and the map follow in a deferred render: the first idle moment after that frame
        // is when everything the answer changed has been drawn.
        requestAnimationFrame(() =>
          setTimeout(() => {
            const wallMs = performance.now() - started;
            requestIdleCallback(() => resolve({ wallMs, workerMs: Number(match[1]), settledMs: performance.now() - started }), { timeout: 5_000 });
          }, 0),
        );
      };
      const observer = new MutationObserver(check);
      observer.observe(status, { attributes: true, childList: true, subtree: true, characterData: true });
    });
    setValue.call(slider, String(kmPerWeek));
    slider.dispatchEvent(new Event("input", { bubbles: true }));
    return done;
  }, value);
}

async function main() {
  if (!existsSync("build/server/index.js")) {
    console.error("No production build: run `npx react-router build` first.");
    process.exit(1);
  }
  const demo = readFileSync("seed/demo-scenario.json", "utf8");
  const demoName = (JSON.parse(demo) as { name: string }).name;
  const asset = readdirSync("build/client/assets").find((name) => name.endsWith(".css"));
  if (!asset) throw new Error("No CSS asset in build/client/assets");

  console.log(`# Web benchmark — ${new Date().toISOString()}, Node ${process.version}, ${os.cpus().length} CPUs (${os.cpus()[0]?.model ?? "?"}), load average ${os.loadavg().map((value) => value.toFixed(2)).join(" ")}, SOLVE_WORKERS=${process.env.SOLVE_WORKERS ?? "(default)"}`);
  const app = await startApp();
  const browser = await launchBrowser();
  try {
    const adminContext = await browser.newContext();
    const adminPage = await adminContext.newPage();
    await signIn(adminPage, app, "administrator");
    const token = await createToken(adminPage, app);
    await adminContext.close();

    const context = await browser.newContext({ viewport: { width: 1400, height: 1000 } });
    const page = await context.newPage();
    await signIn(page, app, "planner");
    const cookie = (await context.cookies(app.url)).map((entry) => `${entry.name}=${entry.value}`).join("; ");
    const bearer: Record<string, string> = token ? { Authorization: `Bearer ${token}` } : { Cookie: cookie };
    const via = token ? "API token" : "session cookie";

    const listed = await fetch(`${app.url}/api/v1/o/caldervey/scenarios`, { headers: bearer });
    if (listed.status !== 200) throw new Error(`Listing the scenarios by ${via} answered ${listed.status}: ${await listed.text()}`);
    const listing = (await listed.json()) as { scenarios: Array<{ id: number; name: string }> };
    const scenario = listing.scenarios.find((entry) => entry.name === demoName);
    if (!scenario) throw new Error(`The demo scenario "${demoName}" is not in the organisation`);
    const workspace = `${app.url}/o/caldervey/scenarios/${scenario.id}`;

    // Baselines: the HTTP stack alone, and a small server render.
    record("baseline: static asset GET", await timeGets(`${app.url}/assets/${asset}`, {}, SAMPLES));
    record("baseline: /sign-in GET (SSR, signed out)", await timeGets(`${app.url}/sign-in`, {}, SAMPLES));

    // (a) The workspace page, server-rendered for a signed-in planner.
    const noRun = await timeGets(workspace, { Cookie: cookie }, SAMPLES);
    record("(a) workspace SSR, demo, no run yet", noRun, "", verdict(quantile([...noRun].sort((a, b) => a - b), 0.5), 300));
    const created = await fetch(`${app.url}/api/v1/o/caldervey/scenarios/${scenario.id}/runs`, {
      method: "POST",
      headers: { ...bearer, "Content-Type": "application/json" },
      body: JSON.stringify({ label: "benchmark", periods: false }),
      signal: AbortSignal.timeout(REQUEST_TIMEOUT_MS),
    });
    if (created.status !== 201) throw new Error(`Creating a run answered ${created.status}: ${await created.text()}`);
    const withRun = await timeGets(workspace, { Cookie: cookie }, SAMPLES);
    record("(a) workspace SSR, demo, latest run shown", withRun, "", verdict(quantile([...withRun].sort((a, b) => a - b), 0.5), 300));

    // (b) POST /api/v1/solve: one at a time first (the baseline), then under load.
    const solveInit = (): RequestInit => ({ method: "POST", headers: { ...bearer, "Content-Type": "application/json" }, body: demo });
    const stationary = `${app.url}/api/v1/solve?periods=0`;
    const single = await load(stationary, solveInit, 1, Math.min(10, SECONDS));
    recordLoad(`baseline: solve, 1 client, stationary (periods=0), ${via}`, single);
    // The workspace page is fetched one request at a time for as long as the load runs: solves
    // must not stall the other pages (compare with the (a) row measured above on an idle server).
    const loading = load(stationary, solveInit, CLIENTS, SECONDS);
    const pageDuringLoad = await timeGetsUntil(workspace, { Cookie: cookie }, loading);
    const loaded = await loading;
    recordLoad(`(b) solve, ${CLIENTS} clients × ${SECONDS} s, stationary (periods=0), ${via}`, loaded);
    record(
      `(b) workspace SSR while the ${CLIENTS} clients solve`,
      pageDuringLoad,
      "latest run shown; baseline: the (a) row above",
      verdict(quantile([...pageDuringLoad].sort((a, b) => a - b), 0.5), 300),
    );
    const fullSingle = await load(`${app.url}/api/v1/solve`, solveInit, 1, 1);
    recordLoad("(b) solve, 1 request, as sent (all 12 periods)", fullSingle);
    if (FULL) recordLoad(`(b) solve, ${CLIENTS} clients × ${SECONDS} s, all periods`, await load(`${app.url}/api/v1/solve`, solveInit, CLIENTS, SECONDS));

    // (c) What-if in the browser's worker. tsx names the arrow functions it compiles with a
    // `__name` helper that does not exist in the page, so the page gets a harmless one.
    await page.addInitScript({ content: "globalThis.__name = (target) => target;" });
    await page.goto(workspace);
    await page.waitForSelector('[data-testid="region-map"][data-map-loaded="true"]', { timeout: 60_000 });
    await page.getByTestId("what-if-panel").scrollIntoViewIfNeeded();
    const wall: number[] = [];
    const worker: number[] = [];
    const settled: number[] = [];
    const values = [16, 14];
    // A hand reaches the slider before dragging it; the panel warms the engine up on that.
    await page.hover('input[aria-label="Willingness to travel, km per week"]');
    await page.waitForTimeout(300);
    const first = await whatIfOnce(page, 20);
    record("(c) what-if: first after the page loaded", [first.wallMs], `pointer on the slider 300 ms before; worker round trip ${first.workerMs} ms`, "");
    for (let i = 0; i < Math.min(SAMPLES, 20); i++) {
      const outcome = await whatIfOnce(page, values[i % 2]);
      wall.push(outcome.wallMs);
      worker.push(outcome.workerMs);
      settled.push(outcome.settledMs);
    }
    record("(c) what-if: worker round trip (page's own figure)", worker, "5 rules, stationary", "");
    record("(c) what-if: slider change → result shown (next frame)", wall, "status and comparison tables drawn", verdict(quantile([...wall].sort((a, b) => a - b), 0.5), 100));
    record("(c) what-if: slider change → charts and map drawn too", settled, "first idle moment after the deferred render", "");

    const parsed = JSON.parse(demo) as unknown;
    const nodeTimes: number[] = [];
    handleWorkerRequest({ id: 0, scenario: parsed, periods: false, rules: WHAT_IF_RULES });
    for (let i = 0; i < Math.min(SAMPLES, 20); i++) {
      const response = handleWorkerRequest({ id: i, scenario: parsed, periods: false, rules: WHAT_IF_RULES });
      if (!response.ok) throw new Error(`The worker's solve failed: ${response.message}`);
      nodeTimes.push(response.elapsedMs);
    }
    record("(c) cross-check: worker's solve in Node (this process)", nodeTimes, "same request as the page sends", "");
    await context.close();
  } finally {
    await browser.close();
    await app.stop();
  }

  const fmt = (value: number | null) => (value === null ? "–" : value.toFixed(1));
  const widths = [Math.max(...rows.map((row) => row.measure.length)), 4, 9, 9, Math.max(6, ...rows.map((row) => row.target.length))];
  console.log(`\n${"measure".padEnd(widths[0])} | ${"n".padStart(widths[1])} | ${"p50 ms".padStart(widths[2])} | ${"p95 ms".padStart(widths[3])} | ${"target".padEnd(widths[4])} | notes`);
  console.log(`${"-".repeat(widths[0])}-|-${"-".repeat(widths[1])}-|-${"-".repeat(widths[2])}-|-${"-".repeat(widths[3])}-|-${"-".repeat(widths[4])}-|------`);
  for (const row of rows) {
    console.log(`${row.measure.padEnd(widths[0])} | ${String(row.n).padStart(widths[1])} | ${fmt(row.p50).padStart(widths[2])} | ${fmt(row.p95).padStart(widths[3])} | ${(row.target || "–").padEnd(widths[4])} | ${row.extra}`);
  }
  console.log(`\nLoad average after the run: ${os.loadavg().map((value) => value.toFixed(2)).join(" ")} (other work on the machine slows every figure).`);
}

await main();
