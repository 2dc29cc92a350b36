/**
 * Browser journeys in headless Chromium, one per role, on the demo region:
 *  - a planner runs the baseline scenario, publishes the run, writes the recommendation, and prints
 *    the decision brief to PDF — the PDF's text (pdftotext, Debian's poppler-utils) must carry every
 *    section, the recommendation, the data date and the cautions, and none of the app's controls;
 *    then asks the capacity advisor where one extra team helps most;
 *  - a provider manager sees the site inflow outlook of their own site only (another site's address
 *    answers 404) and its period chart;
 *  - a patient-access officer sees the balking map, the decile table and the sensitivity curves.
 */
import { execFileSync } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { Browser, Page } from "playwright-core";
import type { Role } from "../../app/db/schema";
import { afterAll, describe, expect, it } from "vitest";
import { PLANNING_CAUTIONS } from "../../app/components/planning-cautions";
import { signInAs as signInWith, useRunningApp, type RunningApp } from "../browser/harness";

let app: RunningApp;
let browser: Browser;
let runId: number;
const ORG = "caldervey";
const scratch = mkdtempSync(path.join(os.tmpdir(), "equilibra-brief-"));

useRunningApp((started) => ({ app, browser } = started));

afterAll(() => {
  rmSync(scratch, { recursive: true, force: true });
});

const signInAs = (page: Page, role: Role) => signInWith(page, app, role, ORG);

/** Text of a PDF by pdftotext, with the layout kept so that table rows stay on one line. */
function pdfText(bytes: Buffer): string {
  // EQUILIBRA_KEEP_PDF=dir keeps the printed brief for a look by eye.
  const file = path.join(process.env.EQUILIBRA_KEEP_PDF ?? scratch, `brief-${Date.now()}.pdf`);
  writeFileSync(file, bytes);
  return execFileSync("pdftotext", ["-layout", file, "-"], { encoding: "utf8" });
}

const RECOMMENDATION = "Fund two orthopaedic teams at Skelderby General from April and review waits each quarter.";

describe("planner: run, publish, brief, print", () => {
  it("prints a decision brief whose PDF has every section", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    await signInAs(page, "planner");
    const list = await (await context.request.get(`${app.url}/api/v1/o/${ORG}/scenarios`)).json();
    const baseline = (list as { scenarios: { id: number; name: string }[] }).scenarios[0];
    const created = await context.request.post(`${app.url}/api/v1/o/${ORG}/scenarios/${baseline.id}/runs`, { data: { label: "Board run" } });
    expect(created.status()).toBe(201);
    runId = ((await created.json()) as { run: { id: number } }).run.id;

    await page.goto(`${app.url}/o/${ORG}/runs`);
    await page.getByTestId(`run-${runId}`).getByRole("button", { name: "Publish" }).click();
    await page.getByTestId(`run-${runId}`).getByRole("button", { name: "Withdraw" }).waitFor();

    await page.goto(`${app.url}/o/${ORG}/runs/${runId}/brief`);
    await page.getByLabel("The planner's recommendation (printed as written)").fill(RECOMMENDATION);
    await page.getByRole("button", { name: "Save recommendation" }).click();
    await page.getByTestId("recommendation").getByText(RECOMMENDATION).waitFor();

    await page.emulateMedia({ media: "print" });
    const text = pdfText(await page.pdf({ format: "A4", printBackground: true }));
    // The title line is set in capitals by the stylesheet.
    expect(text).toMatch(/decision brief/i);
    for (const heading of [
      "Recommendation",
      "Comparison of referral rules",
      "Map: patient choice",
      "Equity",
      "Inflow per site",
      "Assumptions, data date and cautions",
    ]) {
      expect(text, heading).toContain(heading);
    }
    expect(text.replace(/\s+/g, " ")).toContain(RECOMMENDATION);
    expect(text).toMatch(/data date \d{4}-\d{2}-\d{2}/);
    // Table cells wrap: compare with the whitespace flattened.
    const flat = text.replace(/\s+/g, " ");
    expect(flat).toContain("Central referral hub");
    expect(flat).toContain("Halvercombe University");
    expect(flat).toContain("Inflow per site");
    for (const caution of PLANNING_CAUTIONS) expect(flat).toContain(caution);
    // The app's frame and the page's controls stay off paper.
    expect(text).not.toContain("Sign out");
    expect(text).not.toContain("Save recommendation");
    expect(text).not.toContain("Print or save as PDF");
    await context.close();
  }, 240_000);

  it("asks the capacity advisor where one extra team helps most", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    await signInAs(page, "planner");
    const list = await (await context.request.get(`${app.url}/api/v1/o/${ORG}/scenarios`)).json();
    const baseline = (list as { scenarios: { id: number }[] }).scenarios[0];
    await page.goto(`${app.url}/o/${ORG}/scenarios/${baseline.id}/advisor`);
    await page.locator('input[name="extraTeams"]').fill("1");
    await page.getByRole("button", { name: "Advise" }).click();
    await page.getByTestId("step-choice-1").waitFor({ timeout: 120_000 });
    await page.getByTestId("step-optimum-1").waitFor();
    expect(await page.getByTestId("step-choice-1").innerText()).toMatch(/ZZS\d|Hospital|Centre/);
    await context.close();
  }, 180_000);
});

describe("provider manager: own site only", () => {
  it("sees their site's outlook and chart, and gets 404 for another site", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    const person = await signInAs(page, "provider_manager");
    const own = person.siteCodes![0];
    await page.goto(`${app.url}/o/${ORG}/outlook/sites?run=${runId}`);
    const rows = page.locator('[data-testid^="summary-"]');
    expect(await rows.count()).toBeGreaterThan(0);
    const ids = await rows.evaluateAll((elements) => elements.map((element) => element.getAttribute("data-testid")));
    expect(ids.every((id) => id?.startsWith(`summary-${own}-`))).toBe(true);
    await rows.first().getByRole("link").click();
    await page.waitForURL(new RegExp(`/outlook/sites/${own}`));
    await page.locator('[data-testid$="-inflow"] svg.recharts-surface').first().waitFor();
    const other = ["ZZS1", "ZZS2", "ZZS3"].find((code) => code !== own)!;
    const refused = await page.goto(`${app.url}/o/${ORG}/outlook/sites/${other}?run=${runId}`);
    expect(refused?.status()).toBe(404);
    const api = await context.request.get(`${app.url}/api/v1/o/${ORG}/outlook/sites/${other}?run=${runId}`);
    expect(api.status()).toBe(404);
    await context.close();
  }, 120_000);
});

describe("patient-access officer: balking", () => {
  it("sees the balking map, the decile table and the sensitivity curves", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    await signInAs(page, "access_officer");
    await page.goto(`${app.url}/o/${ORG}/outlook/balking?run=${runId}`);
    await page.waitForSelector('[data-testid="region-map"][data-map-loaded="true"]', { timeout: 60_000 });
    expect(await page.locator('[data-testid^="decile-"]').count()).toBeGreaterThan(0);
    await page.locator('[data-testid="chart-balking-against-the-private-cost"] svg.recharts-surface').first().waitFor();
    await page.locator('[data-testid="chart-balking-against-added-capacity"] svg.recharts-surface').first().waitFor();
    expect(await page.getByTestId("balking-total").innerText()).toMatch(/referrals\/week balk/);
    await context.close();
  }, 120_000);
});
