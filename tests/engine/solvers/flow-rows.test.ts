/**
 * Flows kept as rows of their non-zero entries (`flow-rows.ts`). The reference for every reader is
 * the same allocation given as a dense n·m array only: the sums (site loads, total cost, relative
 * gap) and the reports must come out the same to the last bit, since a row lists the same pairs
 * in the same order as a dense scan, less the zeros (adding +0 changes no sum — IEEE 754-2019,
 * §6.3). No published values are involved: the checks compare two ways to one computation.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { allocationTotalCost, relativeGap } from "../../../app/engine/allocation-cost";
import { buildLineProblems } from "../../../app/engine/build-problem";
import { solveChoice } from "../../../app/engine/equilibrium";
import { allocationFromRows, allocationLoads, denseFlows, denseRows, type FlowRows, storedRows } from "../../../app/engine/flow-rows";
import { solveOptimum } from "../../../app/engine/optimum";
import type { Allocation } from "../../../app/engine/problem";
import { ruleReportJson } from "../../../app/engine/rule-report";
import { parseScenario } from "../../../app/engine/scenario";
import { generateScenarioDocument, LARGE } from "../../bench/generate";

const demo = () => parseScenario(JSON.parse(readFileSync(new URL("../../../seed/demo-scenario.json", import.meta.url), "utf8")));
const text = (chunks: Uint8Array[]) => Buffer.concat(chunks).toString("utf8");

/** Every row of `rows` as [site, flow] pairs. */
function allRows(rows: FlowRows, n: number, m: number): [number, number][][] {
  const sites = new Int32Array(m);
  const flows = new Float64Array(m);
  return Array.from({ length: n }, (_, i) => Array.from({ length: rows.read(i, sites, flows) }, (_, k): [number, number] => [sites[k], flows[k]]));
}

describe("allocation from rows", () => {
  // Two sources, three sites: source 0 uses sites 0 and 2, source 1 none.
  const rows = storedRows(Int32Array.of(0, 2, 2), Int32Array.of(0, 2), Float64Array.of(1.5, 0.25));
  const balked = Float64Array.of(0, 4);

  it("reads stored rows and dense flows row by row", () => {
    expect(allRows(rows, 2, 3)).toEqual([[[0, 1.5], [2, 0.25]], []]);
    expect(allRows(denseRows(Float64Array.of(1.5, 0, 0.25, 0, 0, 0), 3), 2, 3)).toEqual([
      [[0, 1.5], [1, 0], [2, 0.25]],
      [[0, 0], [1, 0], [2, 0]],
    ]);
  });

  it("makes the dense flows when first read, once", () => {
    const allocation = allocationFromRows(3, rows, balked);
    expect(Array.from(allocation.flow)).toEqual([1.5, 0, 0.25, 0, 0, 0]);
    expect(allocation.flow).toBe(allocation.flow);
    expect(allocation.rows).toBe(rows);
    expect(Array.from(denseFlows(rows, 2, 3))).toEqual([1.5, 0, 0.25, 0, 0, 0]);
  });

  it("sums the columns as a dense scan does", () => {
    expect(Array.from(allocationLoads(allocationFromRows(3, rows, balked), 2, 3))).toEqual([1.5, 0, 0.25]);
    expect(Array.from(allocationLoads({ flow: denseFlows(rows, 2, 3), balked }, 2, 3))).toEqual([1.5, 0, 0.25]);
  });
});

/** The same allocation without its rows: every reader then scans the dense flows. */
const denseOnly = (allocation: Allocation): Allocation => ({ flow: Float64Array.from(allocation.flow), balked: allocation.balked });

describe("choice and optimum give rows that every reader reads as the dense flows", () => {
  const regions = [
    ["the demo region (urgent referrals, four lines)", demo()],
    ["a generated region of 300 × 30", parseScenario(generateScenarioDocument({ ...LARGE, sources: 300, sites: 30, towns: 12, seed: 5 }))],
  ] as const;
  for (const [name, scenario] of regions) {
    for (const build of buildLineProblems(scenario)) {
      for (const [rule, solve] of [
        ["choice", solveChoice],
        ["optimum", solveOptimum],
      ] as const) {
        it(`${name}, line ${build.lineId}, ${rule}`, () => {
          const { problem } = build;
          const solution = solve(problem);
          const { rows } = solution.allocation;
          expect(rows).toBeDefined();
          if (!rows) return;
          // Sites ascend within each row, every flow is positive, and the rows hold exactly the
          // dense array's non-zero entries.
          const read = allRows(rows, problem.n, problem.m);
          for (const row of read) {
            for (let k = 1; k < row.length; k++) expect(row[k][0]).toBeGreaterThan(row[k - 1][0]);
            for (const [, flow] of row) expect(flow).toBeGreaterThan(0);
          }
          const dense = denseOnly(solution.allocation);
          expect(read.flat().length).toBe(dense.flow.filter((flow) => flow !== 0).length);
          expect(Array.from(allocationLoads(solution.allocation, problem.n, problem.m))).toEqual(Array.from(allocationLoads(dense, problem.n, problem.m)));
          expect(allocationTotalCost(problem, solution.allocation, solution.siteWait)).toBe(allocationTotalCost(problem, dense, solution.siteWait));
          expect(relativeGap(problem, solution.allocation, solution.siteWait)).toEqual(relativeGap(problem, dense, solution.siteWait));
          for (const gap of ["", "  "]) {
            const fromRows = ruleReportJson(scenario, build, solution, gap, 4);
            const fromDense = ruleReportJson(scenario, build, { ...solution, allocation: dense }, gap, 4);
            expect(text(fromRows.json)).toBe(text(fromDense.json));
          }
        });
      }
    }
  }
});
