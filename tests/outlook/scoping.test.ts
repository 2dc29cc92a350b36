/**
 * Who sees which outlook, enforced on the server: provider managers and patient-access officers see
 * published runs only, and a provider manager only their own sites — by page URL and by API, with
 * session or token — and anything outside answers 404 like something that does not exist.
 */
import { beforeAll, describe, expect, it } from "vitest";
import { createApiToken } from "~/models/api-tokens.server";
import { listAuditEntries } from "~/models/audit-log-view.server";
import * as publicationApi from "~/routes/api.v1.o.$org.runs.$runId.publication";
import * as balkingApi from "~/routes/api.v1.o.$org.outlook.balking";
import * as sitesApi from "~/routes/api.v1.o.$org.outlook.sites";
import * as siteApi from "~/routes/api.v1.o.$org.outlook.sites.$siteId";
import * as auditPage from "~/routes/o.$org.audit";
import * as balkingPage from "~/routes/o.$org.outlook.balking";
import * as briefPage from "~/routes/o.$org.runs.$runId.brief";
import * as runsPage from "~/routes/o.$org.runs";
import * as sitesPage from "~/routes/o.$org.outlook.sites";
import * as sitePage from "~/routes/o.$org.outlook.sites.$siteId";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { useTestDatabase } from "../support/database";
import { setSubscription } from "../support/plans";
import { call } from "../workspace/support/fixtures";
import { seasonalScenario, storedRun } from "./support";

const database = useTestDatabase();
useAuthEnvironment();

let alpha: Tenant;
let beta: Tenant;
let runId: number;
let betaRunId: number;

beforeAll(async () => {
  // Alpha's provider manager looks after ZZS2 only.
  alpha = await createTenant("Alpha", ["ZZS2"]);
  beta = await createTenant("Beta");
  // Personal API tokens need a plan with API access.
  await setSubscription(alpha.organisation.id, "region");
  ({ runId } = await storedRun(database.db, alpha.organisation.id, alpha.members.planner.user.id, seasonalScenario("Alpha seasons")));
  ({ runId: betaRunId } = await storedRun(database.db, beta.organisation.id, beta.members.planner.user.id, seasonalScenario("Beta seasons")));
});

const org = () => ({ org: alpha.organisation.slug });
const sitesPath = (query = "") => `/o/${alpha.organisation.slug}/outlook/sites?run=${runId}${query}`;
const siteApiPath = (site: string) => `/api/v1/o/${alpha.organisation.slug}/outlook/sites/${site}?run=${runId}`;

async function publish(published: boolean) {
  const answer = await call(publicationApi, `/api/v1/o/${alpha.organisation.slug}/runs/${runId}/publication`, { ...org(), runId: String(runId) }, {
    method: published ? "PUT" : "DELETE",
    userId: alpha.members.planner.user.id,
  });
  expect(answer.status).toBe(200);
}

describe("before publishing", () => {
  it("provider managers and access officers get 404 for the run, by page and by API; planners see it", async () => {
    const manager = alpha.members.provider_manager.user.id;
    expect((await call(sitesPage, sitesPath(), org(), { userId: manager })).status).toBe(404);
    expect((await call(sitesApi, `/api/v1/o/${alpha.organisation.slug}/outlook/sites?run=${runId}`, org(), { userId: manager })).status).toBe(404);
    const officer = alpha.members.access_officer.user.id;
    expect((await call(balkingPage, `/o/${alpha.organisation.slug}/outlook/balking?run=${runId}`, org(), { userId: officer })).status).toBe(404);
    expect((await call(briefPage, `/o/${alpha.organisation.slug}/runs/${runId}/brief`, { ...org(), runId: String(runId) }, { userId: officer })).status).toBe(404);
    // Without ?run= there is simply nothing to show them yet.
    const empty = await call(sitesPage, `/o/${alpha.organisation.slug}/outlook/sites`, org(), { userId: manager });
    expect(empty.status).toBe(200);
    expect((empty.body as { outlook: unknown }).outlook).toBeNull();
    const planner = await call(sitesPage, sitesPath(), org(), { userId: alpha.members.planner.user.id });
    expect(planner.status).toBe(200);
    const runs = await call(runsPage, `/o/${alpha.organisation.slug}/runs`, org(), { userId: officer });
    expect((runs.body as { runs: unknown[] }).runs).toEqual([]);
  });

  it("only planners and administrators may publish", async () => {
    const answer = await call(publicationApi, `/api/v1/o/${alpha.organisation.slug}/runs/${runId}/publication`, { ...org(), runId: String(runId) }, {
      method: "PUT",
      userId: alpha.members.provider_manager.user.id,
    });
    expect(answer.status).toBe(403);
  });
});

describe("after publishing", () => {
  beforeAll(() => publish(true));

  it("records the publication in the audit log", async () => {
    const entries = await listAuditEntries(alpha.organisation.id, { kind: "publishing" });
    expect(entries.some((entry) => entry.action === "run.published" && entry.target === `run:${runId}`)).toBe(true);
  });

  it("a provider manager sees only their own site, on the list page and in the API", async () => {
    const manager = alpha.members.provider_manager.user.id;
    const page = await call(sitesPage, sitesPath(), org(), { userId: manager });
    expect(page.status).toBe(200);
    const summaries = (page.body as { outlook: { summaries: { siteId: string }[]; sites: { id: string }[] } }).outlook;
    expect(new Set(summaries.summaries.map((row) => row.siteId))).toEqual(new Set(["ZZS2"]));
    expect(summaries.sites.map((site) => site.id)).toEqual(["ZZS2"]);
    const api = await call(sitesApi, `/api/v1/o/${alpha.organisation.slug}/outlook/sites?run=${runId}`, org(), { userId: manager });
    expect(new Set((api.body as { rows: { siteId: string }[] }).rows.map((row) => row.siteId))).toEqual(new Set(["ZZS2"]));
  });

  it("another site's outlook by URL or API answers 404; their own answers 200", async () => {
    const manager = alpha.members.provider_manager.user.id;
    const other = await call(sitePage, `/o/${alpha.organisation.slug}/outlook/sites/ZZS1?run=${runId}`, { ...org(), siteId: "ZZS1" }, { userId: manager });
    expect(other.status).toBe(404);
    const own = await call(sitePage, `/o/${alpha.organisation.slug}/outlook/sites/ZZS2?run=${runId}`, { ...org(), siteId: "ZZS2" }, { userId: manager });
    expect(own.status).toBe(200);
    expect((await call(siteApi, siteApiPath("ZZS1"), { ...org(), siteId: "ZZS1" }, { userId: manager })).status).toBe(404);
    const { token } = await createApiToken(alpha.organisation.id, manager, "site tool");
    expect((await call(siteApi, siteApiPath("ZZS1"), { ...org(), siteId: "ZZS1" }, { token })).status).toBe(404);
    const csv = await call(siteApi, `${siteApiPath("ZZS1")}&format=csv`, { ...org(), siteId: "ZZS1" }, { token });
    expect(csv.status).toBe(404);
    expect(String(csv.body)).not.toContain("ZZS1,");
    const mine = await call(siteApi, siteApiPath("ZZS2"), { ...org(), siteId: "ZZS2" }, { token });
    expect(mine.status).toBe(200);
    // A site no run has is the same 404 (nothing tells the two apart).
    expect((await call(siteApi, siteApiPath("ZZS9"), { ...org(), siteId: "ZZS9" }, { userId: alpha.members.planner.user.id })).status).toBe(404);
  });

  it("roles: access officers read balking but not site inflow; provider managers the reverse; nobody from another organisation", async () => {
    const officer = alpha.members.access_officer.user.id;
    expect((await call(balkingPage, `/o/${alpha.organisation.slug}/outlook/balking?run=${runId}`, org(), { userId: officer })).status).toBe(200);
    expect((await call(sitesPage, sitesPath(), org(), { userId: officer })).status).toBe(403);
    const manager = alpha.members.provider_manager.user.id;
    expect((await call(balkingPage, `/o/${alpha.organisation.slug}/outlook/balking?run=${runId}`, org(), { userId: manager })).status).toBe(403);
    expect((await call(balkingApi, `/api/v1/o/${alpha.organisation.slug}/outlook/balking?run=${runId}`, org(), { userId: manager })).status).toBe(403);
    expect((await call(briefPage, `/o/${alpha.organisation.slug}/runs/${runId}/brief`, { ...org(), runId: String(runId) }, { userId: manager })).status).toBe(403);
    // Beta's administrator: not a member of alpha → 404; alpha's run under beta's slug → 404.
    const stranger = beta.members.administrator.user.id;
    expect((await call(sitesPage, sitesPath(), org(), { userId: stranger })).status).toBe(404);
    const crossed = await call(sitesPage, `/o/${beta.organisation.slug}/outlook/sites?run=${runId}`, { org: beta.organisation.slug }, { userId: stranger });
    expect(crossed.status).toBe(404);
    const betaOwn = await call(sitesPage, `/o/${beta.organisation.slug}/outlook/sites?run=${betaRunId}`, { org: beta.organisation.slug }, { userId: stranger });
    expect(betaOwn.status).toBe(200);
  });

  it("token use and exports show in the administrators' audit log; others may not read it", async () => {
    const manager = alpha.members.provider_manager.user.id;
    const { token } = await createApiToken(alpha.organisation.id, manager, "export tool");
    const csv = await call(sitesApi, `/api/v1/o/${alpha.organisation.slug}/outlook/sites?run=${runId}&format=csv`, org(), { token });
    expect(csv.status).toBe(200);
    const audit = await call(auditPage, `/o/${alpha.organisation.slug}/audit`, org(), { userId: alpha.members.administrator.user.id });
    expect(audit.status).toBe(200);
    const actions = (audit.body as { entries: { action: string; detail: Record<string, unknown> }[] }).entries.map((entry) => entry.action);
    expect(actions).toContain("outlook.exported");
    expect(actions).toContain("api_token.used");
    expect(actions).toContain("run.published");
    const tokens = (audit.body as { tokens: { name: string; lastUsedAt: string | null }[] }).tokens;
    expect(tokens.find((entry) => entry.name === "export tool")?.lastUsedAt).not.toBeNull();
    const exportsOnly = await call(auditPage, `/o/${alpha.organisation.slug}/audit?kind=exports`, org(), { userId: alpha.members.administrator.user.id });
    expect((exportsOnly.body as { entries: { action: string }[] }).entries.every((entry) => entry.action.endsWith(".exported"))).toBe(true);
    expect((await call(auditPage, `/o/${alpha.organisation.slug}/audit`, org(), { userId: alpha.members.planner.user.id })).status).toBe(403);
  });

  it("withdrawing the run hides it again", async () => {
    await publish(false);
    expect((await call(sitesPage, sitesPath(), org(), { userId: alpha.members.provider_manager.user.id })).status).toBe(404);
    const entries = await listAuditEntries(alpha.organisation.id, { kind: "publishing" });
    expect(entries[0]).toMatchObject({ action: "run.unpublished", target: `run:${runId}` });
  });
});
