/** One command-line thread's share of a scenario's rules (`rule-thread.ts`, `rule-queue.ts`). */
import type { LineDistances } from "./build-problem";
import type { RuleKey } from "./problem";
import { type RenderedRuleReport, solveScenarioAsJson } from "./result-json";
import { type RuleQueue, takeRule } from "./rule-queue";
import type { Scenario } from "./scenario";
import { mergeScenarioResults, type ScenarioResult } from "./solve-scenario";

/**
 * What one thread does: its own rules first, then rules from the queue until it is empty. The
 * reports are written as JSON text (`gap` as JSON.stringify's). Null when it solved nothing.
 */
export function solveOwnAndQueued(
  scenario: Scenario,
  distances: LineDistances,
  own: RuleKey[],
  queue: RuleQueue,
  gap: string,
): ScenarioResult<RenderedRuleReport> | null {
  const parts: ScenarioResult<RenderedRuleReport>[] = [];
  // One set of problems for all the calls (building one costs ~0.1 s on a national instance).
  const builds = new Map();
  if (own.length > 0) parts.push(solveScenarioAsJson(scenario, { rules: own, distances, builds }, gap));
  for (let rule = takeRule(queue); rule !== null; rule = takeRule(queue)) parts.push(solveScenarioAsJson(scenario, { rules: [rule], distances, builds }, gap));
  return parts.length > 0 ? mergeScenarioResults(parts) : null;
}
