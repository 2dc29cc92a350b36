/**
 * `npx tsx tests/bench/workspace.ts`: the workspace's targets on the demo region, measured against
 * the production build started as `npm start` does (needs `npx react-router build` first):
 *  1. the workspace page server-rendered (target under 300 ms), median and p95 of 20 requests;
 *  2. a what-if re-solve in the browser's Web Worker (target under 100 ms), from the page's own
 *     status line, and the same engine call in Node for comparison;
 *  3. POST /api/v1/solve with the demo scenario from 20 concurrent clients for 30 s (target: no
 *     errors), requests/s and p95 latency — for the full solve and for `?periods=0`.
 * BENCH_LOAD_SECONDS changes the 30 s; BENCH_SKIP_LOAD=1 skips part 3.
 */
import { readFileSync } from "node:fs";
import { handleWorkerRequest } from "../../app/engine/worker";
import { DEMO_PEOPLE } from "../../seed/people";
import { launchBrowser, startApp } from "../browser/harness";

const LOAD_SECONDS = Number(process.env.BENCH_LOAD_SECONDS ?? 30);
const CLIENTS = 20;

function quantile(values: number[], q: number): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))];
}

const demo = JSON.parse(readFileSync("seed/demo-scenario.json", "utf8"));
const app = await startApp();
const browser = await launchBrowser();
try {
  const context = await browser.newContext({ viewport: { width: 1400, height: 1000 } });
  const page = await context.newPage();
  const planner = DEMO_PEOPLE.find((person) => person.role === "planner" && person.organisation === "caldervey");
  if (!planner) throw new Error("No demo planner");
  await page.goto(`${app.url}/sign-in`);
  await page.getByRole("button", { name: /sign in/i }).first().click();
  await page.locator("button.person", { hasText: planner.name }).click();
  await page.waitForURL(/\/o\/caldervey\/scenarios$/);
  const cookie = (await context.cookies()).map((entry) => `${entry.name}=${entry.value}`).join("; ");
  const href = (await page.locator('a[href^="/o/caldervey/scenarios/"]', { hasText: "baseline" }).first().getAttribute("href")) as string;

  // 1. Server rendering of the workspace page (after one warm-up request).
  const renderTimes: number[] = [];
  for (let i = 0; i < 21; i++) {
    const started = performance.now();
    const response = await fetch(`${app.url}${href}`, { headers: { Cookie: cookie } });
    const html = await response.text();
    if (response.status !== 200 || !html.includes("Rules compared")) throw new Error(`Workspace answered ${response.status}`);
    if (i > 0) renderTimes.push(performance.now() - started);
  }
  console.log(`workspace SSR (no run yet): median ${quantile(renderTimes, 0.5).toFixed(0)} ms, p95 ${quantile(renderTimes, 0.95).toFixed(0)} ms`);

  // With a stored run the page also carries the result.
  await page.goto(`${app.url}${href}`);
  await page.getByRole("button", { name: "Run all rules" }).click();
  await page.waitForFunction(() => new URL(location.href).searchParams.has("run"), null, { timeout: 300_000 });
  const withRun = page.url();
  renderTimes.length = 0;
  for (let i = 0; i < 21; i++) {
    const started = performance.now();
    const response = await fetch(withRun, { headers: { Cookie: cookie } });
    await response.text();
    if (i > 0) renderTimes.push(performance.now() - started);
  }
  console.log(`workspace SSR (with a run): median ${quantile(renderTimes, 0.5).toFixed(0)} ms, p95 ${quantile(renderTimes, 0.95).toFixed(0)} ms`);

  // 2. What-if re-solves in the browser's worker, as the page reports them.
  await page.waitForSelector('[data-map-loaded="true"]', { timeout: 60_000 });
  const whatIfTimes: number[] = [];
  for (const km of [16, 20, 25, 30, 35, 40, 45, 50, 10, 5]) {
    const before = (await page.getByTestId("what-if-status").getAttribute("data-solved")) ?? "";
    await page.getByLabel("Willingness to travel, km per week").fill(String(km));
    // Each answer carries the worker request's id: wait for a newer one than before the slider moved.
    await page.waitForFunction((previous) => {
      const solved = document.querySelector('[data-testid="what-if-status"]')?.getAttribute("data-solved") ?? "";
      return solved !== "" && solved !== previous;
    }, before, { timeout: 60_000 });
    const status = (await page.getByTestId("what-if-status").textContent()) ?? "";
    whatIfTimes.push(Number(/solved in (\d+) ms/.exec(status)?.[1]));
  }
  console.log(`what-if in the browser worker: median ${quantile(whatIfTimes, 0.5)} ms, max ${Math.max(...whatIfTimes)} ms (${whatIfTimes.join(", ")})`);
  const nodeTimes: number[] = [];
  for (let i = 0; i < 5; i++) {
    const answer = handleWorkerRequest({ id: i, scenario: { ...demo, kmPerWeek: 15 + i }, periods: false, rules: ["choice", "choiceLogit", "optimum", "nearest", "capacityShare"] });
    if (!answer.ok) throw new Error(answer.message);
    nodeTimes.push(answer.elapsedMs);
  }
  console.log(`same what-if engine call in Node: median ${quantile(nodeTimes, 0.5).toFixed(0)} ms`);

  // 3. Load on POST /api/v1/solve.
  if (process.env.BENCH_SKIP_LOAD !== "1") {
    for (const query of ["", "?periods=0"]) {
      const latencies: number[] = [];
      let errors = 0;
      const until = Date.now() + LOAD_SECONDS * 1000;
      const body = JSON.stringify(demo);
      const started = performance.now();
      await Promise.all(
        Array.from({ length: CLIENTS }, async () => {
          while (Date.now() < until) {
            const t = performance.now();
            try {
              const response = await fetch(`${app.url}/api/v1/solve${query}`, { method: "POST", headers: { Cookie: cookie, "Content-Type": "application/json" }, body });
              const result = (await response.json()) as { schema?: string };
              if (response.status !== 200 || result.schema !== "equilibra/result@1") {
                errors++;
                console.log(`error answer ${response.status}: ${JSON.stringify(result).slice(0, 300)}`);
              }
            } catch (error) {
              errors++;
              console.log(`request failed: ${(error as Error).message} ${String((error as Error).cause ?? "")}`);
            }
            latencies.push(performance.now() - t);
          }
        }),
      );
      const seconds = (performance.now() - started) / 1000;
      console.log(
        `POST /api/v1/solve${query} × ${CLIENTS} clients for ${LOAD_SECONDS} s: ${latencies.length} requests in ${seconds.toFixed(1)} s = ` +
          `${(latencies.length / seconds).toFixed(2)} req/s, p50 ${quantile(latencies, 0.5).toFixed(0)} ms, p95 ${quantile(latencies, 0.95).toFixed(0)} ms, errors ${errors}`,
      );
    }
  }
} finally {
  await browser.close();
  await app.stop();
}
