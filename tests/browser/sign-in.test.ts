/**
 * Browser journey (issue: foundation): sign in through the local fake identity provider as a planner
 * and reach the scenario list; sign in as a reader and be refused a scenario's edit page.
 */
import type { Browser } from "playwright-core";
import { describe, expect, it } from "vitest";
import { signInAs, useRunningApp, type RunningApp } from "./harness";

let app: RunningApp;
let browser: Browser;

useRunningApp((started) => ({ app, browser } = started));

describe("signing in through the local identity provider", () => {
  it("takes a planner to the scenario list", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    const person = await signInAs(page, app, "planner");
    await page.waitForURL(/\/o\/caldervey\/scenarios$/);
    expect(await page.getByRole("heading", { level: 1 }).first().textContent()).toMatch(/scenarios/i);
    expect(await page.getByText(person.name).first().isVisible()).toBe(true);
    await context.close();
  }, 120_000);

  it("refuses a reader a scenario's edit page", async () => {
    const context = await browser.newContext();
    const page = await context.newPage();
    await signInAs(page, app, "reader");
    await page.waitForURL(/\/o\/caldervey\/scenarios$/);
    const firstScenario = page.locator('a[href^="/o/caldervey/scenarios/"]').first();
    const href = await firstScenario.getAttribute("href");
    expect(href).toMatch(/^\/o\/caldervey\/scenarios\/\d+/);
    const scenarioPath = href!.match(/^\/o\/caldervey\/scenarios\/\d+/)![0];
    const response = await page.goto(`${app.url}${scenarioPath}/settings`);
    expect(response?.status()).toBe(403);
    expect(await page.getByRole("heading", { level: 1 }).first().textContent()).toBe("Not allowed");
    await context.close();
  }, 120_000);
});
