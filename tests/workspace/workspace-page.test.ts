/**
 * The workspace page's loader: a run's result and the region travel as JSON text (one string for
 * turbo-stream instead of tens of thousands of values), a run of the scenario as it still is carries
 * no second copy of the inputs, a run of an older version carries its own snapshot, and a run of
 * another scenario is not found. Plus the JSON equality that decides "as it still is".
 */
import { beforeAll, describe, expect, it } from "vitest";
import { fromJsonText, sameJson, type JsonText } from "~/models/json-text";
import { slimResult, type ResultDocument } from "~/models/result-document";
import { createRun, getRun } from "~/models/runs.server";
import { exportScenario, importScenario } from "~/models/scenarios.server";
import * as scenarioOne from "~/routes/api.v1.o.$org.scenarios.$id";
import * as workspacePage from "~/routes/o.$org.scenarios.$id";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { storedRun } from "../outlook/support";
import { useTestDatabase } from "../support/database";
import { call, smallScenario } from "./support/fixtures";

const database = useTestDatabase();
useAuthEnvironment();

interface PageData {
  document: Record<string, unknown>;
  runs: Array<{ id: number }>;
  run: { id: number; input: Record<string, unknown> | null; result: JsonText<ResultDocument>; priceOfAnarchy: number | null } | null;
  region: JsonText<unknown> | null;
}

let tenant: Tenant;
let scenarioId: number;
let runId: number;

beforeAll(async () => {
  tenant = await createTenant("Workspace page");
  ({ scenarioId, runId } = await storedRun(database.db, tenant.organisation.id, tenant.members.planner.user.id, smallScenario("Page test region")));
});

async function openPage(id: number, query = ""): Promise<{ status: number; data: PageData }> {
  const slug = tenant.organisation.slug;
  const answer = await call(workspacePage, `/o/${slug}/scenarios/${id}${query}`, { org: slug, id: String(id) }, { userId: tenant.members.planner.user.id });
  return { status: answer.status, data: answer.body as PageData };
}

describe("the workspace page's data", () => {
  it("carries the latest run's slimmed stationary result as JSON text, and no second copy of unchanged inputs", async () => {
    const { status, data } = await openPage(scenarioId);
    expect(status).toBe(200);
    expect(data.run?.id).toBe(runId);
    expect(typeof data.run?.result).toBe("string");
    const stored = await getRun(tenant.organisation.id, runId, { periods: false });
    const expected = slimResult(stored!.result as unknown as ResultDocument);
    // Through JSON and back, as the browser reads it (undefined fields drop out).
    expect(fromJsonText(data.run!.result)).toEqual(JSON.parse(JSON.stringify(expected)));
    expect(data.run!.priceOfAnarchy).toBe(expected.priceOfAnarchy);
    // The run is of the scenario as it still is: the page uses `document` for both.
    expect(sameJson(stored!.input, data.document)).toBe(true);
    expect(data.run!.input).toBeNull();
    // Reopened (now from the per-run cache), the same figures.
    const again = await openPage(scenarioId, `?run=${runId}`);
    expect(again.data.run!.result).toBe(data.run!.result);
  });

  it("carries the run's own inputs once the scenario has changed since", async () => {
    const slug = tenant.organisation.slug;
    const planner = tenant.members.planner.user.id;
    const id = await importScenario(database.db, tenant.organisation.id, smallScenario("Changed later"), { createdBy: planner });
    const outcome = await createRun(tenant.organisation.id, id, { userId: planner, label: "before the edit" });
    if (!outcome || !outcome.ok) throw new Error("The test scenario did not solve");
    const before = await exportScenario(database.db, tenant.organisation.id, id);
    // The planner then changes the willingness to travel.
    const put = await call(scenarioOne, `/api/v1/o/${slug}/scenarios/${id}`, { org: slug, id: String(id) }, { userId: planner, method: "PUT", json: { ...before, kmPerWeek: 25 } });
    expect(put.status).toBe(200);
    const { data } = await openPage(id, `?run=${outcome.run.id}`);
    expect(data.document.kmPerWeek).toBe(25);
    expect(data.run!.input).not.toBeNull();
    expect(data.run!.input!.kmPerWeek).toBe(before!.kmPerWeek);
    expect(sameJson(data.run!.input, before)).toBe(true);
  });

  it("answers 404 for a run of another scenario", async () => {
    const other = await storedRun(database.db, tenant.organisation.id, tenant.members.planner.user.id, smallScenario("Elsewhere"));
    expect((await openPage(scenarioId, `?run=${other.runId}`)).status).toBe(404);
    expect((await openPage(scenarioId, "?run=first")).status).toBe(404);
  });
});

describe("JSON equality", () => {
  it("ignores the order of object keys (a jsonb column reorders them) but not of arrays", () => {
    expect(sameJson({ a: 1, b: { c: [1, 2], d: "x" } }, { b: { d: "x", c: [1, 2] }, a: 1 })).toBe(true);
    expect(sameJson({ list: [1, 2] }, { list: [2, 1] })).toBe(false);
  });

  it("treats an undefined field as absent, as JSON does, and tells apart null, missing and changed values", () => {
    expect(sameJson({ a: 1, b: undefined }, { a: 1 })).toBe(true);
    expect(sameJson({ a: 1, b: null }, { a: 1 })).toBe(false);
    expect(sameJson({ a: 1 }, { a: 1, c: 2 })).toBe(false);
    expect(sameJson({ a: 0.1 + 0.2 }, { a: 0.3 })).toBe(false);
    expect(sameJson([{ a: 1 }], { 0: { a: 1 } })).toBe(false);
    expect(sameJson("1", 1)).toBe(false);
  });
});
