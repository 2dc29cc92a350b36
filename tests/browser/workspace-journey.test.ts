/**
 * Browser journey (issue: scenario workspace): a planner opens the demo region's baseline scenario,
 * imports CSV files of which practices.csv has a broken row, sees that row's error (file, line and
 * field) with nothing stored, fixes the row and imports; runs every rule and reads the comparison;
 * drags a site on the map and runs again; exports CSV. Throughout, the map must have rendered: its
 * load flag set, a WebGL canvas of non-zero size, and one marker per site.
 */
import { readFile } from "node:fs/promises";
import Papa from "papaparse";
import type { Browser, BrowserContext, Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { RULE_LABELS, summariseRules, type ResultDocument } from "../../app/models/result-document";
import type { ScenarioDoc } from "../../app/models/scenario-document";
import { PLANNING_CAUTIONS } from "../../app/engine/cautions";
import { signInAs, useRunningApp, type RunningApp } from "./harness";

let app: RunningApp;
let browser: Browser;

useRunningApp((started) => ({ app, browser } = started));

const ORG = "caldervey";

/** The API as the signed-in browser sees it (the context's cookies go with the request). */
async function apiJson<T>(context: BrowserContext, path: string): Promise<T> {
  const response = await context.request.get(`${app.url}${path}`);
  expect(response.status(), `GET ${path}`).toBe(200);
  return (await response.json()) as T;
}

async function apiText(context: BrowserContext, path: string): Promise<string> {
  const response = await context.request.get(`${app.url}${path}`);
  expect(response.status(), `GET ${path}`).toBe(200);
  return response.text();
}

function csvFile(name: string, text: string) {
  return { name, mimeType: "text/csv", buffer: Buffer.from(text, "utf8") };
}

/** Replaces one cell of a CSV text (data row `row`, 0-based, under column `column`). */
function withCell(text: string, row: number, column: string, value: string): string {
  const parsed = Papa.parse<Record<string, string>>(text, { header: true, skipEmptyLines: "greedy" });
  const rows = parsed.data.map((entry, index) => (index === row ? { ...entry, [column]: value } : entry));
  return `${Papa.unparse({ fields: parsed.meta.fields ?? [], data: rows.map((entry) => (parsed.meta.fields ?? []).map((field) => entry[field])) }, { newline: "\n" })}\n`;
}

async function expectMapRendered(page: Page, siteCount: number) {
  await page.waitForSelector('[data-testid="region-map"][data-map-loaded="true"]', { timeout: 60_000 });
  const canvas = page.locator('[data-testid="region-map"] canvas.maplibregl-canvas');
  expect(await canvas.count()).toBe(1);
  const box = await canvas.boundingBox();
  expect(box).not.toBeNull();
  expect(box!.width).toBeGreaterThan(100);
  expect(box!.height).toBeGreaterThan(100);
  // The canvas really holds a WebGL context (not a 2D fallback or nothing).
  expect(await canvas.evaluate((element) => Boolean((element as HTMLCanvasElement).getContext("webgl2") ?? (element as HTMLCanvasElement).getContext("webgl")))).toBe(true);
  const markers = page.locator('[data-testid^="site-marker-"]');
  expect(await markers.count()).toBe(siteCount);
  for (let index = 0; index < siteCount; index++) expect(await markers.nth(index).isVisible()).toBe(true);
}

interface RunReply {
  run: { id: number; input: ScenarioDoc; result: ResultDocument };
}

/** Clicks "Run all rules" and waits for the page to show the new run; returns its id. */
async function runAllRules(page: Page): Promise<number> {
  const previous = new URL(page.url()).searchParams.get("run");
  await page.getByRole("button", { name: "Run all rules" }).click();
  // The run is solved on the server; the page then navigates to it (?run=<id>).
  await page.waitForURL((url) => url.searchParams.has("run") && url.searchParams.get("run") !== previous, { timeout: 120_000 });
  const id = Number(new URL(page.url()).searchParams.get("run"));
  await page.waitForFunction((runId) => document.querySelector('[data-testid="run-summary"]')?.textContent?.startsWith(`Run ${runId}:`), id, { timeout: 30_000 });
  return id;
}

/** The comparison table as { rule label → { measure → cell text } }. */
async function readComparison(page: Page): Promise<Record<string, Record<string, string>>> {
  const table = page.getByRole("table", { name: "Rule comparison" });
  const headers = (await table.locator("thead th").allTextContents()).slice(1).map((text) => text.trim());
  const rows = await table.locator("tbody tr").evaluateAll((trs) =>
    trs.map((tr) => ({ measure: tr.querySelector("th span")?.textContent?.trim() ?? "", cells: [...tr.querySelectorAll("td")].map((td) => td.textContent?.trim() ?? "") })),
  );
  const byRule: Record<string, Record<string, string>> = {};
  headers.forEach((header, column) => {
    byRule[header] = Object.fromEntries(rows.map((row) => [row.measure, row.cells[column]]));
  });
  return byRule;
}

function numberIn(cell: string): number {
  return Number(cell.replace(/,/g, ""));
}

describe("a planner's day in the scenario workspace", () => {
  it("imports, fixes a row, runs, compares rules, moves a site, re-runs and exports", async () => {
    const context = await browser.newContext({ viewport: { width: 1400, height: 1000 }, acceptDownloads: true });
    const page = await context.newPage();
    await signInAs(page, app, "planner");
    await page.waitForURL(/\/o\/caldervey\/scenarios$/);

    const scenarioLink = page.getByRole("link", { name: "Caldervey 2026/27 baseline" }).first();
    const scenarioPath = (await scenarioLink.getAttribute("href"))!.match(/^\/o\/caldervey\/scenarios\/\d+/)![0];
    const api = `/api/v1/o/${ORG}${scenarioPath.slice(`/o/${ORG}`.length)}`;
    await page.goto(`${app.url}${scenarioPath}`);
    const before = (await apiJson<{ scenario: ScenarioDoc }>(context, api)).scenario;
    await expectMapRendered(page, before.providers.length);

    // --- Import: the scenario's own CSV files, with one practice renamed (so the import shows) and a broken latitude.
    const [practices, sites, capacities] = await Promise.all(
      ["practices.csv", "sites.csv", "capacities.csv"].map((file) => apiText(context, `${api}/export?format=csv&file=${file}`)),
    );
    const renamed = withCell(practices, 0, "name", "Quarnholt Health Centre (imported)");
    const broken = withCell(renamed, 2, "lat", "north of the river");

    await page.getByRole("tab", { name: "Import" }).click();
    await page.getByLabel("Import practices.csv").setInputFiles(csvFile("practices.csv", broken));
    await page.getByLabel("Import sites.csv").setInputFiles(csvFile("sites.csv", sites));
    await page.getByLabel("Import capacities.csv").setInputFiles(csvFile("capacities.csv", capacities));

    const errors = page.getByTestId("import-errors");
    // The preview is recomputed as each file arrives; wait for the one that has all three.
    await errors.getByText(/^1 problem found/).waitFor({ timeout: 15_000 });
    const errorRows = await errors.locator("tbody tr").evaluateAll((trs) => trs.map((tr) => [...tr.querySelectorAll("td")].map((td) => td.textContent?.trim() ?? "")));
    // Data row 2 (0-based) sits on file line 4: the header is line 1.
    expect(errorRows).toHaveLength(1);
    expect(errorRows[0].slice(0, 3)).toEqual(["practices.csv", "4", "lat"]);
    expect(await page.getByRole("button", { name: "Store the import" }).isDisabled()).toBe(true);
    // Nothing was stored by the preview.
    expect((await apiJson<{ scenario: ScenarioDoc }>(context, api)).scenario).toEqual(before);

    // --- Fix the row and store the import.
    await page.getByLabel("Import practices.csv").setInputFiles(csvFile("practices.csv", renamed));
    await page.getByText("No row has an error.").waitFor({ timeout: 15_000 });
    expect(await errors.count()).toBe(0);
    await page.getByRole("button", { name: "Store the import" }).click();
    await page.getByText("Imported. Run the scenario").waitFor({ timeout: 30_000 });
    const imported = (await apiJson<{ scenario: ScenarioDoc }>(context, api)).scenario;
    expect(imported.sources[0].name).toBe("Quarnholt Health Centre (imported)");
    expect(imported.sources[2].lat).toBe(before.sources[2].lat);
    await page.getByRole("tab", { name: "Practices" }).click();
    await page.getByText("Quarnholt Health Centre (imported)").first().waitFor({ timeout: 15_000 });

    // --- Run every rule, and compare them over all service lines.
    const firstRunId = await runAllRules(page);
    await page.getByLabel("Service line").selectOption({ label: "All lines" });
    const firstRun = (await apiJson<RunReply>(context, `/api/v1/o/${ORG}/runs/${firstRunId}`)).run;
    const expected = summariseRules(firstRun.result, { lines: firstRun.input.serviceLines.map((line) => line.id), sources: firstRun.input.sources });
    const comparison = await readComparison(page);
    expect(Object.keys(comparison)).toEqual(expected.map((summary) => RULE_LABELS[summary.rule] ?? summary.rule));
    expect(expected.length).toBeGreaterThanOrEqual(4);
    for (const summary of expected) {
      const column = comparison[RULE_LABELS[summary.rule] ?? summary.rule];
      expect(summary.totalCost).not.toBeNull();
      // The table rounds total cost to one decimal.
      expect(Math.abs(numberIn(column["Total cost"]) - summary.totalCost!)).toBeLessThanOrEqual(0.051);
      // No rule beats the system optimum (Roughgarden & Tardos 2002, "How bad is selfish routing?":
      // the price of anarchy is total cost over the optimum's, so at least 1).
      expect(numberIn(column["Price of anarchy"])).toBeGreaterThanOrEqual(0.9995);
    }
    expect(numberIn(comparison[RULE_LABELS.optimum]["Price of anarchy"])).toBeCloseTo(1, 3);
    // The planning cautions stand beside the results.
    const cautions = page.getByTestId("rule-comparison").getByRole("complementary", { name: "Planning cautions" });
    expect(await cautions.isVisible()).toBe(true);
    expect(await cautions.locator("li").allTextContents()).toEqual([...PLANNING_CAUTIONS]);
    await expectMapRendered(page, imported.providers.length);

    // --- Drag the teaching hospital's marker on the map; the move is saved through the API.
    const siteId = "ZZS1";
    const marker = page.getByTestId(`site-marker-${siteId}`);
    const box = (await marker.boundingBox())!;
    // Fetchers post to the resource route's `.data` address (React Router's single fetch).
    const saved = page.waitForResponse((response) => response.request().method() === "PUT" && new URL(response.url()).pathname.replace(/\.data$/, "") === api, { timeout: 30_000 });
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 3);
    await page.mouse.down();
    // Up and to the right, towards the north of the region, in small steps as a hand would.
    await page.mouse.move(box.x + box.width / 2 + 90, box.y + box.height / 3 - 140, { steps: 15 });
    await page.mouse.up();
    expect((await saved).status()).toBe(200);
    const moved = (await apiJson<{ scenario: ScenarioDoc }>(context, api)).scenario;
    const movedSite = moved.providers.find((provider) => provider.id === siteId)!;
    const oldSite = imported.providers.find((provider) => provider.id === siteId)!;
    // North-east on screen is north-east on the map: latitude and longitude both grow.
    expect(movedSite.lat).toBeGreaterThan(oldSite.lat + 0.01);
    expect(movedSite.lon).toBeGreaterThan(oldSite.lon + 0.005);
    // Only that site moved.
    expect(moved.providers.filter((provider) => provider.id !== siteId)).toEqual(imported.providers.filter((provider) => provider.id !== siteId));

    // --- Re-run: the new run solved the moved site, and travel changed.
    const secondRunId = await runAllRules(page);
    expect(secondRunId).toBeGreaterThan(firstRunId);
    const secondRun = (await apiJson<RunReply>(context, `/api/v1/o/${ORG}/runs/${secondRunId}`)).run;
    expect(secondRun.input.providers.find((provider) => provider.id === siteId)).toMatchObject({ lat: movedSite.lat, lon: movedSite.lon });
    const nearestBefore = firstRun.result.lines.ortho.rules.nearest!;
    const nearestAfter = secondRun.result.lines.ortho.rules.nearest!;
    expect(nearestAfter.meanKm).not.toBeCloseTo(nearestBefore.meanKm!, 3);
    await expectMapRendered(page, moved.providers.length);

    // --- Export: the results by site, and the inputs' sites.csv carrying the moved site.
    const resultsDownload = page.waitForEvent("download", { timeout: 30_000 });
    await page.getByRole("link", { name: "Results by site (CSV)" }).click();
    const results = await resultsDownload;
    expect(results.suggestedFilename()).toBe(`run-${secondRunId}-results-sites.csv`);
    const resultsText = await readFile((await results.path())!, "utf8");
    const resultLines = resultsText.split("\n");
    // The planning cautions head the file as # lines, then the header row.
    expect(resultLines[0]).toMatch(/^# Equilibra results: /);
    const header = resultLines.find((line) => !line.startsWith("#"));
    expect(header).toBe("line,rule,site,inflow (referrals/week),utilisation (share),mean wait (weeks),share within standard,warning");
    const resultRows = Papa.parse<Record<string, string>>(resultLines.filter((line) => !line.startsWith("#")).join("\n"), { header: true, skipEmptyLines: "greedy" }).data;
    const exportedInflow = Number(resultRows.find((row) => row.line === "ortho" && row.rule === "nearest" && row.site === siteId)?.["inflow (referrals/week)"]);
    expect(exportedInflow).toBeCloseTo(nearestAfter.providers.find((provider) => provider.id === siteId)!.inflow, 6);

    await page.locator("summary", { hasText: "Export inputs" }).click();
    const sitesDownload = page.waitForEvent("download", { timeout: 30_000 });
    await page.getByRole("link", { name: "sites.csv" }).click();
    const sitesText = await readFile((await (await sitesDownload).path())!, "utf8");
    const sitesRows = Papa.parse<Record<string, string>>(sitesText, { header: true, skipEmptyLines: "greedy" });
    expect(sitesRows.meta.fields?.slice(0, 5)).toEqual(["id", "name", "lat", "lon", "sector"]);
    const exportedSite = sitesRows.data.find((row) => row.id === siteId)!;
    expect(Number(exportedSite.lat)).toBe(movedSite.lat);
    expect(Number(exportedSite.lon)).toBe(movedSite.lon);

    await context.close();
  }, 300_000);
});
