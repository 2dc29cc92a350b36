/**
 * The outside option's formulas (uniform reservation costs on [o(1 − s), o(1 + s)], PRODUCT.md)
 * and the logit balking share, checked against closed forms derived in each comment.
 */
import { describe, expect, it } from "vitest";
import {
  balkingCost,
  balkingShare,
  expectedPatientCost,
  logitBalking,
  marginalBalkingCost,
  meanBalkerCost,
} from "../../../app/engine/outside-option";

describe("uniform reservation costs", () => {
  // o = 10, s = 0.2 ⇒ r ~ U[8, 12]. [derived] At u = 9: F = (9 − 8)/4 = 0.25; balkers' mean
  // reservation (8 + 9)/2 = 8.5; E[min(r, u)] = u − ∫_8^9 F = 9 − 1/8 = 8.875.
  it("balking share, balkers' mean cost and a patient's expected cost", () => {
    expect(balkingShare(9, 10, 0.2)).toBeCloseTo(0.25, 14);
    expect(balkingShare(7, 10, 0.2)).toBe(0);
    expect(balkingShare(13, 10, 0.2)).toBe(1);
    expect(meanBalkerCost(9, 10, 0.2)).toBeCloseTo(8.5, 14);
    expect(expectedPatientCost(9, 10, 0.2)).toBeCloseTo(8.875, 14);
    expect(expectedPatientCost(13, 10, 0.2)).toBe(10);
    expect(expectedPatientCost(5, Infinity, 0)).toBe(5);
  });

  it("E[min(r, u)] matches its definition by quadrature", () => {
    // Midpoint rule on 200,000 cells: error O(h²) ≈ 1e-10 on this piecewise-linear integrand.
    const cells = 200_000;
    for (const u of [8.3, 9.7, 11.9]) {
      let integral = 0;
      for (let k = 0; k < cells; k++) {
        const r = 8 + (4 * (k + 0.5)) / cells;
        integral += Math.min(r, u) / cells;
      }
      expect(expectedPatientCost(u, 10, 0.2)).toBeCloseTo(integral, 8);
    }
  });

  it("balking cost B(b) of the lowest-reservation balkers and its slope", () => {
    // d = 4, b = 1 of them balk: the lowest quarter, reservations U[8, 9], cost 1 × 8.5.
    expect(balkingCost(1, 4, 10, 0.2)).toBeCloseTo(8.5, 14);
    expect(marginalBalkingCost(1, 4, 10, 0.2)).toBeCloseTo(9, 14);
    // Sharp threshold: every balker pays o.
    expect(balkingCost(1.5, 4, 3, 0)).toBeCloseTo(4.5, 14);
    // Slope = marginal balker: finite difference of B.
    const h = 1e-6;
    expect((balkingCost(2 + h, 4, 10, 0.2) - balkingCost(2 - h, 4, 10, 0.2)) / (2 * h)).toBeCloseTo(marginalBalkingCost(2, 4, 10, 0.2), 6);
  });
});

describe("logit balking share", () => {
  it("sharp outside option: the plain logit share 1/(1 + e^{θ(o − V)})", () => {
    // Daganzo & Sheffi (1977), Transportation Science 11(3): binary logit between the sites'
    // inclusive cost V = 1.5 and the outside cost o = 2 at θ = 2 ⇒ 1/(1 + e) = 0.268941.
    expect(logitBalking(1.5, 2, 0, 2).share).toBeCloseTo(1 / (1 + Math.E), 14);
    expect(logitBalking(1.5, Infinity, 0, 2).share).toBe(0);
  });

  it("spread: the logit share averaged over reservation costs, and its slope", () => {
    // [derived] P_out(V) = (1/(b − a)) ∫_a^b e^{−θr}/(e^{−θr} + e^{−θV}) dr, by quadrature.
    const [o, s, theta, v] = [10, 0.2, 1.5, 9.3];
    const cells = 100_000;
    let integral = 0;
    for (let k = 0; k < cells; k++) {
      const r = 8 + (4 * (k + 0.5)) / cells;
      integral += 1 / (1 + Math.exp(theta * (r - v))) / cells;
    }
    const { share, slope } = logitBalking(v, o, s, theta);
    expect(share).toBeCloseTo(integral, 9);
    const h = 1e-5;
    expect(slope).toBeCloseTo((logitBalking(v + h, o, s, theta).share - logitBalking(v - h, o, s, theta).share) / (2 * h), 7);
  });

  it("tends to the Wardrop share F(V) as θ grows", () => {
    for (const v of [8.5, 9.9, 11.2]) expect(logitBalking(v, 10, 0.2, 1e6).share).toBeCloseTo(balkingShare(v, 10, 0.2), 5);
  });
});
