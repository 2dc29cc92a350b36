/**
 * The engine in a Web Worker for what-ifs: the page posts a scenario document and gets the result
 * back without a round trip to the server. Only the latest request matters: answers to older ones
 * (the slider moved on) are dropped.
 */
import { useCallback, useEffect, useRef, useState } from "react";
import type { WorkerRequest, WorkerResponse } from "~/engine/worker";

export const WHAT_IF_RULES: NonNullable<WorkerRequest["rules"]> = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare"];

export type WorkerState =
  | { status: "idle" }
  | { status: "solving" }
  | { status: "done"; response: WorkerResponse; elapsedMs: number };

export function useEngineWorker(): { state: WorkerState; solve: (scenario: unknown) => void; reset: () => void } {
  const workerRef = useRef<Worker | null>(null);
  const latest = useRef(0);
  const sentAt = useRef(0);
  const [state, setState] = useState<WorkerState>({ status: "idle" });

  useEffect(() => {
    const worker = new Worker(new URL("../../engine/worker.ts", import.meta.url), { type: "module" });
    worker.onmessage = (event: MessageEvent<WorkerResponse>) => {
      if (event.data.id !== latest.current) return;
      setState({ status: "done", response: event.data, elapsedMs: performance.now() - sentAt.current });
    };
    workerRef.current = worker;
    return () => {
      worker.terminate();
      workerRef.current = null;
    };
  }, []);

  const solve = useCallback((scenario: unknown) => {
    const worker = workerRef.current;
    if (!worker) return;
    latest.current += 1;
    sentAt.current = performance.now();
    setState({ status: "solving" });
    // Periods and the constrained plan (a linear programme, seconds on a region) are left out: a
    // what-if compares the other rules on the stationary problem, and stays interactive.
    const request: WorkerRequest = { id: latest.current, scenario, periods: false, rules: WHAT_IF_RULES };
    worker.postMessage(request);
  }, []);

  const reset = useCallback(() => {
    latest.current += 1;
    setState({ status: "idle" });
  }, []);

  return { state, solve, reset };
}
