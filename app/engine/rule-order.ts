/**
 * Which rules a scenario's solve runs, and in what order they are run and reported. A module of
 * its own, free of the solvers, so that the command line can decide how to share the rules
 * between its threads before it has loaded them.
 */
import type { RuleKey } from "./problem";
import type { Scenario } from "./scenario";

/** The order rules are run and reported in. */
export const RULE_ORDER: readonly RuleKey[] = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"];

/** The rules `solveScenario` runs: all that apply to the scenario, or those of them requested. */
export function rulesToRun(scenario: Scenario, requested?: readonly RuleKey[]): RuleKey[] {
  const applies = (rule: RuleKey) =>
    rule === "choiceLogit" ? scenario.choiceModel.kind === "logit" : rule === "plan" ? Boolean(scenario.plan) : true;
  return RULE_ORDER.filter((rule) => applies(rule) && (!requested || requested.includes(rule)));
}
