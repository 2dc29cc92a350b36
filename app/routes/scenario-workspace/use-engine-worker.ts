/**
 * The engine in a Web Worker for what-ifs: the page posts a scenario document and gets the result
 * back without a round trip to the server. One worker lives as long as the page (its module and
 * the engine's compiled code stay warm); requests go through a `LatestOnlyQueue`, so only the
 * latest request's answer is shown and a dragged slider never queues up stale solves.
 */
import { useCallback, useEffect, useRef, useState } from "react";
import type { WorkerRequest, WorkerResponse } from "~/engine/worker";
import { LatestOnlyQueue } from "./latest-only-queue";

export const WHAT_IF_RULES: NonNullable<WorkerRequest["rules"]> = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare"];

export type WorkerState =
  | { status: "idle" }
  | { status: "solving" }
  | { status: "done"; response: WorkerResponse; elapsedMs: number };

/**
 * `onAnswer` hears the latest request's answer in the same task as the hook's own state change,
 * so React renders the status and whatever the caller shows from the answer in one commit.
 */
export function useEngineWorker(onAnswer?: (response: WorkerResponse, elapsedMs: number) => void): {
  state: WorkerState;
  solve: (scenario: unknown) => void;
  /** Solves `scenario` once, unseen, so the engine's code is compiled before the first real what-if. */
  warmUp: (scenario: unknown) => void;
  reset: () => void;
} {
  const queueRef = useRef<LatestOnlyQueue<unknown> | null>(null);
  const warmUpId = useRef<number | null>(null);
  const sentAt = useRef(new Map<number, number>());
  const onAnswerRef = useRef(onAnswer);
  const [state, setState] = useState<WorkerState>({ status: "idle" });

  useEffect(() => {
    onAnswerRef.current = onAnswer;
  }, [onAnswer]);

  useEffect(() => {
    const worker = new Worker(new URL("../../engine/worker.ts", import.meta.url), { type: "module" });
    const queue = new LatestOnlyQueue<unknown>((id, scenario) => {
      sentAt.current.set(id, performance.now());
      // Periods and the constrained plan (a linear programme, seconds on a region) are left out: a
      // what-if compares the other rules on the stationary problem, and stays interactive.
      const request: WorkerRequest = { id, scenario, periods: false, rules: WHAT_IF_RULES };
      worker.postMessage(request);
    });
    const deliver = (response: WorkerResponse, id: number) => {
      const elapsedMs = performance.now() - (sentAt.current.get(id) ?? performance.now());
      sentAt.current.delete(id);
      setState({ status: "done", response, elapsedMs });
      onAnswerRef.current?.(response, elapsedMs);
    };
    worker.onmessage = (event: MessageEvent<WorkerResponse>) => {
      const id = Number(event.data.id);
      if (queue.answered(id) && id !== warmUpId.current) deliver(event.data, id);
      else sentAt.current.delete(id);
    };
    // Only a worker that cannot start at all reaches here: every solve failure comes back as a message.
    worker.onerror = (event) => {
      event.preventDefault();
      queue.lost();
      deliver({ id: -1, ok: false, kind: "internal", message: `The what-if engine could not start in this browser (${event.message || "worker error"}).` }, -1);
    };
    queueRef.current = queue;
    return () => {
      worker.terminate();
      queueRef.current = null;
    };
  }, []);

  const solve = useCallback((scenario: unknown) => {
    const queue = queueRef.current;
    if (!queue) return;
    queue.submit(scenario);
    setState((current) => (current.status === "solving" ? current : { status: "solving" }));
  }, []);

  const warmUp = useCallback((scenario: unknown) => {
    const queue = queueRef.current;
    if (!queue || warmUpId.current !== null) return;
    warmUpId.current = queue.submit(scenario);
  }, []);

  const reset = useCallback(() => {
    queueRef.current?.cancel();
    setState({ status: "idle" });
  }, []);

  return { state, solve, warmUp, reset };
}
