/** Worker-thread side of `rule-thread.ts`: solve the rules asked for, write their reports as JSON text, answer once. */
import { parentPort } from "node:worker_threads";
import { solveScenarioAsJson } from "./result-json";
import type { RuleThreadReply, RuleThreadRequest } from "./rule-thread";

parentPort?.once("message", (request: RuleThreadRequest) => {
  let reply: RuleThreadReply;
  try {
    reply = { ok: true, result: solveScenarioAsJson(request.scenario, { rules: request.rules, distances: request.distances }, request.gap) };
  } catch (error) {
    reply = { ok: false, message: error instanceof Error ? error.message : String(error) };
  }
  parentPort?.postMessage(reply);
});
