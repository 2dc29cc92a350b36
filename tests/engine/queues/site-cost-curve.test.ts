/**
 * The inverse the solvers use (`SiteInverse`): for a cost w it must return the inflow x with
 * cost(x) = w, whatever inflow it was last asked about. The M/M/c wait is Erlang C over the
 * spare capacity (Erlang 1917; any queueing text, e.g. Gross & Harris 1998, Fundamentals of
 * Queueing Theory, 3rd ed. — from memory for the edition), so it rises without bound as x nears
 * capacity, and for many teams it is nearly flat in the load near empty.
 */
import { describe, expect, it } from "vitest";
import { marginalCostCurve, SiteInverse, waitCurve } from "../../../app/engine/site-cost-curve";
import { createSiteWaitModel } from "../../../app/engine/site-wait";

describe("SiteInverse", () => {
  const sites = [
    ["M/M/1, μ = 5", createSiteWaitModel({ teams: 1, ratePerTeam: 5 })],
    ["M/M/12, μ = 1.4", createSiteWaitModel({ teams: 12, ratePerTeam: 1.4 })],
    ["M/M/15 behind urgent 2", createSiteWaitModel({ teams: 15, ratePerTeam: 1.1 }, 2)],
  ] as const;
  for (const [label, site] of sites) {
    for (const [curveName, curve] of [["wait", waitCurve(site)], ["marginal cost", marginalCostCurve(site)]] as const) {
      it(`${label}, ${curveName}: finds the root from any earlier answer, even one next to capacity`, () => {
        const inverse = new SiteInverse(curve);
        const targets = [0.2, 0.5, 0.8, 0.95].map((share) => curve.cost(share * curve.capacity));
        // Ask first for a cost so high that the answer sits a hair below capacity, then for the
        // moderate ones; then in the other order. Once, a near-capacity answer was returned for
        // a moderate cost (its Newton step, the distance to the pole, looked like convergence).
        const extreme = curve.cost(curve.capacity * (1 - 2 * Number.EPSILON));
        for (const order of [targets, [...targets].reverse()]) {
          for (const w of order) {
            inverse.load(extreme);
            const x = inverse.load(w);
            expect(x).toBeLessThan(curve.capacity);
            expect(Math.abs(curve.cost(x) - w)).toBeLessThanOrEqual(1e-9 * w);
          }
        }
      });
    }
  }
});
