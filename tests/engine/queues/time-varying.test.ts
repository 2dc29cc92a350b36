import { describe, expect, it } from "vitest";
import { erlangC, mmcShareWaitingWithin } from "../../../app/engine/erlang";
import { siteMetrics } from "../../../app/engine/site-wait";
import { pointwiseStationaryAverage, serversNeeded, sippStaffing } from "../../../app/engine/time-varying";

/**
 * Time-average queue length of the periodic regime of an M_t/M/c queue, computed here — in the
 * test only — as an independent reference: the Kolmogorov forward equations of the birth–death
 * process (truncated at `states`), integrated by classical Runge–Kutta over `warmUpPeriods`
 * periods to forget the start, then averaged over one more period.
 * Method: the numerical approach of Green & Kolesar (1991), who integrated the same equations.
 */
function periodicQueueLength(servers: number, rate: number, arrival: (t: number) => number, period: number, step: number, warmUpPeriods: number, states: number): number {
  const derivative = (time: number, p: Float64Array, out: Float64Array) => {
    const lambda = arrival(time);
    for (let n = 0; n < states; n++) {
      const inflowFromBelow = n > 0 ? lambda * p[n - 1] : 0;
      const inflowFromAbove = n + 1 < states ? Math.min(n + 1, servers) * rate * p[n + 1] : 0;
      const outflow = ((n + 1 < states ? lambda : 0) + Math.min(n, servers) * rate) * p[n];
      out[n] = inflowFromBelow + inflowFromAbove - outflow;
    }
  };
  const p = new Float64Array(states);
  p[0] = 1;
  const k1 = new Float64Array(states), k2 = new Float64Array(states), k3 = new Float64Array(states), k4 = new Float64Array(states);
  const scratch = new Float64Array(states);
  const stepsPerPeriod = Math.round(period / step);
  const h = period / stepsPerPeriod;
  let time = 0;
  let area = 0;
  const queueLength = (q: Float64Array) => {
    let sum = 0;
    for (let n = servers + 1; n < states; n++) sum += (n - servers) * q[n];
    return sum;
  };
  for (let periodIndex = 0; periodIndex <= warmUpPeriods; periodIndex++) {
    for (let s = 0; s < stepsPerPeriod; s++) {
      if (periodIndex === warmUpPeriods) area += queueLength(p) * h; // rectangle rule on a periodic integrand
      derivative(time, p, k1);
      for (let n = 0; n < states; n++) scratch[n] = p[n] + (h / 2) * k1[n];
      derivative(time + h / 2, scratch, k2);
      for (let n = 0; n < states; n++) scratch[n] = p[n] + (h / 2) * k2[n];
      derivative(time + h / 2, scratch, k3);
      for (let n = 0; n < states; n++) scratch[n] = p[n] + h * k3[n];
      derivative(time + h, scratch, k4);
      for (let n = 0; n < states; n++) p[n] += (h / 6) * (k1[n] + 2 * k2[n] + 2 * k3[n] + k4[n]);
      time += h;
    }
  }
  return area / period;
}

describe("pointwise stationary approximation (Green & Kolesar 1991, Management Science 37(1):84–97)", () => {
  const sinusoid = (period: number) => (t: number) => 3 * (1 + 0.25 * Math.sin((2 * Math.PI * t) / period));

  it("c = 4, μ = 1, λ(t) = 3(1 + 0.25 sin 2πt/T): PSA time-average Lq = 3.561560, whatever T", () => {
    // Printed to 6 decimals → tolerance 5e-7. The rectangle rule on 4096 points of a smooth
    // periodic integrand is accurate far beyond that (64 points already agree to 1e-12).
    for (const period of [2.4, 24, 2400]) {
      const result = pointwiseStationaryAverage({ servers: 4, ratePerServer: 1, arrivalRate: sinusoid(period), period });
      expect(Math.abs(result.queueLength - 3.56156)).toBeLessThan(5e-7);
      expect(result.peakUtilisation).toBeCloseTo(0.9375, 12);
      expect(result.queueWait).toBeCloseTo(result.queueLength / 3, 12);
    }
  });

  it("PSA is an upper bound on the periodic regime: exact 1.539 at T = 2.4 and 3.503 at T = 2400 (Green & Kolesar 1991; Whitt 1991)", () => {
    // Published to 3 decimals → tolerance 1e-3. Our integration error is far smaller: halving the
    // step and doubling the states moved the results by < 1e-4 (1.539207 / 3.503175 when written);
    // the truncated tail beyond 0.9375^300 ≈ 4e-9 is negligible.
    const psa = 3.56156;
    const short = periodicQueueLength(4, 1, sinusoid(2.4), 2.4, 0.02, 40, 200);
    expect(Math.abs(short - 1.539)).toBeLessThan(1e-3);
    const long = periodicQueueLength(4, 1, sinusoid(2400), 2400, 0.1, 1, 300);
    expect(Math.abs(long - 3.503)).toBeLessThan(1e-3);
    expect(short).toBeLessThan(psa);
    expect(long).toBeLessThan(psa);
  });

  it("reports no steady state when λ(t) reaches capacity", () => {
    const result = pointwiseStationaryAverage({ servers: 2, ratePerServer: 1, arrivalRate: (t) => 1.5 + Math.sin(2 * Math.PI * t), period: 1, points: 16 });
    expect(result.queueLength).toBe(Infinity);
    expect(result.peakUtilisation).toBeCloseTo(1.25, 12);
  });
});

describe("SIPP staffing (Green, Kolesar & Soares 2001, Operations Research 49(4):549–564)", () => {
  it("λ = 9 then 10, μ = 1, target P(wait) ≤ 0.7 → 10 then 11 teams", () => {
    // C(10, 9) = 0.6687 ≤ 0.7 while C(9, 9) = 1; C(11, 10) = 0.6821 ≤ 0.7 while C(10, 10) = 1.
    expect(sippStaffing([9, 10], 1, 0.7)).toEqual([10, 11]);
  });

  it("each answer is the smallest stable c meeting the target (checked against Erlang C directly)", () => {
    const rates = [0, 0.4, 3, 17.5, 42, 260];
    const staffing = sippStaffing(rates, 1.3, 0.25);
    rates.forEach((rate, period) => {
      const c = staffing[period];
      if (rate === 0) return expect(c).toBe(0);
      expect(c).toBeGreaterThan(rate / 1.3);
      expect(erlangC(c, rate / 1.3)).toBeLessThanOrEqual(0.25);
      if (c - 1 > rate / 1.3) expect(erlangC(c - 1, rate / 1.3)).toBeGreaterThan(0.25);
    });
  });

  it("rejects a target outside (0, 1] and a bad rate, naming them", () => {
    expect(() => sippStaffing([1], 1, 0)).toThrow("targetProbabilityOfWaiting must be a probability in (0, 1], got 0");
    expect(() => sippStaffing([1], 1, 1.2)).toThrow("targetProbabilityOfWaiting must be a probability in (0, 1], got 1.2");
    expect(() => sippStaffing([1, -3], 1, 0.5)).toThrow("arrivalRates[1] must be a finite number of at least 0, got -3");
    expect(() => sippStaffing([1], 0, 0.5)).toThrow("ratePerServer must be a finite number greater than 0, got 0");
  });
});

describe("teams needed to reach a share within the standard", () => {
  it("M/M/c: λ = 9, μ = 1, t = 0.5, target 0.9 → 12 teams (11 give 0.841639, 12 give 0.940640 by 1 − C·e^{−(cμ−λ)t})", () => {
    expect(serversNeeded({ arrivalRate: 9, ratePerServer: 1, standardWeeks: 0.5, targetShareWithin: 0.9 })).toBe(12);
    expect(mmcShareWaitingWithin(11, 1, 9, 0.5)).toBeLessThan(0.9);
    expect(mmcShareWaitingWithin(12, 1, 9, 0.5)).toBeGreaterThanOrEqual(0.9);
  });

  it("is the smallest c whose site share meets the target, with priority and service variability", () => {
    for (const options of [
      { arrivalRate: 30, ratePerServer: 2.5, standardWeeks: 18, targetShareWithin: 0.92, serviceCv: 0.6, urgentArrivalRate: 4 },
      { arrivalRate: 5, ratePerServer: 1, standardWeeks: 2, targetShareWithin: 0.99 },
      { arrivalRate: 120, ratePerServer: 0.8, standardWeeks: 6, targetShareWithin: 0.5, serviceCv: 1.4 },
    ]) {
      const c = serversNeeded(options);
      const share = (teams: number) =>
        siteMetrics({ teams, ratePerTeam: options.ratePerServer, serviceCv: options.serviceCv }, options.urgentArrivalRate ?? 0, options.arrivalRate, options.standardWeeks).shareWithinStandard;
      expect(share(c)).toBeGreaterThanOrEqual(options.targetShareWithin);
      expect(share(c - 1)).toBeLessThan(options.targetShareWithin);
    }
  });

  it("needs no teams without demand, and names bad fields", () => {
    expect(serversNeeded({ arrivalRate: 0, ratePerServer: 1, standardWeeks: 18, targetShareWithin: 0.9 })).toBe(0);
    expect(() => serversNeeded({ arrivalRate: 1, ratePerServer: 1, standardWeeks: 18, targetShareWithin: 1 })).toThrow(
      "targetShareWithin must be a share in (0, 1), got 1",
    );
    expect(() => serversNeeded({ arrivalRate: 1, ratePerServer: 1, standardWeeks: -1, targetShareWithin: 0.9 })).toThrow(
      "standardWeeks must be a finite number of at least 0, got -1",
    );
    expect(() => serversNeeded({ arrivalRate: 1, ratePerServer: 1, standardWeeks: 1, targetShareWithin: 0.9, urgentArrivalRate: Number.NaN })).toThrow(
      "urgentArrivalRate must be a finite number of at least 0, got NaN",
    );
  });
});
