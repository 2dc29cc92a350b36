/**
 * The result JSON (`equilibra/result@1`) written in parts, byte for byte what
 * `JSON.stringify(result, null, gap)` gives, for the command line.
 *
 * Why in parts: on a national instance one rule's report holds millions of practice→site flows
 * (tens of MB of text), and turning them into text is most of the cost after solving. Each rule's
 * report is written as text on the thread that solved it, straight from the solution's arrays
 * (`ruleReportJson` via `solveScenarioAsJson`), so the two threads share that work and only short
 * summaries and the text cross between them. The rest of the result is small: it is stringified
 * with a placeholder where each report goes, and the reports' texts are put in its place
 * (`resultJsonChunks`), chunk by chunk, without joining them into one string.
 *
 * Exactness: inside `JSON.stringify(parent, null, gap)` a value at depth d is written exactly as
 * `JSON.stringify(value, null, gap)` with every line break followed by d more gaps (JSON strings
 * never hold a raw line break), so a report written alone at its depth is the same text.
 */
import { utf8 } from "./byte-writer";
import { indentAtDepth, type RuleReportJson, ruleReportJson } from "./rule-report";
import type { Scenario } from "./scenario";
import { type LineReport, type ScenarioResult, solveScenarioWith, type SolveScenarioOptions } from "./solve-scenario";

/** A rule's report as JSON text, with what merging results reads from it. */
export type RenderedRuleReport = RuleReportJson;

/** `JSON.stringify(value, null, gap)` as it appears at `depth` inside a larger document. */
export function jsonAtDepth(value: unknown, gap: string, depth: number): string {
  return indentAtDepth(JSON.stringify(value, null, gap), gap, depth);
}

/** `solveScenario` with every rule's report written as JSON text (`gap` as JSON.stringify's third argument). */
export function solveScenarioAsJson(scenario: Scenario, options: SolveScenarioOptions, gap: string): ScenarioResult<RenderedRuleReport> {
  return solveScenarioWith(scenario, options, (solved, build, solution, depth) => ruleReportJson(solved, build, solution, gap, depth));
}

/**
 * The whole result's JSON text as chunks to write in order, text or UTF-8 bytes (their
 * concatenation is `JSON.stringify(result, null, gap)` of the result with every report in place).
 */
export function resultJsonChunks(result: ScenarioResult<RenderedRuleReport>, gap: string): (string | Uint8Array)[] {
  // A placeholder no scenario text can contain: NUL (escaped by JSON.stringify) and a fresh nonce.
  const nonce = `${Date.now().toString(36)}${Math.random().toString(36).slice(2)}`;
  const texts: Uint8Array[][] = [];
  const placeholder = (report: RenderedRuleReport): string => `\u0000${nonce}:${texts.push(report.json) - 1}\u0000`;
  const shellLines = (lines: Record<string, LineReport<RenderedRuleReport>>): Record<string, unknown> => {
    const shell: Record<string, unknown> = {};
    for (const [lineId, line] of Object.entries(lines)) {
      const rules: Record<string, string> = {};
      for (const [rule, report] of Object.entries(line.rules)) if (report) rules[rule] = placeholder(report);
      shell[lineId] = { ...line, rules };
    }
    return shell;
  };
  // Object spread keeps the key order of the result, so the shell is written in the same order.
  const shell = {
    ...result,
    lines: shellLines(result.lines),
    periods: result.periods?.map((period) => ({ ...period, lines: shellLines(period.lines) })),
  };
  const text = JSON.stringify(shell, null, gap);
  // In the text each placeholder is the string literal "\u0000<nonce>:<k>\u0000" (NUL escaped).
  const pattern = new RegExp(`"\\\\u0000${nonce}:(\\d+)\\\\u0000"`, "g");
  const chunks: (string | Uint8Array)[] = [];
  let from = 0;
  for (const match of text.matchAll(pattern)) {
    chunks.push(text.slice(from, match.index), ...texts[Number(match[1])]);
    from = (match.index ?? 0) + match[0].length;
  }
  chunks.push(text.slice(from));
  return chunks;
}
