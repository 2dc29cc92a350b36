/**
 * Whole runs (every site and practice) through the workspace and the runs API follow the same rule
 * as the outlooks: access officers see published runs only, provider managers none (they read their
 * own sites through the site outlook), planners, administrators and readers every run.
 */
import { beforeAll, describe, expect, it } from "vitest";
import * as runApi from "~/routes/api.v1.o.$org.runs.$runId";
import * as publicationApi from "~/routes/api.v1.o.$org.runs.$runId.publication";
import * as runsApi from "~/routes/api.v1.o.$org.scenarios.$id.runs";
import * as workspacePage from "~/routes/o.$org.scenarios.$id";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { useTestDatabase } from "../support/database";
import { call } from "../workspace/support/fixtures";
import { seasonalScenario, storedRun } from "./support";

const database = useTestDatabase();
useAuthEnvironment();

let tenant: Tenant;
let scenarioId: number;
let runId: number;

beforeAll(async () => {
  tenant = await createTenant("Gamma", ["ZZS1"]);
  ({ scenarioId, runId } = await storedRun(database.db, tenant.organisation.id, tenant.members.planner.user.id, seasonalScenario("Gamma seasons")));
});

const slug = () => tenant.organisation.slug;
const userOf = (role: keyof Tenant["members"]) => tenant.members[role].user.id;

async function runStatus(role: keyof Tenant["members"]) {
  return (await call(runApi, `/api/v1/o/${slug()}/runs/${runId}`, { org: slug(), runId: String(runId) }, { userId: userOf(role) })).status;
}

async function listedRuns(role: keyof Tenant["members"]) {
  const answer = await call(runsApi, `/api/v1/o/${slug()}/scenarios/${scenarioId}/runs`, { org: slug(), id: String(scenarioId) }, { userId: userOf(role) });
  expect(answer.status).toBe(200);
  return (answer.body as { runs: { id: number }[] }).runs.map((run) => run.id);
}

async function workspaceRun(role: keyof Tenant["members"]) {
  const answer = await call(workspacePage, `/o/${slug()}/scenarios/${scenarioId}`, { org: slug(), id: String(scenarioId) }, { userId: userOf(role) });
  expect(answer.status).toBe(200);
  return (answer.body as { run: unknown }).run;
}

describe("an unpublished run", () => {
  it("is open to planners, administrators and readers", async () => {
    for (const role of ["planner", "administrator", "reader"] as const) {
      expect(await runStatus(role)).toBe(200);
      expect(await listedRuns(role)).toEqual([runId]);
    }
  });

  it("is hidden from access officers and provider managers: 404, absent from lists and from the workspace", async () => {
    for (const role of ["access_officer", "provider_manager"] as const) {
      expect(await runStatus(role)).toBe(404);
      expect(await listedRuns(role)).toEqual([]);
      expect(await workspaceRun(role)).toBeNull();
    }
  });
});

describe("a published run", () => {
  beforeAll(async () => {
    const answer = await call(publicationApi, `/api/v1/o/${slug()}/runs/${runId}/publication`, { org: slug(), runId: String(runId) }, {
      method: "PUT",
      userId: userOf("planner"),
    });
    expect(answer.status).toBe(200);
  });

  it("opens to access officers", async () => {
    expect(await runStatus("access_officer")).toBe(200);
    expect(await listedRuns("access_officer")).toEqual([runId]);
  });

  it("stays closed as a whole to provider managers, whose sites' figures are in the site outlook", async () => {
    expect(await runStatus("provider_manager")).toBe(404);
    expect(await workspaceRun("provider_manager")).toBeNull();
  });
});
