import { describe, expect, it } from "vitest";
import { allenCunneenFactor, allenCunneenQueueWait, allenCunneenQueueWaitSlope } from "../../../app/engine/allen-cunneen";
import { mmcQueueWait, mmcQueueWaitSlope } from "../../../app/engine/erlang";

/**
 * Exact mean queue wait of M/D/c (fixed service time D), computed here — in the test only — as an
 * independent reference for the Allen–Cunneen approximation.
 *
 * Method (Crommelin 1932, "Delay probability formulae when the holding times are constant",
 * Post Office Electrical Engineers' Journal 25:41–50; as presented in Tijms (2003) *A First
 * Course in Stochastic Models*, Wiley, §5 on M/D/c, from memory): every patient in service at
 * time t has left by t + D and nobody who starts after t finishes by t + D, so the number present
 * satisfies N(t + D) = max(N(t) − c, 0) + A, with A ~ Poisson(λD) the arrivals in (t, t + D].
 * The stationary law of this chain is the time-average law of N; Lq = E[max(N − c, 0)] and
 * Wq = Lq/λ (Little). We truncate at `states` (the tail beyond is far below 1e-12 at these loads)
 * and solve π = πP with Σπ = 1 by Gaussian elimination.
 */
function exactMdcQueueWait(servers: number, serviceTime: number, arrivalRate: number, states = 400): number {
  const mean = arrivalRate * serviceTime;
  const poisson: number[] = [Math.exp(-mean)];
  for (let k = 1; k < states; k++) poisson.push((poisson[k - 1] * mean) / k);
  // Equations (P − I)ᵀπ = 0 for j = 1..states−1, and Σπ = 1 in row 0.
  const matrix: number[][] = Array.from({ length: states }, () => new Array<number>(states + 1).fill(0));
  for (let j = 1; j < states; j++) {
    for (let i = 0; i < states; i++) {
      const carried = Math.max(i - servers, 0);
      matrix[j][i] = (j >= carried ? poisson[j - carried] : 0) - (i === j ? 1 : 0);
    }
  }
  matrix[0].fill(1);
  for (let column = 0; column < states; column++) {
    let pivot = column;
    for (let row = column + 1; row < states; row++) if (Math.abs(matrix[row][column]) > Math.abs(matrix[pivot][column])) pivot = row;
    [matrix[column], matrix[pivot]] = [matrix[pivot], matrix[column]];
    for (let row = column + 1; row < states; row++) {
      const factor = matrix[row][column] / matrix[column][column];
      if (factor !== 0) for (let k = column; k <= states; k++) matrix[row][k] -= factor * matrix[column][k];
    }
  }
  const probability = new Array<number>(states).fill(0);
  for (let row = states - 1; row >= 0; row--) {
    let value = matrix[row][states];
    for (let k = row + 1; k < states; k++) value -= matrix[row][k] * probability[k];
    probability[row] = value / matrix[row][row];
  }
  const queueLength = probability.reduce((sum, p, n) => sum + p * Math.max(n - servers, 0), 0);
  return queueLength / arrivalRate;
}

describe("Allen–Cunneen approximation", () => {
  it("M/D/1 at ρ = 0.9, E[S] = 1: Wq = 4.5, exact by Pollaczek–Khinchine — Kingman (1961); Allen (1990) Probability, Statistics, and Queueing Theory (from memory)", () => {
    // P–K: Wq = ρ E[S] (1 + cs²) / (2(1 − ρ)) = 0.9 · 1 / 0.2 = 4.5. For one server the
    // Allen–Cunneen factor reproduces P–K exactly, so we hold it to rounding (1e-12).
    expect(allenCunneenQueueWait(1, 1, 0.9, 0)).toBeCloseTo(4.5, 12);
  });

  it("the reference M/D/c solver reproduces Pollaczek–Khinchine for M/D/1 at ρ = 0.9 (checks the test's own method)", () => {
    expect(exactMdcQueueWait(1, 1, 0.9)).toBeCloseTo(4.5, 8);
  });

  it("for one server and any service cv it equals Pollaczek–Khinchine exactly", () => {
    for (const cv of [0, 0.3, 1, 1.7]) {
      for (const utilisation of [0.2, 0.7, 0.95]) {
        const pollaczekKhinchine = (utilisation * (1 + cv * cv)) / (2 * (1 - utilisation));
        expect(allenCunneenQueueWait(1, 1, utilisation, cv)).toBeCloseTo(pollaczekKhinchine, 10);
      }
    }
  });

  it("M/D/2 at ρ = 0.75 is within 3% of the exact value (approximation ~2% low per CHECKS.md; Allen 1990, from memory)", () => {
    // Exact value from Crommelin's embedded chain above (0.656694 when this was written); the
    // approximation is (1/2)·Wq(M/M/2) = 9/14 = 0.642857, i.e. 2.1% low.
    const exact = exactMdcQueueWait(2, 1, 1.5);
    const approximate = allenCunneenQueueWait(2, 1, 1.5, 0);
    expect(approximate).toBeCloseTo(9 / 14, 12);
    expect(Math.abs(approximate - exact) / exact).toBeLessThan(0.03);
    // And it errs low, as the published comparison says.
    expect(approximate).toBeLessThan(exact);
  });

  it("with cv = 1 it is exactly M/M/c, and its slope is the M/M/c slope times the same factor", () => {
    expect(allenCunneenQueueWait(4, 2, 6.5, 1)).toBe(mmcQueueWait(4, 2, 6.5));
    expect(allenCunneenQueueWaitSlope(2, 1, 1, 0)).toBeCloseTo(4 / 9, 12);
    expect(allenCunneenQueueWaitSlope(5, 1, 4, 1.4)).toBeCloseTo(mmcQueueWaitSlope(5, 1, 4) * ((1 + 1.96) / 2), 12);
    expect(allenCunneenFactor(0)).toBe(0.5);
    expect(allenCunneenFactor(0.5, 0.5)).toBe(0.25);
  });

  it("rejects a negative or non-numeric coefficient of variation, naming it", () => {
    expect(() => allenCunneenFactor(-0.1)).toThrow("serviceCv must be a finite number of at least 0, got -0.1");
    expect(() => allenCunneenQueueWait(2, 1, 1, Number.NaN)).toThrow("serviceCv must be a finite number of at least 0, got NaN");
    expect(() => allenCunneenFactor(1, -1)).toThrow("arrivalCv must be a finite number of at least 0, got -1");
  });
});
