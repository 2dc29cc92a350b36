/**
 * Regions with many sites close together, read from exchange-format files (generated, seeded):
 * two defects they exposed stay fixed. Properties of the solvers (Wardrop 1952 conditions via the
 * relative gap of PRODUCT.md); no published values apply.
 *
 *  - The first stage once stalled for its whole budget: a site a hair above its empty cost got a
 *    chord slope of ~1e28 in the Newton matrix, Cholesky's pivot floor (relative to the largest
 *    diagonal entry) then flattened every other step to ~1e-13, and the choice ended with an
 *    infinite relative gap after 2,000 iterations.
 *  - The exact finish once gave up on a right structure: sites tied around a cycle may differ by
 *    the cycle test's tolerance (1e-10), more than the Wardrop check's (1e-12), and a source
 *    whose cheaper site was already tied counted as a change round after round.
 *  - Near-degenerate cycles (two sites close together seen from a distant town: cycles that agree
 *    to ~1e-8 weeks) made every exact attempt fail, and the logit fallback was reported with gaps
 *    up to 9e-9; a last attempt keeping such cycles as ties now finishes.
 */
import { describe, expect, it } from "vitest";
import { buildLineProblems } from "~/engine/build-problem";
import { solveChoice } from "~/engine/equilibrium";
import { solveOptimum } from "~/engine/optimum";
import { parseScenario } from "~/engine/scenario";
import { generateScenarioDocument, LARGE } from "../../bench/generate";

function denseRegion(sites: number, seed: number) {
  const scenario = parseScenario(generateScenarioDocument({ ...LARGE, sources: 600, sites, towns: 10, seed }));
  return buildLineProblems(scenario)[0].problem;
}

describe("regions with many sites close together", () => {
  it("the first stage does not stall on a site at its empty cost (600 × 120, seed 5)", () => {
    const { diagnostics } = solveChoice(denseRegion(120, 5));
    expect(Number.isFinite(diagnostics.relativeGap)).toBe(true);
    // The finish's fallback (logit at large θ) is within 1e-8 here; the stall had spent 2,000 steps.
    expect(diagnostics.relativeGap).toBeLessThanOrEqual(1e-8);
    expect(diagnostics.iterations).toBeLessThan(500);
  });

  it("the exact finish accepts a structure whose tied sites differ only within the cycle tolerance (600 × 80, seed 4)", () => {
    const { diagnostics } = solveChoice(denseRegion(80, 4));
    expect(diagnostics.converged).toBe(true);
    expect(diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
  });

  it("a last attempt keeps near-degenerate cycles as ties and finishes (600 × 120, seed 6)", () => {
    const problem = denseRegion(120, 6);
    for (const solve of [solveChoice, solveOptimum]) {
      const { diagnostics } = solve(problem);
      expect(diagnostics.converged).toBe(true);
      expect(diagnostics.relativeGap).toBeLessThanOrEqual(1e-10);
    }
  });

  it("where even that attempt falls short, the gap stays small (600 × 120, seed 1)", () => {
    const problem = denseRegion(120, 1);
    for (const solve of [solveChoice, solveOptimum]) {
      const { diagnostics } = solve(problem);
      // Not converged to 1e-10, and said so; the logit fallback had gaps of 7e-9 and 9e-9 here.
      expect(diagnostics.relativeGap).toBeLessThanOrEqual(1e-9);
    }
  });
});
