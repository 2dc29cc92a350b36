/**
 * Rules shared between the command line's two threads (`rule-thread.ts`): each thread, once its
 * own heavy rule is solved, takes the next rule nobody has taken, until none is left. The queue's
 * counter lives in shared memory, so the two threads see each other's takes at once.
 */
import type { LineDistances } from "./build-problem";
import type { RuleKey } from "./problem";
import { type RenderedRuleReport, solveScenarioAsJson } from "./result-json";
import type { Scenario } from "./scenario";
import { mergeScenarioResults, type ScenarioResult } from "./solve-scenario";

/** Rules either thread may solve, in the order they are taken, and the index of the next (shared memory). */
export interface RuleQueue {
  rules: RuleKey[];
  next: Int32Array;
}

export function ruleQueue(rules: RuleKey[]): RuleQueue {
  return { rules, next: new Int32Array(new SharedArrayBuffer(Int32Array.BYTES_PER_ELEMENT)) };
}

/** The next rule nobody has taken, or null; each rule goes to exactly one thread (an atomic add). */
export function takeRule(queue: RuleQueue): RuleKey | null {
  const index = Atomics.add(queue.next, 0, 1);
  return index < queue.rules.length ? queue.rules[index] : null;
}

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
