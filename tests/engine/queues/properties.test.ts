import { describe, expect, it } from "vitest";
import { erlangB, mmcQueueWait, mmcQueueWaitSlope } from "../../../app/engine/erlang";

describe("convexity of the M/M/c wait — Lee & Cohen (1983); Grassmann (1983) J. Appl. Prob. 20(4) (from memory)", () => {
  // The optimum needs marginal costs d(λWq)/dλ = Wq + λWq' that rise with λ. We check, for many
  // (c, μ), on a grid that crowds towards capacity: Wq ≥ 0 increasing, Wq' ≥ 0 increasing (Wq
  // convex), and Wq + λWq' increasing (λWq convex), each both through the analytic slope and
  // through second differences of the values. Relative slack 1e-10 absorbs rounding only.
  const serverCounts = [1, 2, 3, 4, 5, 8, 13, 21, 34, 55, 100, 250, 500];
  const rates = [0.05, 0.7, 1, 3.5, 40];
  it.each(serverCounts)("c = %i, several μ", (servers) => {
    for (const rate of rates) {
      const capacity = servers * rate;
      const grid = Array.from({ length: 300 }, (_, k) => capacity * (1 - Math.pow(1 - k / 300, 1.5)));
      let previous = { wait: -Infinity, slope: -Infinity, marginal: -Infinity };
      const waits: number[] = [];
      for (const arrivals of grid) {
        const wait = mmcQueueWait(servers, rate, arrivals);
        const slope = mmcQueueWaitSlope(servers, rate, arrivals);
        const marginal = wait + arrivals * slope;
        expect(slope).toBeGreaterThanOrEqual(0);
        expect(wait).toBeGreaterThanOrEqual(previous.wait * (1 - 1e-10));
        expect(slope).toBeGreaterThanOrEqual(previous.slope * (1 - 1e-10));
        expect(marginal).toBeGreaterThanOrEqual(previous.marginal * (1 - 1e-10));
        previous = { wait, slope, marginal };
        waits.push(wait);
      }
      // Second differences on the (uneven) grid: slopes of successive chords must rise.
      for (let k = 1; k + 1 < grid.length; k++) {
        const left = (waits[k] - waits[k - 1]) / (grid[k] - grid[k - 1]);
        const right = (waits[k + 1] - waits[k]) / (grid[k + 1] - grid[k]);
        expect(right).toBeGreaterThanOrEqual(left - 1e-9 * Math.abs(left) - 1e-300);
        const leftTotal = (grid[k] * waits[k] - grid[k - 1] * waits[k - 1]) / (grid[k] - grid[k - 1]);
        const rightTotal = (grid[k + 1] * waits[k + 1] - grid[k] * waits[k]) / (grid[k + 1] - grid[k]);
        expect(rightTotal).toBeGreaterThanOrEqual(leftTotal - 1e-9 * Math.abs(leftTotal) - 1e-300);
      }
    }
  });
});

describe("occupancy and size — Bagust, Place & Posnett (1999) BMJ 319:155–158", () => {
  /**
   * The published warning: above ~85% mean bed occupancy, the chance that an arrival finds every
   * bed full rises sharply — and how sharply depends on size. Derivation (as in CHECKS.md,
   * "[derived]"): treat beds as an Erlang loss system M/M/c/c. Mean occupancy is the carried
   * load divided by c, carried load = a·(1 − B(c, a)). Solve a(1 − B(c, a)) = 0.85·c for the
   * offered load a by bisection (the carried load rises with a), then report B(c, a):
   *   c = 20  → a = 20.552, B = 0.1728 (≈ 17% turned away);
   *   c = 100 → a = 86.313, B = 0.0152 (≈ 1.5% turned away).
   * Tolerance: the published figures are rounded to 17% and 1.5%, so ±0.5 and ±0.05 points.
   */
  function blockingAtOccupancy(beds: number, occupancy: number): { offeredLoad: number; blocking: number } {
    let low = 0;
    let high = 10 * beds;
    for (let k = 0; k < 200; k++) {
      const middle = (low + high) / 2;
      if (middle * (1 - erlangB(beds, middle)) < occupancy * beds) low = middle;
      else high = middle;
    }
    return { offeredLoad: low, blocking: erlangB(beds, low) };
  }

  it("85% occupancy: about 17% turned away with 20 beds, about 1.5% with 100", () => {
    const small = blockingAtOccupancy(20, 0.85);
    const large = blockingAtOccupancy(100, 0.85);
    expect(Math.abs(small.blocking - 0.17)).toBeLessThan(0.005);
    expect(Math.abs(large.blocking - 0.015)).toBeLessThan(0.0005);
    expect(small.offeredLoad).toBeCloseTo(20.552, 3);
    expect(large.offeredLoad).toBeCloseTo(86.313, 3);
  });
});
