/** Worker-thread side of `rule-thread.ts`: solve the rules asked for, write their reports as JSON text, answer once. */
import { parentPort } from "node:worker_threads";
import { renderRuleReports } from "./result-json";
import type { RuleThreadReply, RuleThreadRequest } from "./rule-thread";
import { solveScenario } from "./solve-scenario";

parentPort?.once("message", (request: RuleThreadRequest) => {
  let reply: RuleThreadReply;
  try {
    const result = solveScenario(request.scenario, { rules: request.rules, distances: request.distances });
    reply = { ok: true, result: renderRuleReports(result, request.gap) };
  } catch (error) {
    reply = { ok: false, message: error instanceof Error ? error.message : String(error) };
  }
  parentPort?.postMessage(reply);
});
