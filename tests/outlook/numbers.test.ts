/**
 * The numbers each view shows are the engine's for the same run: the site outlook page and API
 * against `siteOutlook` on the stored input and result (and the result's own provider figures),
 * the balking page and API against the result's balking, the brief against `summariseRules`, the
 * advisor API against `adviseCapacity`; and the teams-needed figure against the Erlang C value
 * of the SIPP example.
 */
import { beforeAll, describe, expect, it } from "vitest";
import { adviseCapacity } from "~/engine/capacity-advisor";
import { parseScenario } from "~/engine/scenario";
import { siteOutlook, summariseSiteOutlook } from "~/engine/site-outlook";
import type { ScenarioResult } from "~/engine/solve-scenario";
import { PLANNING_CAUTIONS } from "~/components/planning-cautions";
import { getRun } from "~/models/runs.server";
import { setRunPublished } from "~/models/publishing.server";
import { summariseRules, type ResultDocument } from "~/models/result-document";
import * as advisorApi from "~/routes/api.v1.o.$org.scenarios.$id.advisor";
import * as balkingApi from "~/routes/api.v1.o.$org.outlook.balking";
import * as sensitivityApi from "~/routes/api.v1.o.$org.outlook.balking.sensitivity";
import * as sitesApi from "~/routes/api.v1.o.$org.outlook.sites";
import * as balkingPage from "~/routes/o.$org.outlook.balking";
import * as briefPage from "~/routes/o.$org.runs.$runId.brief";
import * as sitesPage from "~/routes/o.$org.outlook.sites";
import * as sitePage from "~/routes/o.$org.outlook.sites.$siteId";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { useTestDatabase } from "../support/database";
import { call, smallScenario } from "../workspace/support/fixtures";
import { erlangCBySum } from "../engine/outlook/outlook-support";
import { seasonalScenario, sippScenario, storedRun } from "./support";

const database = useTestDatabase();
useAuthEnvironment();

let tenant: Tenant;
let seasonal: { scenarioId: number; runId: number };
let sipp: { scenarioId: number; runId: number };

beforeAll(async () => {
  tenant = await createTenant("Numbers", ["ZZS1", "ZZS2"]);
  const planner = tenant.members.planner.user.id;
  seasonal = await storedRun(database.db, tenant.organisation.id, planner, seasonalScenario("Seasonal"));
  sipp = await storedRun(database.db, tenant.organisation.id, planner, sippScenario());
  await setRunPublished(tenant.organisation.id, seasonal.runId, planner, true);
  await setRunPublished(tenant.organisation.id, sipp.runId, planner, true);
});

const org = () => ({ org: tenant.organisation.slug });

async function stored(runId: number) {
  const run = await getRun(tenant.organisation.id, runId);
  if (!run) throw new Error("run missing");
  return { scenario: parseScenario(run.input), result: run.result as unknown as ScenarioResult };
}

describe("site inflow outlook", () => {
  it("teams needed: λ = 9 then 10, μ = 1, P(wait) ≤ 0.7 → 10 then 11 (Green, Kolesar & Soares 2001, Operations Research 49(4):549–564)", async () => {
    // P(wait) ≤ 0.7 is at least 30% seen with no wait: standard 0 weeks, target 30%.
    const path = `/api/v1/o/${tenant.organisation.slug}/outlook/sites?run=${sipp.runId}&standard=0&target=30`;
    const answer = await call(sitesApi, path, org(), { userId: tenant.members.provider_manager.user.id });
    expect(answer.status).toBe(200);
    const rows = (answer.body as { rows: { periodId: string; inflow: number; teamsNeeded: number; teamsAvailable: number }[] }).rows;
    expect(rows.map((row) => row.periodId)).toEqual(["p1", "p2"]);
    expect(rows[0].inflow).toBeCloseTo(9, 9);
    expect(rows[1].inflow).toBeCloseTo(10, 9);
    expect(rows.map((row) => row.teamsNeeded)).toEqual([10, 11]);
    expect(rows.map((row) => row.teamsAvailable)).toEqual([14, 14]);
    // The Erlang C values behind it, by the factorial sum: C(10, 9) = 0.6687, C(11, 10) = 0.6821 (4 decimals as printed).
    expect(erlangCBySum(10, 9)).toBeCloseTo(0.6687, 4);
    expect(erlangCBySum(9 + 1, 9)).toBeLessThanOrEqual(0.7);
    expect(erlangCBySum(11, 10)).toBeCloseTo(0.6821, 4);
  });

  it("the API's rows are the engine's outlook of the stored run, and repeat the result's provider figures", async () => {
    const path = `/api/v1/o/${tenant.organisation.slug}/outlook/sites?run=${seasonal.runId}&rule=optimum&target=90`;
    const answer = await call(sitesApi, path, org(), { userId: tenant.members.planner.user.id });
    const body = answer.body as { rows: unknown[]; cautions: string[]; assumptions: { kmPerWeek: number } };
    const { scenario, result } = await stored(seasonal.runId);
    const expected = siteOutlook(scenario, result, { targetShareWithin: 0.9 }).rows.filter((row) => row.rule === "optimum");
    expect(body.rows).toEqual(JSON.parse(JSON.stringify(expected)));
    expect(expected.length).toBe(2 /* sites */ * 2 /* lines */ * 2 /* periods */);
    for (const row of expected) {
      const provider = result.periods!.find((period) => period.id === row.periodId)!.lines[row.lineId].rules.optimum!.providers.find((entry) => entry.id === row.siteId)!;
      expect(row.inflow).toBe(provider.inflow);
      expect(row.utilisation).toBe(provider.utilisation);
      expect(row.shareWithinStandard).toBe(provider.shareWithinStandard);
    }
    expect(body.cautions).toEqual([...PLANNING_CAUTIONS]);
    expect(body.assumptions.kmPerWeek).toBe(15);
  });

  it("the list page's summary and the site page's periods equal the engine's for the same run", async () => {
    const { scenario, result } = await stored(seasonal.runId);
    const userId = tenant.members.provider_manager.user.id;
    const page = await call(sitesPage, `/o/${tenant.organisation.slug}/outlook/sites?run=${seasonal.runId}`, org(), { userId });
    const summaries = (page.body as { outlook: { summaries: unknown[]; context: { dataDate: string } } }).outlook;
    const rows = siteOutlook(scenario, result).rows.filter((row) => row.rule === "choice");
    expect(summaries.summaries).toEqual(JSON.parse(JSON.stringify(summariseSiteOutlook(rows))));
    expect(summaries.context.dataDate).toBe("2026-04-01");
    const detail = await call(sitePage, `/o/${tenant.organisation.slug}/outlook/sites/ZZS1?run=${seasonal.runId}`, { ...org(), siteId: "ZZS1" }, { userId });
    const detailRows = (detail.body as { rows: { siteId: string; rule: string }[] }).rows;
    expect(detailRows).toEqual(JSON.parse(JSON.stringify(siteOutlook(scenario, result, { siteIds: ["ZZS1"] }).rows)));
  });

  it("CSV export: the run, data date, assumptions and cautions first, then one row per site, line and period", async () => {
    const path = `/api/v1/o/${tenant.organisation.slug}/outlook/sites?run=${seasonal.runId}&format=csv`;
    const answer = await call(sitesApi, path, org(), { userId: tenant.members.provider_manager.user.id });
    expect(answer.headers.get("Content-Type")).toMatch(/text\/csv/);
    const text = String(answer.body);
    expect(text).toContain("# Data date: 2026-04-01");
    for (const caution of PLANNING_CAUTIONS) expect(text).toContain(`# ${caution}`);
    const dataLines = text.split("\n").filter((line) => line && !line.startsWith("#"));
    expect(dataLines[0]).toMatch(/^site,line,period,weeks,rule,urgent inflow/);
    expect(dataLines).toHaveLength(1 + 2 * 2 * 2);
  });

  it("a bad query names the parameter", async () => {
    const answer = await call(sitesApi, `/api/v1/o/${tenant.organisation.slug}/outlook/sites?target=150&rule=random`, org(), { userId: tenant.members.planner.user.id });
    expect(answer.status).toBe(400);
    const issues = (answer.body as { error: { issues: { path: string; message: string }[] } }).error.issues;
    expect(issues).toEqual([
      { path: "rule", message: "rule must be one of choice, choiceLogit, optimum, nearest, capacityShare, plan" },
      { path: "target", message: "target must be a percentage above 0 and below 100" },
    ]);
  });
});

describe("balking outlook", () => {
  it("page and API totals equal the result's balked per week; deciles repeat the engine's equity table on one line", async () => {
    const { result } = await stored(seasonal.runId);
    const userId = tenant.members.access_officer.user.id;
    const expected = Object.values(result.lines).reduce((total, line) => total + line.rules.choice!.balkedPerWeek, 0);
    const api = await call(balkingApi, `/api/v1/o/${tenant.organisation.slug}/outlook/balking?run=${seasonal.runId}`, org(), { userId });
    expect((api.body as { outlook: { totalBalkedPerWeek: number } }).outlook.totalBalkedPerWeek).toBeCloseTo(expected, 12);
    const page = await call(balkingPage, `/o/${tenant.organisation.slug}/outlook/balking?run=${seasonal.runId}&line=ortho`, org(), { userId });
    const view = (page.body as { view: { outlook: { byDecile: { decile: number; balkedPerWeek: number }[]; totalBalkedPerWeek: number } } }).view;
    expect(view.outlook.totalBalkedPerWeek).toBeCloseTo(result.lines.ortho.rules.choice!.balkedPerWeek, 12);
    const equity = result.lines.ortho.rules.choice!.equity.byDeprivationDecile;
    expect(view.outlook.byDecile.map((row) => [row.decile, row.balkedPerWeek])).toEqual(equity.map((row) => [row.decile, expect.closeTo(row.balkedPerWeek, 12)]));
  });

  it("a period's balking comes from that period's solve", async () => {
    const { result } = await stored(seasonal.runId);
    const userId = tenant.members.access_officer.user.id;
    const api = await call(balkingApi, `/api/v1/o/${tenant.organisation.slug}/outlook/balking?run=${seasonal.runId}&period=winter&rule=nearest`, org(), { userId });
    const winter = result.periods!.find((period) => period.id === "winter")!;
    const expected = Object.values(winter.lines).reduce((total, line) => total + line.rules.nearest!.balkedPerWeek, 0);
    expect((api.body as { outlook: { totalBalkedPerWeek: number } }).outlook.totalBalkedPerWeek).toBeCloseTo(expected, 12);
    const bad = await call(balkingApi, `/api/v1/o/${tenant.organisation.slug}/outlook/balking?run=${seasonal.runId}&period=spring`, org(), { userId });
    expect(bad.status).toBe(400);
    expect(JSON.stringify(bad.body)).toContain('this run has no period \\"spring\\"');
  });

  it("the sensitivity curve passes through the run's own balking at factor 1, and falls as private care gets dearer", async () => {
    // Private care at about two weeks' waiting: some patients balk at these waits and journeys.
    const cheap = smallScenario("Cheap private care") as { sources: { outsideCost: unknown; outsideSpread: number }[] };
    for (const source of cheap.sources) {
      source.outsideCost = { ortho: 2, derm: 2 };
      source.outsideSpread = 0.5;
    }
    const tight = await storedRun(database.db, tenant.organisation.id, tenant.members.planner.user.id, cheap as Record<string, unknown>);
    await setRunPublished(tenant.organisation.id, tight.runId, tenant.members.planner.user.id, true);
    const { result } = await stored(tight.runId);
    const answer = await call(sensitivityApi, `/api/v1/o/${tenant.organisation.slug}/outlook/balking/sensitivity?run=${tight.runId}&privateCost=0.5,1,2&capacity=1,1.5`, org(), {
      userId: tenant.members.access_officer.user.id,
    });
    expect(answer.status).toBe(200);
    const { privateCost, capacity } = (answer.body as { sensitivity: { privateCost: { factor: number; balkedPerWeek: { choice: number } }[]; capacity: { balkedPerWeek: { choice: number } }[] } }).sensitivity;
    const routineBalked = Object.values(result.lines).reduce((total, line) => total + line.rules.choice!.balkedPerWeek, 0);
    expect(routineBalked).toBeGreaterThan(0);
    expect(privateCost[1].balkedPerWeek.choice).toBeCloseTo(routineBalked, 6);
    expect(privateCost[0].balkedPerWeek.choice).toBeGreaterThan(privateCost[1].balkedPerWeek.choice);
    expect(privateCost[2].balkedPerWeek.choice).toBeLessThan(privateCost[1].balkedPerWeek.choice);
    expect(capacity[1].balkedPerWeek.choice).toBeLessThan(capacity[0].balkedPerWeek.choice);
  });
});

describe("decision brief", () => {
  it("shows the rule comparison of summariseRules for the run, the recommendation once saved, and the assumptions", async () => {
    const { result, scenario } = await stored(seasonal.runId);
    const path = `/o/${tenant.organisation.slug}/runs/${seasonal.runId}/brief`;
    const params = { ...org(), runId: String(seasonal.runId) };
    const saved = await call(briefPage, path, params, {
      method: "POST",
      userId: tenant.members.planner.user.id,
      form: { intent: "recommendation", recommendation: "Commission two extra orthopaedic teams at ZZS2." },
    });
    expect(saved.status).toBe(200);
    const page = await call(briefPage, path, params, { userId: tenant.members.access_officer.user.id });
    const body = page.body as { summaries: unknown; recommendation: string; context: { dataDate: string; assumptions: { kmPerWeek: number } }; canEdit: boolean };
    expect(body.recommendation).toBe("Commission two extra orthopaedic teams at ZZS2.");
    expect(body.canEdit).toBe(false);
    const deciles = scenario.sources.map((source) => ({ id: source.id, deprivationDecile: source.deprivationDecile ?? null }));
    const stationary = { ...result, periods: undefined } as unknown as ResultDocument;
    expect(body.summaries).toEqual(JSON.parse(JSON.stringify(summariseRules(stationary, { sources: deciles }))));
    expect(body.context.dataDate).toBe("2026-04-01");
    const refused = await call(briefPage, path, params, { method: "POST", userId: tenant.members.access_officer.user.id, form: { intent: "recommendation", recommendation: "x" } });
    expect(refused.status).toBe(403);
  });
});

describe("capacity advisor API", () => {
  it("answers what adviseCapacity gives for the stored scenario; other roles are refused; a bad body names the field", async () => {
    const path = `/api/v1/o/${tenant.organisation.slug}/scenarios/${seasonal.scenarioId}/advisor`;
    const params = { ...org(), id: String(seasonal.scenarioId) };
    const request = { extraTeams: 2, siteLimits: { ZZS2: 1 } };
    const answer = await call(advisorApi, path, params, { method: "POST", userId: tenant.members.planner.user.id, json: request });
    expect(answer.status).toBe(200);
    const { scenario } = await stored(seasonal.runId);
    const expected = adviseCapacity(scenario, request);
    expect((answer.body as { advice: unknown }).advice).toEqual(JSON.parse(JSON.stringify(expected)));
    for (const rule of expected.rules) expect(rule.exact.status).toBe("solved");
    const manager = await call(advisorApi, path, params, { method: "POST", userId: tenant.members.provider_manager.user.id, json: request });
    expect(manager.status).toBe(403);
    const bad = await call(advisorApi, path, params, { method: "POST", userId: tenant.members.planner.user.id, json: { extraTeams: 0 } });
    expect(bad.status).toBe(400);
    expect((bad.body as { error: { issues: { path: string; message: string }[] } }).error.issues).toEqual([{ path: "extraTeams", message: "extraTeams must be at least 1" }]);
    const unknownSite = await call(advisorApi, path, params, { method: "POST", userId: tenant.members.planner.user.id, json: { extraTeams: 1, siteLimits: { ZZS9: 1 } } });
    expect(unknownSite.status).toBe(400);
    expect((unknownSite.body as { error: { message: string } }).error.message).toBe('siteLimits: unknown site "ZZS9"');
    // The input the engine saw is the smallScenario the run was made from.
    expect(scenario.providers.map((provider) => provider.id)).toEqual((smallScenario().providers as { id: string }[]).map((provider) => provider.id));
  });
});
