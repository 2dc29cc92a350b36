/** Worker-thread side of `rule-thread.ts`: validate, solve the rules asked for, answer once. */
import { parentPort } from "node:worker_threads";
import type { RuleThreadReply, RuleThreadRequest } from "./rule-thread";
import { parseScenario } from "./scenario";
import { solveScenario } from "./solve-scenario";

parentPort?.once("message", (request: RuleThreadRequest) => {
  let reply: RuleThreadReply;
  try {
    reply = { ok: true, result: solveScenario(parseScenario(request.document), { rules: request.rules }) };
  } catch (error) {
    reply = { ok: false, message: error instanceof Error ? error.message : String(error) };
  }
  parentPort?.postMessage(reply);
});
