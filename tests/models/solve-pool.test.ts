/**
 * The solve pool (app/models/solve-pool.server.ts): answers from worker threads equal the in-thread
 * solve, bad input and models without a steady state keep their statuses and issues, a full queue
 * is refused at once with a retry delay, and a worker that dies or overruns is replaced without
 * losing the jobs queued behind it. Nothing here waits on a clock: jobs that must stay busy hold a
 * shared gate until the test releases it (tests/models/support/misbehaving-solve-worker.ts).
 */
import { readFileSync } from "node:fs";
import { pathToFileURL } from "node:url";
import { afterAll, describe, expect, it } from "vitest";
import { solveDocument } from "~/models/solve-document";
import type { SolveJobs } from "~/models/solve-jobs";
import { SolvePool, SolvePoolError } from "~/models/solve-pool.server";
import { smallScenario } from "../workspace/support/fixtures";

type TestJobs = SolveJobs & {
  crash: { request: { exitCode: number }; answer: never };
  hold: { request: { gate: Int32Array }; answer: string };
};

const MISBEHAVING = pathToFileURL(new URL("./support/misbehaving-solve-worker.ts", import.meta.url).pathname).href;
const demo: unknown = JSON.parse(readFileSync("seed/demo-scenario.json", "utf8"));

const pools: SolvePool<TestJobs>[] = [];
function testPool(options: { size: number; queueLimit: number; timeoutMs?: number; entry?: string }): SolvePool<TestJobs> {
  const pool = new SolvePool<TestJobs>({ timeoutMs: 120_000, entry: MISBEHAVING, ...options });
  pools.push(pool);
  return pool;
}
afterAll(async () => {
  await Promise.all(pools.map((pool) => pool.close()));
});

function gate(): { gate: Int32Array; open(): void } {
  const shared = new Int32Array(new SharedArrayBuffer(4));
  return {
    gate: shared,
    open() {
      Atomics.store(shared, 0, 1);
      Atomics.notify(shared, 0);
    },
  };
}

async function refusal(promise: Promise<unknown>): Promise<SolvePoolError> {
  const error = await promise.then(
    () => null,
    (thrown: unknown) => thrown,
  );
  if (!(error instanceof SolvePoolError)) throw new Error(`expected a SolvePoolError, got ${String(error)}`);
  return error;
}

/** The no-steady-state case: orthopaedics demand raised above the two sites' capacity, no private care. */
function captiveScenario(): Record<string, unknown> {
  const scenario = smallScenario("Captive demand");
  scenario.sources = (scenario.sources as Array<Record<string, unknown>>).map((source, index) => {
    const { outsideCost: _cost, outsideSpread: _spread, ...rest } = source;
    return index === 0 ? { ...rest, demand: { ortho: 6, derm: 2 } } : rest;
  });
  return scenario;
}

describe("answers from the pool", () => {
  it("equal the in-thread solve of the demo scenario, every period included", { timeout: 180_000 }, async () => {
    const pool = testPool({ size: 1, queueLimit: 0 });
    const pooled = await pool.run("solve", { input: demo, choices: {} });
    const inThread = solveDocument(demo);
    if (!pooled.ok || !inThread.ok) throw new Error("the demo scenario should solve");
    expect(pooled.result.periods?.length).toBe(12);
    // Structured clone keeps every number as it was (JSON would not: Infinity and NaN become null).
    expect(pooled.result).toEqual(inThread.result);
  });

  it("keep 400 and the same issues for invalid input", async () => {
    const pool = testPool({ size: 1, queueLimit: 0 });
    const broken = smallScenario();
    (broken.sources as Array<Record<string, unknown>>)[1].demand = { ortho: -2, derm: 1 };
    const pooled = await pool.run("solve", { input: broken, choices: {} });
    expect(pooled).toEqual(solveDocument(broken));
    expect(pooled).toEqual({
      ok: false,
      status: 400,
      error: "The scenario is not valid.",
      issues: [{ path: "sources[1].demand.ortho", message: "must be a number ≥ 0 (referrals/week); got -2" }],
    });
  });

  it("keep 422 with the shortfall when demand exceeds capacity and nobody can go private", async () => {
    const pool = testPool({ size: 1, queueLimit: 0 });
    const pooled = await pool.run("solve", { input: captiveScenario(), choices: {} });
    expect(pooled).toEqual(solveDocument(captiveScenario()));
    if (pooled.ok) throw new Error("expected no steady state");
    expect(pooled.status).toBe(422);
    // An M/M/c queue has a steady state only when λ < cμ (Kleinrock 1975, Queueing Systems vol. 1,
    // the M/M/m system; from memory): orthopaedics demand 6 + 2.5 + 3.1 = 11.6/week against
    // 3 × 2.5 + 2 × 2 = 11.5/week of capacity leaves 0.1/week unserved.
    expect(pooled.issues).toEqual([{ path: "serviceLines.ortho", message: "demand 11.60/week exceeds capacity 11.50/week at ZZS1, ZZS2 by 0.10 with no outside option" }]);
  });

  it("rebuild an engine error thrown in the worker as its own class", async () => {
    const pool = testPool({ size: 1, queueLimit: 0 });
    const error = await pool.run("sensitivity", { document: smallScenario(), options: { lines: ["cardio"] } }).then(
      () => null,
      (thrown: unknown) => thrown,
    );
    expect(error).toBeInstanceOf(RangeError);
    expect((error as RangeError).message).toBe('lines: unknown service line "cardio" (known: ortho, derm)');
  });
});

describe("a bounded queue", () => {
  it("refuses a job at once with 503 and a retry delay when the workers and the queue are full", async () => {
    const pool = testPool({ size: 1, queueLimit: 2 });
    const held = gate();
    const running = pool.run("hold", { gate: held.gate });
    // The first waiting job is handed to the busy worker ahead of time, the second stays queued.
    const waiting = [pool.run("solve", { input: smallScenario(), choices: { periods: false } }), pool.run("solve", { input: captiveScenario(), choices: {} })];
    expect(pool.stats()).toEqual({ workers: 1, busy: 1, queued: 2, replaced: 0 });

    const refused = await refusal(pool.run("solve", { input: smallScenario(), choices: {} }));
    expect(refused.status).toBe(503);
    expect(refused.message).toMatch(/^The server is busy: its one solve worker is working and 2 solves are waiting\. Try again in about \d+ s\.$/);
    expect(refused.retryAfterSeconds).toBeGreaterThanOrEqual(1);

    held.open();
    expect(await running).toBe("released");
    const [first, second] = await Promise.all(waiting);
    expect(first.ok).toBe(true);
    expect(second).toEqual(solveDocument(captiveScenario()));
    expect(pool.stats()).toEqual({ workers: 1, busy: 0, queued: 0, replaced: 0 });
  });
});

describe("workers that fail", () => {
  it("replaces a worker that dies, fails only its job with 500, and runs the jobs queued behind it", async () => {
    const pool = testPool({ size: 1, queueLimit: 2 });
    const crashed = pool.run("crash", { exitCode: 3 });
    const queued = pool.run("solve", { input: smallScenario(), choices: { periods: false } });

    const error = await refusal(crashed);
    expect(error.status).toBe(500);
    expect(error.message).toBe("The solver stopped unexpectedly while working on this request (exit code 3). It has been restarted; the request can be sent again.");
    const answer = await queued;
    expect(answer).toEqual({ ...solveDocument(smallScenario(), { periods: false }), durationMs: expect.any(Number) });
    expect(pool.stats()).toMatchObject({ workers: 1, busy: 0, queued: 0, replaced: 1 });
  });

  it("stops a job past its time limit with 504 and starts the next one on a fresh worker", async () => {
    const pool = testPool({ size: 1, queueLimit: 1, timeoutMs: 200 });
    // Neither gate is ever opened: both jobs overrun, whatever the machine's speed.
    const overrun = pool.run("hold", { gate: gate().gate });
    const next = pool.run("hold", { gate: gate().gate });
    const error = await refusal(overrun);
    expect(error.status).toBe(504);
    expect(error.message).toBe("The solve did not finish within 0.2 s and was stopped (SOLVE_TIMEOUT_SECONDS). Solve fewer rules or only the stationary problem (periods=0).");
    // The stopped worker is gone and the queued job already runs on its replacement.
    expect(pool.stats()).toEqual({ workers: 1, busy: 1, queued: 0, replaced: 1 });
    expect((await refusal(next)).status).toBe(504);
    expect(pool.stats()).toEqual({ workers: 0, busy: 0, queued: 0, replaced: 2 });
  });

  it("fails a job with 500 naming the cause when its worker cannot start", async () => {
    const missing = pathToFileURL(new URL("./support/no-such-worker.ts", import.meta.url).pathname).href;
    const pool = testPool({ size: 1, queueLimit: 0, entry: missing });
    const error = await refusal(pool.run("solve", { input: smallScenario(), choices: {} }));
    expect(error.status).toBe(500);
    expect(error.message).toContain("no-such-worker.ts");
    expect(pool.stats()).toMatchObject({ workers: 0, replaced: 1 });
  });
});
