import { describe, expect, it } from "vitest";
import {
  erlangB,
  erlangBLoadDerivative,
  erlangC,
  erlangCLoadDerivative,
  mmcMetrics,
  mmcQueueWait,
  mmcQueueWaitSlope,
  mmcShareWaitingWithin,
} from "../../../app/engine/erlang";

/**
 * Reference values for the M/M/c kernels. Each row names its source; "from memory" means the
 * citation was recalled rather than re-read (CHECKS.md "[mem]"). Tolerances: textbook rows are
 * printed to 6 decimals, so we allow 5e-7 absolute (half a unit in the last printed place);
 * exact fractions get 1e-12 (a few ulps of double arithmetic over short recursions).
 */
describe("M/M/c reference values", () => {
  it("M/M/2 at λ = 1, μ = 1: B = 0.2, C = 1/3, Wq = 1/3, L = 4/3 — Erlang C formula; Kleinrock (1975) Queueing Systems vol. 1 (from memory)", () => {
    // Derivation: a = 1; B = (1/2)/(1 + 1 + 1/2) = 0.2; C = 0.2/(1 − 0.5·0.8) = 1/3; Wq = C/(2 − 1).
    expect(erlangB(2, 1)).toBeCloseTo(0.2, 12);
    expect(erlangC(2, 1)).toBeCloseTo(1 / 3, 12);
    const metrics = mmcMetrics(2, 1, 1);
    expect(metrics.queueWait).toBeCloseTo(1 / 3, 12);
    expect(metrics.numberInSystem).toBeCloseTo(4 / 3, 12);
  });

  it("hospital example, λ = 2/h, μ = 3/h — Hillier & Lieberman, Introduction to Operations Research, queueing chapter (from memory)", () => {
    const single = mmcMetrics(1, 3, 2);
    expect(single.probabilityEmpty).toBeCloseTo(1 / 3, 12);
    expect(single.numberInSystem).toBeCloseTo(2, 12);
    expect(single.queueLength).toBeCloseTo(4 / 3, 12);
    expect(single.timeInSystem).toBeCloseTo(1, 12);
    expect(single.queueWait).toBeCloseTo(2 / 3, 12);
    const pair = mmcMetrics(2, 3, 2);
    expect(pair.probabilityEmpty).toBeCloseTo(1 / 2, 12);
    expect(pair.numberInSystem).toBeCloseTo(3 / 4, 12);
    expect(pair.queueLength).toBeCloseTo(1 / 12, 12);
    expect(pair.queueWait).toBeCloseTo(1 / 24, 12);
  });

  it("M/M/3, λ = 300/yr, 1/μ = 2 days — Bronson (1982) Schaum's Outline of Operations Research, problem 24.6", () => {
    // In days: λ = 300/365 per day, μ = 1/2 per day. Printed to 6 decimals → tolerance 5e-7.
    const metrics = mmcMetrics(3, 0.5, 300 / 365);
    expect(Math.abs(metrics.probabilityEmpty - 0.177537)).toBeLessThan(5e-7);
    expect(Math.abs(metrics.queueLength - 0.352426)).toBeLessThan(5e-7);
    expect(Math.abs(metrics.numberInSystem - 1.996262)).toBeLessThan(5e-7);
    expect(Math.abs(metrics.queueWait - 0.428785)).toBeLessThan(5e-7);
  });

  it("M/M/1, λ = 24/h, μ = 30/h: P0 = 0.2, L = 4, W = 1/6 h — Bronson (1982), problem 23.3", () => {
    const metrics = mmcMetrics(1, 30, 24);
    expect(metrics.probabilityEmpty).toBeCloseTo(0.2, 12);
    expect(metrics.numberInSystem).toBeCloseTo(4, 12);
    expect(metrics.timeInSystem).toBeCloseTo(1 / 6, 12);
  });

  // Values derived from the stable recursion (CHECKS.md "[derived]"); C(11, 10) ≈ 0.682 is also the
  // classic staffing-table figure (from memory). Tolerance 1e-9: the values are given to 10 decimals.
  const erlangCTable: [servers: number, load: number, expected: number][] = [
    [10, 8, 0.4091801508],
    [11, 10, 0.6821182047],
    [7, 6, 0.6138301231],
    [25, 20, 0.2091028266],
    [100, 90, 0.2169404809],
  ];
  it.each(erlangCTable)("Erlang C(%i, %f) = %f to 1e-9", (servers, load, expected) => {
    expect(Math.abs(erlangC(servers, load) - expected)).toBeLessThan(1e-9);
  });

  it("Erlang B(10, 8) = 0.1216610643 to 1e-9 — derived from the recursion", () => {
    expect(Math.abs(erlangB(10, 8) - 0.1216610643)).toBeLessThan(1e-9);
  });

  it("agrees with the direct sum Σ a^k/k! where that sum is safe (c ≤ 30)", () => {
    for (let servers = 1; servers <= 30; servers++) {
      for (const load of [0.3, 0.9 * servers, 1.4 * servers]) {
        let term = 1;
        let total = 1;
        for (let k = 1; k <= servers; k++) {
          term *= load / k;
          total += term;
        }
        expect(erlangB(servers, load)).toBeCloseTo(term / total, 13);
      }
    }
  });
});

describe("stability for many servers and loads near capacity", () => {
  it("c = 500 at ρ = 0.999 gives finite probabilities in [0, 1] and a finite, large wait", () => {
    const servers = 500;
    const load = 0.999 * servers;
    const blocking = erlangB(servers, load);
    const waiting = erlangC(servers, load);
    expect(Number.isFinite(blocking)).toBe(true);
    expect(blocking).toBeGreaterThan(0);
    expect(blocking).toBeLessThan(1);
    // Near ρ = 1, C → 1 from below; by the B→C identity C > B always.
    expect(waiting).toBeGreaterThan(blocking);
    expect(waiting).toBeLessThan(1);
    const metrics = mmcMetrics(servers, 1, load);
    expect(Number.isFinite(metrics.queueWait)).toBe(true);
    expect(metrics.queueWait).toBeCloseTo(waiting / (servers - load), 9);
    expect(metrics.probabilityEmpty).toBeGreaterThanOrEqual(0);
    expect(Number.isFinite(metrics.probabilityEmpty)).toBe(true);
    // Little's law must still hold: L = λW.
    expect(metrics.numberInSystem).toBeCloseTo(load * metrics.timeInSystem, 6);
  });

  it("the probabilities of an M/M/c queue sum to 1 when P0 is taken through logarithms (c = 200)", () => {
    // P(N = k) = P0 a^k/k! for k ≤ c and P(N ≥ c) = C; so P0·Σ_{k<c} a^k/k! + C = 1.
    const servers = 200;
    const load = 180;
    const { probabilityEmpty, probabilityOfWaiting } = mmcMetrics(servers, 1, load);
    let logTerm = 0;
    let belowC = 0;
    for (let k = 0; k < servers; k++) {
      if (k > 0) logTerm += Math.log(load / k);
      belowC += Math.exp(Math.log(probabilityEmpty) + logTerm);
    }
    expect(belowC + probabilityOfWaiting).toBeCloseTo(1, 10);
  });

  it("returns Infinity waits at and above capacity, and no steady-state measures", () => {
    expect(mmcQueueWait(2, 1, 2)).toBe(Infinity);
    expect(mmcQueueWait(2, 1, 3)).toBe(Infinity);
    expect(mmcQueueWaitSlope(2, 1, 2)).toBe(Infinity);
    expect(mmcShareWaitingWithin(2, 1, 2, 5)).toBe(0);
    const metrics = mmcMetrics(3, 1, 4);
    expect(metrics.queueLength).toBe(Infinity);
    expect(metrics.probabilityOfWaiting).toBe(1);
    expect(erlangC(3, 3)).toBe(1);
  });

  it("an empty site has no wait", () => {
    expect(mmcQueueWait(3, 2, 0)).toBe(0);
    expect(mmcMetrics(3, 2, 0).probabilityEmpty).toBe(1);
    expect(mmcShareWaitingWithin(3, 2, 0, 0)).toBe(1);
  });
});

describe("P(Wq ≤ t) for M/M/c", () => {
  it("equals 1 − C·exp(−(cμ − λ)t): worked example c = 2, μ = 1, λ = 1, t = 1 → 0.877374 — Gross & Harris (1998) Fundamentals of Queueing Theory (from memory)", () => {
    expect(mmcShareWaitingWithin(2, 1, 1, 1)).toBeCloseTo(1 - Math.exp(-1) / 3, 12);
    expect(mmcShareWaitingWithin(2, 1, 1, 0)).toBeCloseTo(2 / 3, 12);
  });

  it("integrates to the mean wait: ∫ P(Wq > t) dt = Wq (trapezoid rule on a fine grid)", () => {
    const [servers, rate, arrivals] = [5, 1.3, 5.6];
    const step = 1e-3;
    let area = 0;
    for (let t = 0; t < 60; t += step) {
      const left = 1 - mmcShareWaitingWithin(servers, rate, arrivals, t);
      const right = 1 - mmcShareWaitingWithin(servers, rate, arrivals, t + step);
      area += ((left + right) / 2) * step;
    }
    expect(area).toBeCloseTo(mmcQueueWait(servers, rate, arrivals), 6);
  });
});

describe("derivatives used for marginal costs", () => {
  function centralDifference(f: (x: number) => number, x: number, h: number): number {
    return (f(x + h) - f(x - h)) / (2 * h);
  }

  it("worked examples at c = 2, a = 1: dB/da = 0.24, dC/da = 5/9, dWq/dλ = 8/9", () => {
    expect(erlangBLoadDerivative(2, 1)).toBeCloseTo(0.24, 12);
    expect(erlangCLoadDerivative(2, 1)).toBeCloseTo(5 / 9, 12);
    expect(mmcQueueWaitSlope(2, 1, 1)).toBeCloseTo(8 / 9, 12);
  });

  it("dWq/dλ matches central finite differences to 1e-6 relative over many c, μ and loads", () => {
    // Central differences have O(h²) truncation error; h = 1e-5·cμ keeps it far below 1e-6
    // relative except right against capacity, which the grid stops short of (ρ ≤ 0.97).
    for (const servers of [1, 2, 3, 7, 20, 120]) {
      for (const rate of [0.5, 1, 4]) {
        for (const utilisation of [0.05, 0.3, 0.6, 0.85, 0.97]) {
          const arrivals = utilisation * servers * rate;
          const h = 1e-5 * servers * rate * (1 - utilisation);
          const numeric = centralDifference((x) => mmcQueueWait(servers, rate, x), arrivals, h);
          const analytic = mmcQueueWaitSlope(servers, rate, arrivals);
          expect(Math.abs(analytic - numeric)).toBeLessThan(1e-6 * Math.abs(analytic) + 1e-12);
        }
      }
    }
  });

  it("dB/da matches finite differences, including the a → 0 limit", () => {
    for (const servers of [1, 4, 50]) {
      for (const load of [0.2, servers * 0.8, servers * 1.5]) {
        const numeric = centralDifference((a) => erlangB(servers, a), load, 1e-6);
        expect(erlangBLoadDerivative(servers, load)).toBeCloseTo(numeric, 7);
      }
    }
    expect(erlangBLoadDerivative(1, 0)).toBe(1);
    expect(erlangBLoadDerivative(3, 0)).toBe(0);
  });
});

describe("input errors name the argument and the value", () => {
  const cases: [label: string, call: () => unknown, message: string][] = [
    ["fractional servers", () => mmcQueueWait(2.5, 1, 1), "servers must be a positive integer, got 2.5"],
    ["zero servers", () => erlangB(0, 1), "servers must be a positive integer, got 0"],
    ["NaN servers", () => erlangC(Number.NaN, 1), "servers must be a positive integer, got NaN"],
    ["zero rate", () => mmcMetrics(2, 0, 1), "ratePerServer must be a finite number greater than 0, got 0"],
    ["negative rate", () => mmcQueueWaitSlope(2, -1, 1), "ratePerServer must be a finite number greater than 0, got -1"],
    ["negative arrivals", () => mmcQueueWait(2, 1, -0.5), "arrivalRate must be a finite number of at least 0, got -0.5"],
    ["NaN arrivals", () => mmcMetrics(2, 1, Number.NaN), "arrivalRate must be a finite number of at least 0, got NaN"],
    ["infinite arrivals", () => mmcQueueWait(2, 1, Infinity), "arrivalRate must be a finite number of at least 0, got Infinity"],
    ["negative load", () => erlangB(3, -1), "offeredLoad must be a finite number of at least 0, got -1"],
    ["negative time", () => mmcShareWaitingWithin(2, 1, 1, -2), "withinTime must be a finite number of at least 0, got -2"],
  ];
  it.each(cases)("%s", (_label, call, message) => {
    expect(call).toThrow(RangeError);
    expect(call).toThrow(message);
  });
});
