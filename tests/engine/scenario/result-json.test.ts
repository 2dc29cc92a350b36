/**
 * The command line writes the result in parts (`result-json.ts`): every rule's report as text on
 * the thread that solved it, then the rest of the result around them. The reference is
 * `JSON.stringify(result, null, gap)` as ECMA-262 (§25.5.2, JSON.stringify) defines it: the text
 * must be the same byte for byte, compact and indented, with periods, and when the rules were
 * solved in two parts and merged.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { lineDistances } from "~/engine/build-problem";
import { utf8 } from "~/engine/byte-writer";
import { jsonAtDepth, type RenderedRuleReport, resultJsonChunks, solveScenarioAsJson } from "~/engine/result-json";
import type { RuleReport } from "~/engine/rule-report";
import { parseScenario, type Scenario } from "~/engine/scenario";
import { type LineReport, mergeScenarioResults, type PeriodReport, RULE_REPORT_DEPTH, rulesToRun, type ScenarioResult, solveScenario } from "~/engine/solve-scenario";
import { generateScenarioDocument, LARGE } from "../../bench/generate";

const fixture = (name: string) => JSON.parse(readFileSync(new URL(`./fixtures/${name}`, import.meta.url), "utf8"));
/** The chunks joined as the bytes written to stdout, read back as text. */
const joined = (chunks: (string | Uint8Array)[]) => Buffer.concat(chunks.map((chunk) => (typeof chunk === "string" ? Buffer.from(chunk, "utf8") : chunk))).toString("utf8");
const demo = () => JSON.parse(readFileSync(new URL("../../../seed/demo-scenario.json", import.meta.url), "utf8"));

/**
 * Every rule report of a solved result written as JSON text from its objects, by JSON.stringify
 * itself: a second way to the parts, independent of the report writer.
 */
function renderRuleReports(result: ScenarioResult, gap: string): ScenarioResult<RenderedRuleReport> {
  const renderLines = (lines: Record<string, LineReport>, depth: number): Record<string, LineReport<RenderedRuleReport>> => {
    const rendered: Record<string, LineReport<RenderedRuleReport>> = {};
    for (const [lineId, line] of Object.entries(lines)) {
      const rules: LineReport<RenderedRuleReport>["rules"] = {};
      for (const [rule, report] of Object.entries(line.rules) as [keyof typeof line.rules, RuleReport][]) {
        rules[rule] = { totalCost: report.totalCost, warnings: report.warnings, json: [utf8(jsonAtDepth(report, gap, depth))] };
      }
      rendered[lineId] = { ...line, rules };
    }
    return rendered;
  };
  // `periods` is overwritten in place (undefined when absent, which JSON leaves out): key order is kept.
  return {
    ...result,
    lines: renderLines(result.lines, RULE_REPORT_DEPTH.line),
    periods: result.periods?.map((period): PeriodReport<RenderedRuleReport> => ({ ...period, lines: renderLines(period.lines, RULE_REPORT_DEPTH.period) })),
  };
}

const cases: [string, () => Scenario][] = [
  ["two practices, two sites (small)", () => parseScenario(fixture("two-practices-two-sites.json"))],
  // Ids and names that JSON escapes or UTF-8 writes in several bytes, inside and outside the flows' keys.
  [
    "ids with quotes, backslashes and non-ASCII letters",
    () =>
      parseScenario(
        JSON.parse(
          JSON.stringify(fixture("two-practices-two-sites.json"))
            .replaceAll("ZZS1", 'ZZS1 \\"Ünal\\" \\\\ ✓')
            .replaceAll("ZZP001", "ZZP001 — Skåne")
            .replaceAll("First site", "Première \\u2028 site"),
        ),
      ),
  ],
  ["the demo region: 4 lines and periods, one without a steady state", () => parseScenario(demo())],
  // Mid-size: 300 practices × 30 sites, capacity share's flows on every pair.
  ["a generated region of 300 × 30", () => parseScenario(generateScenarioDocument({ ...LARGE, sources: 300, sites: 30, towns: 12, seed: 5 }))],
];

describe("the result written in parts is JSON.stringify's text", () => {
  for (const [name, load] of cases) {
    const scenario = load();
    const whole = solveScenario(scenario);
    for (const gap of ["", "  "]) {
      it(`${name}, ${gap ? "indented" : "compact"}: reports written straight from the solutions`, () => {
        const text = joined(resultJsonChunks(solveScenarioAsJson(scenario, {}, gap), gap));
        expect(text).toBe(JSON.stringify(whole, null, gap));
      });
      it(`${name}, ${gap ? "indented" : "compact"}: reports written from their objects`, () => {
        const text = joined(resultJsonChunks(renderRuleReports(whole, gap), gap));
        expect(text).toBe(JSON.stringify(whole, null, gap));
      });
    }
    for (const gap of ["", "  "]) {
      it(`${name}, ${gap ? "indented" : "compact"}: rules solved in two parts (shared distances and problems) and merged`, () => {
        const rules = rulesToRun(scenario);
        const distances = lineDistances(scenario);
        // Problems built by the first part (periods included) and reused by the second, as each command-line thread does.
        const builds = new Map();
        const first = rules.filter((_, index) => index % 2 === 0);
        const parts = [first, rules.filter((rule) => !first.includes(rule))].map((part) => solveScenarioAsJson(scenario, { rules: part, distances, builds }, gap));
        const text = joined(resultJsonChunks(mergeScenarioResults(parts), gap));
        expect(text).toBe(JSON.stringify(whole, null, gap));
      });
    }
  }

  it("a value written alone at a depth is the text it has inside its parent", () => {
    const value = { a: [1, { b: "x\ny" }], c: {}, d: [], e: null };
    const parent = { outer: { inner: value } };
    const text = JSON.stringify(parent, null, "  ");
    expect(text).toContain(jsonAtDepth(value, "  ", 2));
    expect(text.replace(jsonAtDepth(value, "  ", 2), "X")).toBe(JSON.stringify({ outer: { inner: "X" } }, null, "  ").replace('"X"', "X"));
  });
});
