/**
 * The workspace's JSON API with real Requests against a migrated PGlite: authentication by session
 * and by personal token, tenancy (another organisation's token or ids → 404), role checks, runs
 * stored with their input snapshot, solve, import that stores nothing when a row is broken, and
 * export → re-import reproducing the scenario exactly.
 */
import { createHash } from "node:crypto";
import { readFileSync } from "node:fs";
import { eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import { apiTokens, scenarios } from "~/db/schema";
import { createApiToken, revokeApiToken } from "~/models/api-tokens.server";
import { exportScenario, importScenario } from "~/models/scenarios.server";
import * as scenarioList from "~/routes/api.v1.o.$org.scenarios";
import * as scenarioOne from "~/routes/api.v1.o.$org.scenarios.$id";
import * as scenarioExport from "~/routes/api.v1.o.$org.scenarios.$id.export";
import * as scenarioImport from "~/routes/api.v1.o.$org.scenarios.$id.import";
import * as scenarioRuns from "~/routes/api.v1.o.$org.scenarios.$id.runs";
import * as runOne from "~/routes/api.v1.o.$org.runs.$runId";
import * as solve from "~/routes/api.v1.solve";
import { PLANNING_CAUTIONS } from "~/components/planning-cautions";
import { useTestDatabase } from "../support/database";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { setSubscription } from "../support/plans";
import { call, smallScenario } from "./support/fixtures";

const database = useTestDatabase();
useAuthEnvironment();

let alpha: Tenant;
let beta: Tenant;
let alphaScenario: number;
let betaScenario: number;

beforeAll(async () => {
  alpha = await createTenant("Alpha");
  beta = await createTenant("Beta");
  // Personal tokens need a plan with API access (tests/billing/limits-wiring.test.ts covers the refusal).
  await setSubscription(alpha.organisation.id, "region");
  await setSubscription(beta.organisation.id, "region");
  alphaScenario = await importScenario(database.db, alpha.organisation.id, smallScenario("Alpha baseline"));
  betaScenario = await importScenario(database.db, beta.organisation.id, smallScenario("Beta baseline"));
});

const listPath = (tenant: Tenant) => `/api/v1/o/${tenant.organisation.slug}/scenarios`;

describe("authentication and tenancy", () => {
  it("answers a live token of the organisation and stores only the token's SHA-256", async () => {
    const { token } = await createApiToken(alpha.organisation.id, alpha.members.reader.user.id, "reporting");
    const answer = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { token });
    expect(answer.status).toBe(200);
    const names = (answer.body as { scenarios: { name: string }[] }).scenarios.map((scenario) => scenario.name);
    expect(names).toContain("Alpha baseline");
    expect(names).not.toContain("Beta baseline");
    const stored = await database.db.select().from(apiTokens).where(eq(apiTokens.tokenHash, createHash("sha256").update(token).digest("hex")));
    expect(stored).toHaveLength(1);
    expect(JSON.stringify(stored)).not.toContain(token);
  });

  it("answers 404 to a token of another organisation, for its list and for its ids", async () => {
    const { token } = await createApiToken(beta.organisation.id, beta.members.administrator.user.id, "beta tool");
    const list = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { token });
    expect(list.status).toBe(404);
    expect(JSON.stringify(list.body)).not.toContain("Alpha baseline");
    const one = await call(scenarioOne, `${listPath(alpha)}/${alphaScenario}`, { org: alpha.organisation.slug, id: String(alphaScenario) }, { token });
    expect(one.status).toBe(404);
    // Its own organisation's scenario id under its own slug works; alpha's id under beta's slug does not.
    const own = await call(scenarioOne, `${listPath(beta)}/${betaScenario}`, { org: beta.organisation.slug, id: String(betaScenario) }, { token });
    expect(own.status).toBe(200);
    const crossed = await call(scenarioOne, `${listPath(beta)}/${alphaScenario}`, { org: beta.organisation.slug, id: String(alphaScenario) }, { token });
    expect(crossed.status).toBe(404);
  });

  it("answers 401 to a revoked token, a malformed header and no credential at all", async () => {
    const { token, summary } = await createApiToken(alpha.organisation.id, alpha.members.planner.user.id, "short-lived");
    expect(await revokeApiToken(alpha.organisation.id, alpha.members.planner.user.id, summary.id)).toBe(true);
    const revoked = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { token });
    expect(revoked.status).toBe(401);
    const malformed = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { headers: { Authorization: "Token abc" } });
    expect(malformed.status).toBe(401);
    const anonymous = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug });
    expect(anonymous.status).toBe(401);
    expect((anonymous.body as { error: { message: string } }).error.message).toMatch(/Sign in, or send a personal API token/);
  });

  it("answers 404 to a signed-in member of another organisation", async () => {
    const answer = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { userId: beta.members.planner.user.id });
    expect(answer.status).toBe(404);
  });

  it("lets readers read but not run or change, with a 403 that names the roles needed", async () => {
    const reader = alpha.members.reader.user.id;
    const params = { org: alpha.organisation.slug, id: String(alphaScenario) };
    expect((await call(scenarioOne, `${listPath(alpha)}/${alphaScenario}`, params, { userId: reader })).status).toBe(200);
    const run = await call(scenarioRuns, `${listPath(alpha)}/${alphaScenario}/runs`, params, { userId: reader, method: "POST" });
    expect(run.status).toBe(403);
    expect((run.body as { error: { message: string } }).error.message).toMatch(/does not allow this\. It needs one of: Administrator, Planner/);
    const put = await call(scenarioOne, `${listPath(alpha)}/${alphaScenario}`, params, { userId: reader, method: "PUT", json: smallScenario() });
    expect(put.status).toBe(403);
  });
});

describe("runs", () => {
  it("runs on the server and keeps the input snapshot, the result with diagnostics, who and when", async () => {
    const params = { org: alpha.organisation.slug, id: String(alphaScenario) };
    const planner = alpha.members.planner.user;
    const created = await call(scenarioRuns, `${listPath(alpha)}/${alphaScenario}/runs`, params, { userId: planner.id, method: "POST", json: { label: "baseline" } });
    expect(created.status).toBe(201);
    const run = (created.body as { run: { id: number; label: string; createdByLogin: string; converged: boolean } }).run;
    expect(run).toMatchObject({ label: "baseline", createdByLogin: planner.login, converged: true });

    const listed = await call(scenarioRuns, `${listPath(alpha)}/${alphaScenario}/runs`, params, { userId: alpha.members.reader.user.id });
    expect((listed.body as { runs: { id: number }[] }).runs.map((entry) => entry.id)).toContain(run.id);

    const detail = await call(runOne, `/api/v1/o/${alpha.organisation.slug}/runs/${run.id}`, { org: alpha.organisation.slug, runId: String(run.id) }, { userId: alpha.members.reader.user.id });
    expect(detail.status).toBe(200);
    const stored = (detail.body as { run: { input: unknown; result: { schema: string; lines: Record<string, { rules: Record<string, { converged: boolean; iterations: number; relativeGap: number }> }> } } }).run;
    expect(stored.input).toEqual(await exportScenario(database.db, alpha.organisation.id, alphaScenario));
    expect(stored.result.schema).toBe("equilibra/result@1");
    const choice = stored.result.lines.ortho.rules.choice;
    expect(choice.converged).toBe(true);
    expect(choice.iterations).toBeGreaterThanOrEqual(0);
    expect(typeof choice.relativeGap).toBe("number");
    expect(Object.keys(stored.result.lines.ortho.rules)).toEqual(expect.arrayContaining(["choice", "optimum", "nearest", "capacityShare"]));

    // Another organisation cannot open the run, even with the right id.
    const foreign = await call(runOne, `/api/v1/o/${beta.organisation.slug}/runs/${run.id}`, { org: beta.organisation.slug, runId: String(run.id) }, { userId: beta.members.administrator.user.id });
    expect(foreign.status).toBe(404);
  });

  it("exports a run's results as CSV headed by the data date, assumptions and planning cautions", async () => {
    const params = { org: alpha.organisation.slug, id: String(alphaScenario) };
    const created = await call(scenarioRuns, `${listPath(alpha)}/${alphaScenario}/runs`, params, { userId: alpha.members.planner.user.id, method: "POST" });
    const runId = (created.body as { run: { id: number } }).run.id;
    const csv = await call(runOne, `/api/v1/o/${alpha.organisation.slug}/runs/${runId}?format=csv&file=results-sites.csv`, { org: alpha.organisation.slug, runId: String(runId) }, { userId: alpha.members.reader.user.id });
    expect(csv.status).toBe(200);
    const text = csv.body as string;
    expect(text).toContain("# Data date: 2026-04-01");
    for (const caution of PLANNING_CAUTIONS) expect(text).toContain(caution);
    expect(text).toContain("line,rule,site,inflow (referrals/week)");
    expect(text).toMatch(/\northo,choice,ZZS1,/);
  });
});

describe("POST /api/v1/solve", () => {
  it("returns the result of an exchange-format scenario and stores nothing", async () => {
    const before = await database.db.select().from(scenarios);
    const answer = await call(solve, "/api/v1/solve", {}, { userId: alpha.members.reader.user.id, method: "POST", json: smallScenario() });
    expect(answer.status).toBe(200);
    const result = answer.body as { schema: string; priceOfAnarchy: number };
    expect(result.schema).toBe("equilibra/result@1");
    // Wardrop (1952) second principle: the optimum's cost bounds every rule's, so the ratio is ≥ 1.
    expect(result.priceOfAnarchy).toBeGreaterThanOrEqual(1 - 1e-9);
    expect(await database.db.select().from(scenarios)).toHaveLength(before.length);
  });

  it("names every invalid field with its path, and refuses anonymous callers", async () => {
    const broken = smallScenario();
    (broken.sources as Array<Record<string, unknown>>)[1].demand = { ortho: -2, derm: 1 };
    const answer = await call(solve, "/api/v1/solve", {}, { userId: alpha.members.reader.user.id, method: "POST", json: broken });
    expect(answer.status).toBe(400);
    expect((answer.body as { error: { issues: { path: string; message: string }[] } }).error.issues).toEqual([
      { path: "sources[1].demand.ortho", message: "must be a number ≥ 0 (referrals/week); got -2" },
    ]);
    expect((await call(solve, "/api/v1/solve", {}, { method: "POST", json: smallScenario() })).status).toBe(401);
  });
});

describe("import and export", () => {
  const practices = [
    "id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.ortho,demand.derm,outsideCost.ortho,outsideCost.derm",
    "ZZP101,North Quay Surgery,49.8,-30.3,3,8000,0.3,3,2,20,18",
    "ZZP102,South Quay Surgery,49.7,-30.2,7,7000,0.3,2,1,20,18",
  ];
  const sites = "id,name,lat,lon,sector\nZZS1,Teaching Hospital,49.82,-30.25,public";
  const capacities = "site,line,teams,ratePerTeam\nZZS1,ortho,3,3\nZZS1,derm,2,3";

  function files(practiceRows: string[]): FormData {
    const form = new FormData();
    form.append("practices", new File([practiceRows.join("\n")], "practices.csv", { type: "text/csv" }));
    form.append("sites", new File([sites], "sites.csv", { type: "text/csv" }));
    form.append("capacities", new File([capacities], "capacities.csv", { type: "text/csv" }));
    return form;
  }

  it("stores nothing when a row is broken, and lists every error with its line and field", async () => {
    const id = await importScenario(database.db, alpha.organisation.id, smallScenario("Import target"));
    const before = await exportScenario(database.db, alpha.organisation.id, id);
    const broken = [...practices, "ZZP103,Bad Row,ninety,-30.1,12,500,0.3,1,1,20,18"];
    const params = { org: alpha.organisation.slug, id: String(id) };
    const answer = await call(scenarioImport, `${listPath(alpha)}/${id}/import`, params, { userId: alpha.members.planner.user.id, method: "POST", form: files(broken) });
    expect(answer.status).toBe(400);
    expect(answer.body).toMatchObject({
      stored: false,
      errors: [
        { file: "practices.csv", line: 4, field: "lat", message: 'must be a latitude in degrees between -90 and 90; got "ninety"' },
        { file: "practices.csv", line: 4, field: "deprivationDecile", message: 'must be a whole number from 1 (most deprived) to 10; got "12"' },
      ],
    });
    expect(await exportScenario(database.db, alpha.organisation.id, id)).toEqual(before);

    // A preview of good files stores nothing either; the real import then replaces the inputs.
    const preview = new FormData();
    for (const [key, value] of files(practices).entries()) preview.append(key, value);
    preview.append("preview", "1");
    const previewed = await call(scenarioImport, `${listPath(alpha)}/${id}/import`, params, { userId: alpha.members.planner.user.id, method: "POST", form: preview });
    expect(previewed.body).toMatchObject({ stored: false, preview: true, errors: [], rowCounts: { practices: 2, sites: 1, capacities: 2 } });
    expect(await exportScenario(database.db, alpha.organisation.id, id)).toEqual(before);

    const stored = await call(scenarioImport, `${listPath(alpha)}/${id}/import`, params, { userId: alpha.members.planner.user.id, method: "POST", form: files(practices) });
    expect(stored.body).toMatchObject({ stored: true, errors: [] });
    const after = await exportScenario(database.db, alpha.organisation.id, id);
    expect(after?.sources.map((source) => source.id)).toEqual(["ZZP101", "ZZP102"]);
    expect(after?.providers.map((provider) => provider.id)).toEqual(["ZZS1"]);
    // What CSV does not carry is kept: the name, assumptions and data date.
    expect(after).toMatchObject({ name: "Import target", kmPerWeek: 15, dataDate: "2026-04-01" });
  });

  it("refuses a bad document on PUT and changes nothing", async () => {
    const id = await importScenario(database.db, alpha.organisation.id, smallScenario("Put target"));
    const before = await exportScenario(database.db, alpha.organisation.id, id);
    const broken = { ...smallScenario(), providers: [] };
    const answer = await call(scenarioOne, `${listPath(alpha)}/${id}`, { org: alpha.organisation.slug, id: String(id) }, { userId: alpha.members.planner.user.id, method: "PUT", json: broken });
    expect(answer.status).toBe(400);
    expect((answer.body as { error: { issues: { path: string }[] } }).error.issues[0].path).toBe("providers");
    expect(await exportScenario(database.db, alpha.organisation.id, id)).toEqual(before);
  });

  it("re-imports an exported JSON document to the identical scenario", async () => {
    const params = { org: alpha.organisation.slug, id: String(alphaScenario) };
    const exported = await call(scenarioExport, `${listPath(alpha)}/${alphaScenario}/export?format=json`, params, { userId: alpha.members.reader.user.id });
    expect(exported.headers.get("Content-Disposition")).toBe('attachment; filename="alpha-baseline.json"');
    // Sent as application/json, so the helper has parsed it already.
    const document = exported.body as Record<string, unknown>;
    const created = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, { userId: alpha.members.planner.user.id, method: "POST", json: document });
    expect(created.status).toBe(201);
    const copyId = (created.body as { id: number }).id;
    expect(await exportScenario(database.db, alpha.organisation.id, copyId)).toEqual(document);
  });

  it("re-imports the exported CSV files to the same inputs", async () => {
    const id = await importScenario(database.db, alpha.organisation.id, smallScenario("CSV round trip"));
    const before = await exportScenario(database.db, alpha.organisation.id, id);
    const params = { org: alpha.organisation.slug, id: String(id) };
    const form = new FormData();
    for (const [field, file] of [["practices", "practices.csv"], ["sites", "sites.csv"], ["capacities", "capacities.csv"], ["serviceLines", "service-lines.csv"]] as const) {
      const answer = await call(scenarioExport, `${listPath(alpha)}/${id}/export?format=csv&file=${file}`, params, { userId: alpha.members.reader.user.id });
      expect(answer.status, String(answer.body)).toBe(200);
      form.append(field, new File([answer.body as string], file, { type: "text/csv" }));
    }
    const stored = await call(scenarioImport, `${listPath(alpha)}/${id}/import`, params, { userId: alpha.members.planner.user.id, method: "POST", form });
    expect(stored.body).toMatchObject({ stored: true, errors: [] });
    expect(await exportScenario(database.db, alpha.organisation.id, id)).toEqual(before);
  });

  it("re-imports the demo region's exported CSV files exactly, keeping its periods and pathway stages", async () => {
    const demo = JSON.parse(readFileSync("seed/demo-scenario.json", "utf8"));
    const id = await importScenario(database.db, alpha.organisation.id, demo);
    const before = await exportScenario(database.db, alpha.organisation.id, id);
    expect(before?.periods?.length).toBeGreaterThan(0);
    const params = { org: alpha.organisation.slug, id: String(id) };
    const form = new FormData();
    for (const [field, file] of [["practices", "practices.csv"], ["sites", "sites.csv"], ["capacities", "capacities.csv"], ["serviceLines", "service-lines.csv"]] as const) {
      const answer = await call(scenarioExport, `${listPath(alpha)}/${id}/export?format=csv&file=${file}`, params, { userId: alpha.members.reader.user.id });
      form.append(field, new File([answer.body as string], file, { type: "text/csv" }));
    }
    const stored = await call(scenarioImport, `${listPath(alpha)}/${id}/import`, params, { userId: alpha.members.planner.user.id, method: "POST", form });
    expect(stored.body).toMatchObject({ stored: true, errors: [] });
    expect(await exportScenario(database.db, alpha.organisation.id, id)).toEqual(before);
  });

  it("saves a what-if as a copy that records its parent", async () => {
    const document = await exportScenario(database.db, alpha.organisation.id, alphaScenario);
    const created = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, {
      userId: alpha.members.planner.user.id,
      method: "POST",
      json: { scenario: { ...document, kmPerWeek: 30 }, name: "What-if: κ 30", parentId: alphaScenario },
    });
    expect(created.status).toBe(201);
    const [row] = await database.db.select().from(scenarios).where(eq(scenarios.id, (created.body as { id: number }).id));
    expect(row).toMatchObject({ name: "What-if: κ 30", parentId: alphaScenario, kmPerWeek: 30 });
    // A parent from another organisation is refused.
    const foreignParent = await call(scenarioList, listPath(alpha), { org: alpha.organisation.slug }, {
      userId: alpha.members.planner.user.id,
      method: "POST",
      json: { scenario: document, name: "Sneaky", parentId: betaScenario },
    });
    expect(foreignParent.status).toBe(400);
  });
});
