/**
 * Worker-thread side of `rule-thread.ts`: solve the worker's own rules, then rules from the
 * shared queue, write their reports as JSON text, answer once.
 */
import { parentPort } from "node:worker_threads";
import { solveOwnAndQueued } from "./solve-thread-share";
import type { RuleThreadReply, RuleThreadRequest } from "./rule-thread";
import { computeSharedDistances } from "./shared-distances";

parentPort?.once("message", (request: RuleThreadRequest) => {
  let reply: RuleThreadReply;
  // The reports' bytes are handed over, not copied.
  const transfer: ArrayBuffer[] = [];
  try {
    const distances = computeSharedDistances(request.scenario, request.distances);
    const result = solveOwnAndQueued(request.scenario, distances, request.rules, request.queue, request.gap);
    for (const lines of result ? [result.lines, ...(result.periods ?? []).map((period) => period.lines)] : []) {
      for (const line of Object.values(lines)) {
        for (const report of Object.values(line.rules)) for (const chunk of report?.json ?? []) if (!transfer.includes(chunk.buffer as ArrayBuffer)) transfer.push(chunk.buffer as ArrayBuffer);
      }
    }
    reply = { ok: true, result };
  } catch (error) {
    reply = { ok: false, message: error instanceof Error ? error.message : String(error) };
  }
  parentPort?.postMessage(reply, transfer);
});
