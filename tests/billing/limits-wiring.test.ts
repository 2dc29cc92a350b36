/**
 * Plan limits enforced where the actions happen: each gate (scenarios, seats, problem size, runs,
 * API) refuses at least one real route — a page action with its message in the form's error area
 * and status 403, an API route with `{ error }` JSON and 403 — and allows the same request once a
 * subscription row lifts the limit. Limits are the plans' own (app/services/plans.ts): the trial
 * allows 8 seats, 12 scenarios, 300 practices × sites and no API; Locality 3,000; Region has API.
 */
import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { memberships, organisations, runs, scenarios } from "~/db/schema";
import { createApiToken } from "~/models/api-tokens.server";
import { importScenario } from "~/models/scenarios.server";
import * as membersPage from "~/routes/o.$org.members";
import * as scenarioListPage from "~/routes/o.$org.scenarios";
import * as scenarioSettingsPage from "~/routes/o.$org.scenarios.$id.settings";
import * as scenarioListApi from "~/routes/api.v1.o.$org.scenarios";
import * as scenarioOneApi from "~/routes/api.v1.o.$org.scenarios.$id";
import * as scenarioImportApi from "~/routes/api.v1.o.$org.scenarios.$id.import";
import * as scenarioRunsApi from "~/routes/api.v1.o.$org.scenarios.$id.runs";
import * as advisorApi from "~/routes/api.v1.o.$org.scenarios.$id.advisor";
import * as solveApi from "~/routes/api.v1.solve";
import { PAST_DUE_GRACE_DAYS } from "~/services/plans";
import { useAuthEnvironment } from "../auth/support/environment";
import { createPerson, createTenant, type Tenant } from "../auth/support/fixtures";
import { useTestDatabase } from "../support/database";
import { clearSubscription, setSubscription } from "../support/plans";
import { call, smallScenario, type Answer } from "../workspace/support/fixtures";

const database = useTestDatabase();
useAuthEnvironment();

const DAY_MS = 86_400_000;

/** A valid scenario of `practices` × `sites` (the small test region's lines and rates, spread out). */
function sizedScenario(practices: number, sites: number, name = `Region ${practices}×${sites}`): Record<string, unknown> {
  const base = smallScenario(name) as { sources: Record<string, unknown>[]; providers: Record<string, unknown>[] };
  return {
    ...base,
    sources: Array.from({ length: practices }, (_, k) => ({
      ...base.sources[k % base.sources.length],
      id: `ZZP${String(k + 1).padStart(3, "0")}`,
      name: `Practice ${k + 1}`,
      lat: 49.7 + 0.01 * (k % 10),
      lon: -30.3 + 0.01 * Math.floor(k / 10),
    })),
    providers: Array.from({ length: sites }, (_, k) => ({
      ...base.providers[k % base.providers.length],
      id: `ZZS${k + 1}`,
      name: `Site ${k + 1}`,
      lat: 49.75 + 0.02 * (k % 5),
      lon: -30.25 + 0.02 * Math.floor(k / 5),
    })),
  };
}

function errorMessage(answer: Answer): string {
  return (answer.body as { error: { message: string } }).error.message;
}

function pageMessage(answer: Answer): string {
  const body = answer.body as { message?: string; formError?: string; error?: string };
  return body.message ?? body.formError ?? body.error ?? "";
}

async function scenarioCount(organisationId: number): Promise<number> {
  return database.db.$count(scenarios, eq(scenarios.organisationId, organisationId));
}

function uploadForm(document: unknown, name: string): FormData {
  const form = new FormData();
  form.set("intent", "create");
  form.set("name", name);
  form.set("scenario", new File([JSON.stringify(document)], "scenario.json", { type: "application/json" }));
  return form;
}

describe("scenarios: 12 on the trial", () => {
  let tenant: Tenant;
  let firstScenario: number;
  const org = () => ({ org: tenant.organisation.slug });
  const planner = () => tenant.members.planner.user.id;

  beforeAll(async () => {
    tenant = await createTenant("Scenario limit");
    firstScenario = await importScenario(database.db, tenant.organisation.id, smallScenario("Baseline"));
    for (let k = 2; k <= 12; k++) await database.db.insert(scenarios).values({ organisationId: tenant.organisation.id, name: `Scenario ${k}` });
  });

  it("refuses creating, duplicating and importing a 13th scenario, naming the limit, and stores nothing", async () => {
    const path = `/o/${tenant.organisation.slug}/scenarios`;
    const created = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: uploadForm(smallScenario(), "Thirteenth") });
    expect(created.status).toBe(403);
    expect(pageMessage(created)).toMatch(/Scenario limit reached: the Trial plan allows 12 scenarios and the organisation has 12/);
    expect((created.body as { refused: boolean }).refused).toBe(true);

    const copied = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: { intent: "duplicate", scenarioId: String(firstScenario) } });
    expect(copied.status).toBe(403);
    expect(pageMessage(copied)).toMatch(/Scenario limit reached/);

    const imported = await call(scenarioListApi, `/api/v1${path}`, org(), { method: "POST", userId: planner(), json: smallScenario("By API") });
    expect(imported.status).toBe(403);
    expect(errorMessage(imported)).toMatch(/Scenario limit reached: the Trial plan allows 12 scenarios/);
    expect(await scenarioCount(tenant.organisation.id)).toBe(12);
  });

  it("refuses restoring an archived scenario past the limit, while archiving stays allowed", async () => {
    const path = `/o/${tenant.organisation.slug}/scenarios`;
    const archived = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: { intent: "archive", scenarioId: String(firstScenario) } });
    expect(archived.status).toBe(200);
    await database.db.insert(scenarios).values({ organisationId: tenant.organisation.id, name: "Twelfth live one" });
    const restored = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: { intent: "restore", scenarioId: String(firstScenario) } });
    expect(restored.status).toBe(403);
    expect(pageMessage(restored)).toMatch(/Scenario limit reached/);
    const restoredByApi = await call(scenarioOneApi, `/api/v1${path}/${firstScenario}`, { ...org(), id: String(firstScenario) }, { method: "PATCH", userId: planner(), json: { archived: false } });
    expect(restoredByApi.status).toBe(403);
    expect(errorMessage(restoredByApi)).toMatch(/Scenario limit reached/);
  });

  it("allows them once a Locality subscription (30 scenarios) is mirrored", async () => {
    await setSubscription(tenant.organisation.id, "locality");
    const path = `/o/${tenant.organisation.slug}/scenarios`;
    const restored = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: { intent: "restore", scenarioId: String(firstScenario) } });
    expect(restored.status).toBe(200);
    const created = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: uploadForm(smallScenario(), "Fourteenth") });
    expect(created.status).toBe(200);
    const copied = await call(scenarioListPage, path, org(), { method: "POST", userId: planner(), form: { intent: "duplicate", scenarioId: String(firstScenario) } });
    expect(copied.status).toBe(200);
    const imported = await call(scenarioListApi, `/api/v1${path}`, org(), { method: "POST", userId: planner(), json: smallScenario("By API") });
    expect(imported.status).toBe(201);
    // 13 rows (one archived then restored) plus the three new ones.
    expect(await scenarioCount(tenant.organisation.id)).toBe(16);
  });
});

describe("seats: 8 on the trial", () => {
  it("refuses a ninth seat on the members page and allows it on Locality (25 seats)", async () => {
    const tenant = await createTenant("Seat limit");
    // createTenant makes one member per role (5); three more make 8.
    for (let k = 0; k < 3; k++) {
      const person = await createPerson();
      await database.db.insert(memberships).values({ organisationId: tenant.organisation.id, userId: person.id, role: "reader", siteCodes: [] });
    }
    const path = `/o/${tenant.organisation.slug}/members`;
    const form = { intent: "invite", email: "ninth@example.test", role: "reader", siteCodes: "" };
    const administrator = tenant.members.administrator.user.id;
    const refused = await call(membersPage, path, { org: tenant.organisation.slug }, { method: "POST", userId: administrator, form });
    expect(refused.status).toBe(403);
    expect(pageMessage(refused)).toMatch(/Seat limit reached: the Trial plan allows 8 seats .* and 8 are in use/);

    await setSubscription(tenant.organisation.id, "locality");
    const allowed = await call(membersPage, path, { org: tenant.organisation.slug }, { method: "POST", userId: administrator, form });
    expect(allowed.status).toBe(200);
  });
});

describe("problem size: 300 practices × sites on the trial", () => {
  let tenant: Tenant;
  let scenarioId: number;
  const params = () => ({ org: tenant.organisation.slug, id: String(scenarioId) });
  const apiPath = () => `/api/v1/o/${tenant.organisation.slug}/scenarios/${scenarioId}`;
  const planner = () => tenant.members.planner.user.id;
  // 20 practices × 16 sites = 320, just over the trial's 300.
  const oversize = sizedScenario(20, 16, "Oversize");

  beforeAll(async () => {
    tenant = await createTenant("Problem size");
    scenarioId = await importScenario(database.db, tenant.organisation.id, smallScenario("Small"));
  });

  it("refuses saving, importing and creating an oversize scenario, naming both counts and the limit", async () => {
    const limit = /Problem size limit: this scenario has 20 practices × 16 sites = 320, and the Trial plan allows up to 300 practices × sites/;
    const saved = await call(scenarioOneApi, apiPath(), params(), { method: "PUT", userId: planner(), json: oversize });
    expect(saved.status).toBe(403);
    expect(errorMessage(saved)).toMatch(limit);

    const form = new FormData();
    form.set("scenario", new File([JSON.stringify(oversize)], "scenario.json", { type: "application/json" }));
    const imported = await call(scenarioImportApi, `${apiPath()}/import`, params(), { method: "POST", userId: planner(), form });
    expect(imported.status).toBe(403);
    expect(errorMessage(imported)).toMatch(limit);

    const created = await call(scenarioListPage, `/o/${tenant.organisation.slug}/scenarios`, { org: tenant.organisation.slug }, {
      method: "POST",
      userId: planner(),
      form: uploadForm(oversize, "Too big"),
    });
    expect(created.status).toBe(403);
    expect(pageMessage(created)).toMatch(limit);
    expect(await scenarioCount(tenant.organisation.id)).toBe(1);
  });

  it("refuses running a stored oversize scenario (the API's runs and the advisor) and saving its settings page", async () => {
    const big = await importScenario(database.db, tenant.organisation.id, oversize);
    const bigParams = { org: tenant.organisation.slug, id: String(big) };
    const bigPath = `/api/v1/o/${tenant.organisation.slug}/scenarios/${big}`;
    const run = await call(scenarioRunsApi, `${bigPath}/runs`, bigParams, { method: "POST", userId: planner() });
    expect(run.status).toBe(403);
    expect(errorMessage(run)).toMatch(/Problem size limit: .* = 320/);
    expect(await database.db.$count(runs, eq(runs.scenarioId, big))).toBe(0);
    const advice = await call(advisorApi, `${bigPath}/advisor`, bigParams, { method: "POST", userId: planner(), json: { extraTeams: 1 } });
    expect(advice.status).toBe(403);
    expect(errorMessage(advice)).toMatch(/Problem size limit/);
    const settings = await call(scenarioSettingsPage, `/o/${tenant.organisation.slug}/scenarios/${big}/settings`, bigParams, {
      method: "POST",
      userId: planner(),
      form: { kmPerWeek: "15", circuity: "1.3", choiceKind: "wardrop", logitScale: "", planMaxUtilisation: "", planMaxKm: "", description: "", dataDate: "" },
    });
    expect(settings.status).toBe(403);
    expect(pageMessage(settings)).toMatch(/Problem size limit/);
  });

  it("refuses POST /api/v1/solve of an oversize document from a session", async () => {
    const solved = await call(solveApi, "/api/v1/solve?periods=0&rules=nearest", {}, { method: "POST", userId: planner(), json: oversize });
    expect(solved.status).toBe(403);
    expect(errorMessage(solved)).toMatch(/Problem size limit: .* = 320/);
  });

  it("allows all of it on Locality (3,000 practices × sites)", async () => {
    await setSubscription(tenant.organisation.id, "locality");
    expect((await call(scenarioOneApi, apiPath(), params(), { method: "PUT", userId: planner(), json: oversize })).status).toBe(200);
    const solved = await call(solveApi, "/api/v1/solve?periods=0&rules=nearest", {}, { method: "POST", userId: planner(), json: oversize });
    expect(solved.status).toBe(200);
    const run = await call(scenarioRunsApi, `${apiPath()}/runs`, params(), { method: "POST", userId: planner(), json: { rules: ["nearest"], periods: false } });
    expect(run.status).toBe(201);
  });
});

describe("runs: blocked after the trial ends and after a past-due grace period", () => {
  let tenant: Tenant;
  let scenarioId: number;
  const params = () => ({ org: tenant.organisation.slug, id: String(scenarioId) });
  const runsPath = () => `/api/v1/o/${tenant.organisation.slug}/scenarios/${scenarioId}/runs`;
  const planner = () => tenant.members.planner.user.id;
  const quick = { rules: ["nearest"], periods: false };

  beforeAll(async () => {
    tenant = await createTenant("Runs");
    scenarioId = await importScenario(database.db, tenant.organisation.id, smallScenario("Baseline"));
    // Created 40 days ago: the 30-day trial has ended.
    await database.db.update(organisations).set({ createdAt: new Date(Date.now() - 40 * DAY_MS) }).where(eq(organisations.id, tenant.organisation.id));
  });

  it("refuses new runs, solves and advice once the trial has ended; reading stays allowed", async () => {
    const run = await call(scenarioRunsApi, runsPath(), params(), { method: "POST", userId: planner(), json: quick });
    expect(run.status).toBe(403);
    expect(errorMessage(run)).toMatch(/The free trial ended on .*: existing results stay readable/);
    const advice = await call(advisorApi, runsPath().replace(/runs$/, "advisor"), params(), { method: "POST", userId: planner(), json: { extraTeams: 1 } });
    expect(advice.status).toBe(403);
    expect(errorMessage(advice)).toMatch(/free trial ended/);
    const solved = await call(solveApi, "/api/v1/solve?periods=0&rules=nearest", {}, { method: "POST", userId: planner(), json: smallScenario() });
    expect(solved.status).toBe(403);
    expect(errorMessage(solved)).toMatch(/free trial ended/);
    expect((await call(scenarioRunsApi, runsPath(), params(), { userId: planner() })).status).toBe(200);
  });

  it("allows runs on an active subscription and within a past-due grace period, and refuses them after it", async () => {
    await setSubscription(tenant.organisation.id, "locality");
    expect((await call(scenarioRunsApi, runsPath(), params(), { method: "POST", userId: planner(), json: quick })).status).toBe(201);

    await setSubscription(tenant.organisation.id, "locality", { status: "past_due", pastDueSince: new Date(Date.now() - DAY_MS) });
    expect((await call(scenarioRunsApi, runsPath(), params(), { method: "POST", userId: planner(), json: quick })).status).toBe(201);

    await setSubscription(tenant.organisation.id, "locality", { status: "past_due", pastDueSince: new Date(Date.now() - (PAST_DUE_GRACE_DAYS + 1) * DAY_MS) });
    const late = await call(scenarioRunsApi, runsPath(), params(), { method: "POST", userId: planner(), json: quick });
    expect(late.status).toBe(403);
    expect(errorMessage(late)).toMatch(/payment is overdue since .* grace period has ended/);

    await setSubscription(tenant.organisation.id, "locality", { status: "active" });
    expect((await call(scenarioRunsApi, runsPath(), params(), { method: "POST", userId: planner(), json: quick })).status).toBe(201);
  });
});

describe("API access: personal tokens need a plan with the API (Region)", () => {
  let tenant: Tenant;
  let token: string;
  const listPath = () => `/api/v1/o/${tenant.organisation.slug}/scenarios`;
  const org = () => ({ org: tenant.organisation.slug });

  beforeAll(async () => {
    tenant = await createTenant("API access");
    await importScenario(database.db, tenant.organisation.id, smallScenario("Baseline"));
    ({ token } = await createApiToken(tenant.organisation.id, tenant.members.planner.user.id, "script"));
  });

  it("refuses a token on the trial and on Locality, while the session (the app's own pages) is unaffected", async () => {
    const refused = await call(scenarioListApi, listPath(), org(), { token });
    expect(refused.status).toBe(403);
    expect(errorMessage(refused)).toMatch(/API access is not included in the Trial plan\. The Region plan allows more/);
    const solved = await call(solveApi, "/api/v1/solve?periods=0&rules=nearest", {}, { method: "POST", token, json: smallScenario() });
    expect(solved.status).toBe(403);
    expect(errorMessage(solved)).toMatch(/API access is not included in the Trial plan/);
    expect((await call(scenarioListApi, listPath(), org(), { userId: tenant.members.planner.user.id })).status).toBe(200);

    await setSubscription(tenant.organisation.id, "locality");
    const locality = await call(scenarioListApi, listPath(), org(), { token });
    expect(locality.status).toBe(403);
    expect(errorMessage(locality)).toMatch(/API access is not included in the Locality plan/);
  });

  it("answers the same token on Region, and refuses it again when the subscription row is gone", async () => {
    await setSubscription(tenant.organisation.id, "region");
    expect((await call(scenarioListApi, listPath(), org(), { token })).status).toBe(200);
    const solved = await call(solveApi, "/api/v1/solve?periods=0&rules=nearest", {}, { method: "POST", token, json: smallScenario() });
    expect(solved.status).toBe(200);
    await clearSubscription(tenant.organisation.id);
    expect((await call(scenarioListApi, listPath(), org(), { token })).status).toBe(403);
  });
});
