import { describe, expect, it } from "vitest";
import { mmcQueueWait } from "../../../app/engine/erlang";
import { lowPriorityQueueWait, lowPriorityQueueWaitSlope, priorityQueueWaits } from "../../../app/engine/priority";

// Cobham (1954) "Priority assignment in waiting line problems", Journal of the Operations Research
// Society of America 2(1):70–76. Exact fractions: tolerance 1e-12 (rounding only).
describe("non-preemptive priority M/M/c with equal service rates (Cobham 1954)", () => {
  it("c = 2, μ = 1, λ = (0.5 urgent, 1.0 routine) → Wq = 3/7 and 12/7", () => {
    // a = 1.5, C(2, 1.5) = 9/14, W0 = C/(cμ) = 9/28; σ1 = 0.25, σ2 = 0.75;
    // Wq1 = W0/(1 − σ1) = 3/7, Wq2 = W0/((1 − σ1)(1 − σ2)) = 12/7.
    const [urgent, routine] = priorityQueueWaits(2, 1, [0.5, 1]);
    expect(urgent).toBeCloseTo(3 / 7, 12);
    expect(routine).toBeCloseTo(12 / 7, 12);
    expect(lowPriorityQueueWait(2, 1, 0.5, 1)).toBeCloseTo(12 / 7, 12);
  });

  it("conservation law: the λ-weighted mean wait equals the FCFS wait (9/7 in the example; Kleinrock 1965, from memory)", () => {
    const [urgent, routine] = priorityQueueWaits(2, 1, [0.5, 1]);
    expect((0.5 * urgent + 1 * routine) / 1.5).toBeCloseTo(9 / 7, 12);
    expect(mmcQueueWait(2, 1, 1.5)).toBeCloseTo(9 / 7, 12);
    // And for random instances with more classes and servers.
    let seed = 7;
    const random = () => ((seed = (seed * 16807) % 2147483647) / 2147483647);
    for (let trial = 0; trial < 200; trial++) {
      const servers = 1 + Math.floor(random() * 12);
      const rate = 0.2 + random() * 3;
      const classes = 1 + Math.floor(random() * 4);
      const weights = Array.from({ length: classes }, () => random());
      const total = random() * 0.98 * servers * rate;
      const weightSum = weights.reduce((sum, w) => sum + w, 0);
      const rates = weights.map((w) => (w / weightSum) * total);
      const waits = priorityQueueWaits(servers, rate, rates);
      const weightedMean = rates.reduce((sum, r, k) => sum + r * waits[k], 0) / total;
      expect(weightedMean).toBeCloseTo(mmcQueueWait(servers, rate, total), 9);
      // Higher classes never wait longer than lower ones.
      for (let k = 1; k < classes; k++) expect(waits[k]).toBeGreaterThanOrEqual(waits[k - 1]);
    }
  });

  it("one class is plain M/M/c", () => {
    expect(priorityQueueWaits(3, 2, [4.4])[0]).toBeCloseTo(mmcQueueWait(3, 2, 4.4), 14);
  });

  it("classes beyond capacity wait forever, higher classes do not", () => {
    const waits = priorityQueueWaits(2, 1, [0.5, 1, 1]);
    expect(waits[0]).toBeCloseTo(0.5 / 0.75, 12); // servers always busy: W0 = 1/(cμ) = 0.5
    expect(waits[1]).toBeCloseTo(0.5 / (0.75 * 0.25), 12);
    expect(waits[2]).toBe(Infinity);
  });

  it("the low-priority slope matches central differences", () => {
    for (const [servers, rate, high] of [[1, 2, 0.5], [3, 1, 1.2], [8, 0.7, 2]] as const) {
      const room = servers * rate - high;
      for (const share of [0.1, 0.5, 0.9]) {
        const x = share * room;
        const h = 1e-6 * room;
        const numeric = (lowPriorityQueueWait(servers, rate, high, x + h) - lowPriorityQueueWait(servers, rate, high, x - h)) / (2 * h);
        expect(Math.abs(lowPriorityQueueWaitSlope(servers, rate, high, x) - numeric)).toBeLessThan(1e-6 * numeric);
      }
      expect(lowPriorityQueueWaitSlope(servers, rate, high, room)).toBe(Infinity);
    }
  });

  it("input errors name the class", () => {
    expect(() => priorityQueueWaits(2, 1, [])).toThrow("arrivalRates must list at least one priority class, got none");
    expect(() => priorityQueueWaits(2, 1, [0.5, -1])).toThrow("arrivalRates[1] must be a finite number of at least 0, got -1");
    expect(() => lowPriorityQueueWaitSlope(2, 1, Number.NaN, 1)).toThrow("arrivalRates[0] must be a finite number of at least 0, got NaN");
    expect(() => priorityQueueWaits(0, 1, [1])).toThrow("servers must be a positive integer, got 0");
  });
});
