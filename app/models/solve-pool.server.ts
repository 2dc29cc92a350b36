/**
 * A small pool of worker threads that run the engine, so that a solve (a second or more for a
 * region of the demo's size) never blocks the web server's event loop and every other page with it.
 *
 * - Workers start when work arrives, up to `size`; an idle worker does not keep the process alive.
 * - Jobs wait in a bounded first-in-first-out queue; when it is full the job is refused at once
 *   (`SolvePoolError` with status 503 and a retry delay) instead of waiting without limit. Each
 *   busy worker is handed the next waiting job ahead of time, so it never sits idle waiting for
 *   the event loop to read its answer.
 * - A job running longer than `timeoutMs` is stopped by terminating its worker (a synchronous solve
 *   cannot be interrupted otherwise) and refused with 504; the worker is replaced.
 * - A worker that dies (an uncaught error, running out of memory, exiting) fails its job with 500
 *   and is replaced; the jobs queued behind it are not lost.
 *
 * Each worker runs `solve-worker.ts` from source through tsx's loader, in development, tests and
 * production alike (DEVELOPERS.md, "Solves run on worker threads, from source").
 */
import { existsSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { Worker } from "node:worker_threads";
import { config } from "~/config.server";
import { startTypeScriptWorker } from "~/engine/typescript-worker";
import { rebuildThrown, type JobMap, type JobMessage, type JobReply, type SolveJobs } from "./solve-jobs";

/** Why the pool could not give an answer (the job itself never threw). */
export class SolvePoolError extends Error {
  constructor(
    readonly status: 500 | 503 | 504,
    message: string,
    /** For 503: when a retry is likely to find room, in whole seconds. */
    readonly retryAfterSeconds?: number,
  ) {
    super(message);
    this.name = "SolvePoolError";
  }
}

export interface SolvePoolOptions {
  /** Worker threads at most (≥ 1). */
  size: number;
  /** Jobs that may wait for a worker (≥ 0); beyond this a job is refused with 503. */
  queueLimit: number;
  /** A job running longer than this is stopped and refused with 504. */
  timeoutMs: number;
  /** The worker's module as a file URL; `solve-worker.ts` by default. Tests pass workers of their own. */
  entry?: string;
}

export interface SolvePoolStats {
  workers: number;
  busy: number;
  queued: number;
  /** Workers that died or were stopped on a timeout since the pool started. */
  replaced: number;
}

interface Job {
  id: number;
  kind: string;
  request: unknown;
  resolve(answer: unknown): void;
  reject(error: Error): void;
}

interface Slot {
  worker: Worker;
  /** The job the worker is working on. */
  running: Job | null;
  /** The job posted to the worker ahead of time, which it starts when `running` ends. */
  next: Job | null;
  startedAt: number;
  timer: NodeJS.Timeout | null;
  /** Set when the pool itself ends the worker, so its exit is not taken for a crash. */
  retiring: boolean;
  lastError: Error | null;
}

/**
 * `app/models/solve-worker.ts`, found by walking up from this module: it sits beside it in
 * development and tests, and two or three levels above the bundle chunk in production
 * (`build/server/…`), so no single relative path fits both.
 */
export function defaultWorkerEntry(): string {
  const start = path.dirname(fileURLToPath(import.meta.url));
  for (let directory = start; ; directory = path.dirname(directory)) {
    const candidate = path.join(directory, "app", "models", "solve-worker.ts");
    if (existsSync(candidate)) return pathToFileURL(candidate).href;
    if (path.dirname(directory) === directory) {
      throw new Error(`The solve worker's entry app/models/solve-worker.ts was not found above ${start}: the server needs the project's app/ folder beside its build.`);
    }
  }
}

export class SolvePool<Jobs extends JobMap = SolveJobs> {
  private readonly slots: Slot[] = [];
  /** Waiting jobs not yet handed to a worker (first in, first out). */
  private readonly queue: Job[] = [];
  private readonly entry: string;
  private nextId = 1;
  private replaced = 0;
  private closed = false;
  /** Recent job duration (exponential average), for the retry delay offered with a 503. */
  private typicalJobMs = 1000;

  constructor(private readonly options: SolvePoolOptions) {
    if (!(Number.isInteger(options.size) && options.size >= 1)) throw new RangeError(`size must be a whole number ≥ 1, got ${options.size}`);
    if (!(Number.isInteger(options.queueLimit) && options.queueLimit >= 0)) throw new RangeError(`queueLimit must be a whole number ≥ 0, got ${options.queueLimit}`);
    if (!(options.timeoutMs > 0)) throw new RangeError(`timeoutMs must be > 0, got ${options.timeoutMs}`);
    this.entry = options.entry ?? defaultWorkerEntry();
  }

  /**
   * Runs one job on a worker. Resolves with the job's answer; rejects with the error the job threw
   * (rebuilt as its class) or with a `SolvePoolError` (queue full, timeout, worker died, closed).
   */
  run<Kind extends keyof Jobs & string>(kind: Kind, request: Jobs[Kind]["request"]): Promise<Jobs[Kind]["answer"]> {
    return new Promise((resolve, reject) => {
      if (this.closed) return reject(new SolvePoolError(503, "The server is shutting down; no solve was started."));
      const job: Job = { id: this.nextId++, kind, request, resolve: resolve as (answer: unknown) => void, reject };
      const idle = this.slots.find((slot) => slot.running === null);
      if (idle) return this.start(idle, job);
      if (this.slots.length < this.options.size) return this.start(this.startWorker(), job);
      const waiting = this.waiting();
      if (waiting < this.options.queueLimit) {
        this.queue.push(job);
        this.handAhead();
        return;
      }
      const retryAfterSeconds = Math.max(1, Math.ceil((this.typicalJobMs * (waiting + 1)) / this.options.size / 1000));
      reject(
        new SolvePoolError(
          503,
          `The server is busy: ${this.options.size === 1 ? "its one solve worker is" : `all ${this.options.size} solve workers are`} working and ${waiting} ${waiting === 1 ? "solve is" : "solves are"} waiting. Try again in about ${retryAfterSeconds} s.`,
          retryAfterSeconds,
        ),
      );
    });
  }

  stats(): SolvePoolStats {
    return { workers: this.slots.length, busy: this.slots.filter((slot) => slot.running !== null).length, queued: this.waiting(), replaced: this.replaced };
  }

  /** Refuses waiting and running jobs with 503 and stops every worker. */
  async close(): Promise<void> {
    this.closed = true;
    const slots = this.slots.splice(0);
    for (const slot of slots) {
      slot.retiring = true;
      if (slot.timer) clearTimeout(slot.timer);
      slot.running?.reject(new SolvePoolError(503, "The server is shutting down; the solve was stopped."));
      slot.next?.reject(new SolvePoolError(503, "The server is shutting down; the solve was not started."));
      slot.running = slot.next = null;
    }
    for (const job of this.queue.splice(0)) job.reject(new SolvePoolError(503, "The server is shutting down; the solve was not started."));
    await Promise.all(slots.map((slot) => slot.worker.terminate()));
  }

  /** Jobs accepted but not running: in the queue, or handed ahead to a busy worker. */
  private waiting(): number {
    return this.queue.length + this.slots.filter((slot) => slot.next !== null).length;
  }

  private startWorker(): Slot {
    const worker = startTypeScriptWorker(this.entry);
    const slot: Slot = { worker, running: null, next: null, startedAt: 0, timer: null, retiring: false, lastError: null };
    this.slots.push(slot);
    worker.on("message", (reply: JobReply) => this.settle(slot, reply));
    worker.on("messageerror", (error) => this.settle(slot, { id: slot.running?.id ?? 0, thrown: { name: "SolvePoolError", message: error.message } }));
    worker.on("error", (error) => {
      slot.lastError = error;
    });
    worker.on("exit", (code) => this.exited(slot, code));
    return slot;
  }

  private post(slot: Slot, job: Job): void {
    slot.worker.postMessage({ id: job.id, kind: job.kind, request: job.request } satisfies JobMessage<JobMap, string>);
  }

  /** Marks `job` as running on `slot` (already posted when it was handed ahead) and starts its clock. */
  private begin(slot: Slot, job: Job): void {
    slot.running = job;
    slot.startedAt = performance.now();
    slot.worker.ref();
    slot.timer = setTimeout(() => this.timedOut(slot), this.options.timeoutMs);
  }

  private start(slot: Slot, job: Job): void {
    this.begin(slot, job);
    this.post(slot, job);
  }

  /**
   * Gives each busy worker the next waiting job before its current one ends, so it starts that
   * job the moment it posts its answer, instead of idling until the web server's event loop (busy
   * with pages and other requests) gets round to reading the answer. One job ahead at most, so a
   * long job delays at most one other.
   */
  private handAhead(): void {
    for (const slot of this.slots) {
      if (this.queue.length === 0) return;
      if (slot.running !== null && slot.next === null && !slot.retiring) {
        slot.next = this.queue.shift()!;
        this.post(slot, slot.next);
      }
    }
  }

  private settle(slot: Slot, reply: JobReply): void {
    const job = slot.running;
    if (!job || job.id !== reply.id) return;
    if (slot.timer) clearTimeout(slot.timer);
    slot.timer = null;
    slot.running = null;
    this.typicalJobMs = 0.8 * this.typicalJobMs + 0.2 * (performance.now() - slot.startedAt);
    if (slot.next) {
      // The worker has already started it.
      const next = slot.next;
      slot.next = null;
      this.begin(slot, next);
    } else if (this.queue.length > 0) {
      this.start(slot, this.queue.shift()!);
    } else {
      slot.worker.unref();
    }
    this.handAhead();
    if (!("thrown" in reply)) job.resolve(reply.answer);
    else if (reply.thrown.name === "SolvePoolError") job.reject(new SolvePoolError(500, `The solver's answer could not be read: ${reply.thrown.message}`));
    else job.reject(rebuildThrown(reply.thrown));
  }

  private timedOut(slot: Slot): void {
    const job = slot.running;
    if (!job) return;
    slot.running = null;
    slot.timer = null;
    job.reject(
      new SolvePoolError(504, `The solve did not finish within ${Number((this.options.timeoutMs / 1000).toPrecision(3))} s and was stopped (SOLVE_TIMEOUT_SECONDS). Solve fewer rules or only the stationary problem (periods=0).`),
    );
    slot.retiring = true;
    void slot.worker.terminate();
    this.replace(slot);
  }

  private exited(slot: Slot, code: number): void {
    if (slot.retiring) return;
    const job = slot.running;
    if (job) {
      if (slot.timer) clearTimeout(slot.timer);
      slot.running = null;
      const cause = slot.lastError ? `: ${slot.lastError.message}` : ` (exit code ${code})`;
      job.reject(new SolvePoolError(500, `The solver stopped unexpectedly while working on this request${cause}. It has been restarted; the request can be sent again.`));
    }
    this.replace(slot);
  }

  /**
   * Forgets a worker that is gone or being stopped: the job handed ahead to it never started, so
   * it goes back to the front of the queue, and fresh workers take the waiting jobs.
   */
  private replace(slot: Slot): void {
    const index = this.slots.indexOf(slot);
    if (index >= 0) this.slots.splice(index, 1);
    this.replaced++;
    if (slot.next) this.queue.unshift(slot.next);
    slot.next = null;
    while (!this.closed && this.queue.length > 0 && this.slots.length < this.options.size) this.start(this.startWorker(), this.queue.shift()!);
    this.handAhead();
  }
}

/** Worker threads by default: one per CPU but one, left for the event loop (pages, the database). */
export function defaultSolveWorkers(): number {
  return Math.max(1, os.availableParallelism() - 1);
}

let shared: SolvePool | null = null;

/** The server's pool, sized from SOLVE_WORKERS, SOLVE_QUEUE_LIMIT and SOLVE_TIMEOUT_SECONDS on first use. */
export function solvePool(): SolvePool {
  if (!shared) {
    const settings = config();
    shared = new SolvePool({
      size: settings.SOLVE_WORKERS ?? defaultSolveWorkers(),
      queueLimit: settings.SOLVE_QUEUE_LIMIT,
      timeoutMs: settings.SOLVE_TIMEOUT_SECONDS * 1000,
    });
  }
  return shared;
}

/** Tests put a pool of their own in place (null: the next use builds one from the configuration). */
export function setSolvePool(pool: SolvePool | null): SolvePool | null {
  const previous = shared;
  shared = pool;
  return previous;
}
