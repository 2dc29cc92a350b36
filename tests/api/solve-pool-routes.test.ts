/**
 * The API routes that solve, now that solves run on the worker pool: `POST /api/v1/solve` answers
 * what the in-thread solve answers (200, 400 with the same issues, 422), and a server whose workers
 * and queue are full answers 503 with `Retry-After` and a message at once — for a plain solve, for
 * a stored run (which then stores nothing) and for the capacity advisor.
 */
import { pathToFileURL } from "node:url";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { runs } from "~/db/schema";
import { importScenario } from "~/models/scenarios.server";
import { solveDocument } from "~/models/solve-document";
import type { SolveJobs } from "~/models/solve-jobs";
import { setSolvePool, SolvePool } from "~/models/solve-pool.server";
import * as advisor from "~/routes/api.v1.o.$org.scenarios.$id.advisor";
import * as scenarioRuns from "~/routes/api.v1.o.$org.scenarios.$id.runs";
import * as solve from "~/routes/api.v1.solve";
import { useAuthEnvironment } from "../auth/support/environment";
import { createTenant, type Tenant } from "../auth/support/fixtures";
import { useTestDatabase } from "../support/database";
import { setSubscription } from "../support/plans";
import { call, smallScenario } from "../workspace/support/fixtures";

type TestJobs = SolveJobs & { hold: { request: { gate: Int32Array }; answer: string } };

const database = useTestDatabase();
useAuthEnvironment();

let tenant: Tenant;
let scenarioId: number;
const pools: SolvePool<TestJobs>[] = [];

beforeAll(async () => {
  tenant = await createTenant("Pooled");
  await setSubscription(tenant.organisation.id, "region");
  scenarioId = await importScenario(database.db, tenant.organisation.id, smallScenario("Pooled baseline"));
});

afterAll(async () => {
  setSolvePool(null);
  await Promise.all(pools.map((pool) => pool.close()));
});

function usePool(options: { size: number; queueLimit: number }): SolvePool<TestJobs> {
  const pool = new SolvePool<TestJobs>({ ...options, timeoutMs: 120_000, entry: pathToFileURL(new URL("../models/support/misbehaving-solve-worker.ts", import.meta.url).pathname).href });
  pools.push(pool);
  setSolvePool(pool);
  return pool;
}

const solveAs = (json: unknown) => call(solve, "/api/v1/solve", {}, { userId: tenant.members.planner.user.id, method: "POST", json });

describe("POST /api/v1/solve on the pool", () => {
  it("answers the in-thread result, 400 with the same issues, and 422", async () => {
    usePool({ size: 1, queueLimit: 4 });
    const solved = await solveAs(smallScenario());
    expect(solved.status).toBe(200);
    expect(solved.headers.get("X-Solve-Milliseconds")).toMatch(/^\d+\.\d$/);
    const reference = solveDocument(smallScenario());
    if (!reference.ok) throw new Error("the small scenario should solve");
    expect(solved.body).toEqual(JSON.parse(JSON.stringify(reference.result)));

    const broken = smallScenario();
    (broken.providers as Array<{ lines: Record<string, Record<string, unknown>> }>)[0].lines.ortho.teams = 2.5;
    const invalid = await solveAs(broken);
    expect(invalid.status).toBe(400);
    const invalidReference = solveDocument(broken);
    if (invalidReference.ok) throw new Error("expected invalid input");
    expect(invalid.body).toEqual({ error: { status: 400, message: "The scenario is not valid.", issues: invalidReference.issues } });
    expect(invalidReference.issues).toEqual([{ path: "providers[0].lines.ortho.teams", message: "must be a whole number of teams from 1 to 10000; got 2.5" }]);

    // No private care and orthopaedics demand 20/week against 3 × 2.5 + 2 × 2 = 11.5/week: an M/M/c
    // system needs λ < cμ (Kleinrock 1975, Queueing Systems vol. 1; from memory).
    const captive = smallScenario();
    captive.sources = (captive.sources as Array<Record<string, unknown>>).map(({ outsideCost: _cost, outsideSpread: _spread, ...rest }, index) =>
      index === 0 ? { ...rest, demand: { ortho: 14.4, derm: 2 } } : rest,
    );
    const noSteadyState = await solveAs(captive);
    expect(noSteadyState.status).toBe(422);
    const issues = (noSteadyState.body as { error: { issues: { path: string; message: string }[] } }).error.issues;
    expect(issues).toEqual([{ path: "serviceLines.ortho", message: "demand 20.00/week exceeds capacity 11.50/week at ZZS1, ZZS2 by 8.50 with no outside option" }]);
  });
});

describe("a full pool", () => {
  it("answers 503 with Retry-After at once, for a solve, a run (which stores nothing) and the advisor", async () => {
    const pool = usePool({ size: 1, queueLimit: 0 });
    const shared = new Int32Array(new SharedArrayBuffer(4));
    const holding = pool.run("hold", { gate: shared });
    try {
      const busy = await solveAs(smallScenario());
      expect(busy.status).toBe(503);
      expect(Number(busy.headers.get("Retry-After"))).toBeGreaterThanOrEqual(1);
      const message = (busy.body as { error: { status: number; message: string } }).error;
      expect(message.status).toBe(503);
      expect(message.message).toMatch(/^The server is busy: its one solve worker is working and 0 solves are waiting\. Try again in about \d+ s\.$/);

      const before = await database.db.select({ id: runs.id }).from(runs).where(eq(runs.scenarioId, scenarioId));
      const run = await call(scenarioRuns, `/api/v1/o/${tenant.organisation.slug}/scenarios/${scenarioId}/runs`, { org: tenant.organisation.slug, id: String(scenarioId) }, {
        userId: tenant.members.planner.user.id,
        method: "POST",
        json: { label: "while busy" },
      });
      expect(run.status).toBe(503);
      expect(run.headers.get("Retry-After")).not.toBeNull();
      expect(await database.db.select({ id: runs.id }).from(runs).where(eq(runs.scenarioId, scenarioId))).toEqual(before);

      const advice = await call(advisor, `/api/v1/o/${tenant.organisation.slug}/scenarios/${scenarioId}/advisor`, { org: tenant.organisation.slug, id: String(scenarioId) }, {
        userId: tenant.members.planner.user.id,
        method: "POST",
        json: { extraTeams: 1 },
      });
      expect(advice.status).toBe(503);
      expect(advice.headers.get("Retry-After")).not.toBeNull();
    } finally {
      Atomics.store(shared, 0, 1);
      Atomics.notify(shared, 0);
    }
    expect(await holding).toBe("released");
    // With the worker free again the same run is stored.
    const stored = await call(scenarioRuns, `/api/v1/o/${tenant.organisation.slug}/scenarios/${scenarioId}/runs`, { org: tenant.organisation.slug, id: String(scenarioId) }, {
      userId: tenant.members.planner.user.id,
      method: "POST",
      json: { label: "after" },
    });
    expect(stored.status).toBe(201);
  });
});
