/**
 * Browser journey (issue: scenario workspace, what-ifs): a planner runs the demo scenario, then drags
 * the willingness-to-travel slider quickly through several positions. The engine re-solves in the
 * browser's Web Worker without a round trip; the page must end on the answer for the slider's last
 * position (not an intermediate one), send the worker only the newest position while it is busy,
 * show the what-if in the comparison and on the map, and go back to the stored run on request.
 */
import type { Browser } from "playwright-core";
import { describe, expect, it } from "vitest";
import { handleWorkerRequest } from "../../app/engine/worker";
import { RULE_LABELS, summariseRules, type ResultDocument } from "../../app/models/result-document";
import { applyWhatIf, baselineWhatIf, type ScenarioDoc } from "../../app/models/scenario-document";
import { WHAT_IF_RULES } from "../../app/routes/scenario-workspace/use-engine-worker";
import { signInAs, useRunningApp, type RunningApp } from "./harness";

let app: RunningApp;
let browser: Browser;

useRunningApp((started) => ({ app, browser } = started));

const SLIDER = 'input[aria-label="Willingness to travel, km per week"]';

/** The comparison table's total cost per rule label, as numbers. */
async function totalCosts(page: import("playwright-core").Page): Promise<Record<string, number>> {
  const table = page.getByRole("table", { name: "Rule comparison" });
  const headers = (await table.locator("thead th").allTextContents()).slice(1).map((text) => text.trim());
  const cells = await table.locator("tbody tr").first().locator("td").allTextContents();
  return Object.fromEntries(headers.map((header, column) => [header, Number(cells[column].replace(/,/g, ""))]));
}

/** What the worker answers for the scenario at willingness to travel `kmPerWeek`, summarised as the table shows it. */
function expectedTotalCosts(doc: ScenarioDoc, kmPerWeek: number): Record<string, number> {
  const response = handleWorkerRequest({ id: 1, scenario: applyWhatIf(doc, { ...baselineWhatIf(doc), kmPerWeek }), periods: false, rules: WHAT_IF_RULES });
  if (!response.ok) throw new Error(`The what-if did not solve: ${response.message}`);
  const result = response.result as unknown as ResultDocument;
  const summaries = summariseRules(result, { lines: doc.serviceLines.map((line) => line.id), sources: doc.sources });
  return Object.fromEntries(summaries.map((summary) => [RULE_LABELS[summary.rule] ?? summary.rule, summary.totalCost ?? Number.NaN]));
}

describe("what-ifs in the browser's worker", () => {
  it("follows a quickly dragged slider to its last position, then goes back to the stored run", async () => {
    const context = await browser.newContext({ viewport: { width: 1400, height: 1000 } });
    const page = await context.newPage();
    // Counts the requests the page posts to its workers (the engine's and the map's).
    await page.addInitScript({
      content: `globalThis.__posts = 0;
        const PageWorker = Worker;
        globalThis.Worker = class extends PageWorker {
          postMessage(...args) { if (String(args[0]?.id ?? "") !== "" && "scenario" in (args[0] ?? {})) globalThis.__posts += 1; return super.postMessage(...args); }
        };`,
    });
    await signInAs(page, app, "planner");
    await page.waitForURL(/\/o\/caldervey\/scenarios$/);
    const scenarioPath = (await page.getByRole("link", { name: "Caldervey 2026/27 baseline" }).first().getAttribute("href"))!.match(/^\/o\/caldervey\/scenarios\/\d+/)![0];
    const api = `/api/v1/o/caldervey${scenarioPath.slice("/o/caldervey".length)}`;
    const doc = ((await (await context.request.get(`${app.url}${api}`)).json()) as { scenario: ScenarioDoc }).scenario;

    await page.goto(`${app.url}${scenarioPath}`);
    await page.getByRole("button", { name: "Run all rules" }).click();
    await page.waitForURL((url) => url.searchParams.has("run"), { timeout: 120_000 });
    const runId = Number(new URL(page.url()).searchParams.get("run"));
    await page.getByTestId("run-summary").getByText(`Run ${runId}:`).waitFor({ timeout: 30_000 });
    await page.waitForSelector('[data-testid="region-map"][data-map-loaded="true"]', { timeout: 60_000 });
    await page.getByLabel("Service line").selectOption({ label: "All lines" });
    const runCosts = await totalCosts(page);
    expect(Object.keys(runCosts)).toContain(RULE_LABELS.plan);

    // Drag: ten positions in one go, faster than any solve; the last one is 30 km/week.
    const status = page.getByTestId("what-if-status");
    expect(doc.kmPerWeek).not.toBe(30);
    await page.hover(SLIDER);
    await page.evaluate((selector) => {
      const slider = document.querySelector<HTMLInputElement>(selector)!;
      const setValue = Object.getOwnPropertyDescriptor(HTMLInputElement.prototype, "value")!.set!;
      for (let kmPerWeek = 21; kmPerWeek <= 30; kmPerWeek++) {
        setValue.call(slider, String(kmPerWeek));
        slider.dispatchEvent(new Event("input", { bubbles: true }));
      }
    }, SLIDER);
    await status.getByText(/^What-if solved in \d+ ms/).waitFor({ timeout: 60_000 });
    expect(await page.locator(SLIDER).inputValue()).toBe("30");
    await page.getByTestId("rule-comparison").getByText("the what-if (not saved)").waitFor();
    await page.getByText("showing the what-if, not saved").waitFor();

    // The comparison shows the worker's answer for 30 km/week: equal to the engine's own answer in
    // Node, and told apart from the intermediate 29 km/week (whose totals differ by more than the
    // table's rounding) and from the stored run.
    const shown = await totalCosts(page);
    const at30 = expectedTotalCosts(doc, 30);
    const at29 = expectedTotalCosts(doc, 29);
    expect(Object.keys(shown)).toEqual(Object.keys(at30));
    // The constrained plan (a linear programme, seconds on a region) is left out of what-ifs.
    expect(Object.keys(shown)).not.toContain(RULE_LABELS.plan);
    for (const [rule, cost] of Object.entries(at30)) {
      expect(Math.abs(at29[rule] - cost), `${rule}: 29 and 30 km/week must be told apart`).toBeGreaterThan(0.2);
      // The table rounds total cost to one decimal.
      expect(Math.abs(shown[rule] - cost), rule).toBeLessThanOrEqual(0.051);
    }
    expect(Math.abs(shown[RULE_LABELS.choice] - runCosts[RULE_LABELS.choice])).toBeGreaterThan(0.2);
    // Ten changes while the worker was busy: the worker got the first (or a warm-up) and the newest
    // only, never the eight in between.
    const posts = await page.evaluate(() => (globalThis as unknown as { __posts: number }).__posts);
    expect(posts).toBeGreaterThanOrEqual(1);
    expect(posts).toBeLessThanOrEqual(3);
    // The map is still drawn, with every site's marker.
    expect(await page.locator('[data-testid^="site-marker-"]').count()).toBe(doc.providers.length);

    // Back to the stored run: its figures, with the plan, return.
    await page.getByRole("button", { name: "Back to the stored run" }).click();
    await page.getByTestId("rule-comparison").getByText(`run ${runId} (`, { exact: false }).waitFor();
    expect(await totalCosts(page)).toEqual(runCosts);
    expect(await status.textContent()).toBe("Move a slider to re-solve in your browser.");

    await context.close();
  }, 300_000);
});
