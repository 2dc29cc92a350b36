/**
 * Demand that varies through the year: staffing period by period and the pointwise stationary
 * approximation.
 *
 * SIPP (stationary independent period by period): split time into periods, treat each period as
 * a stationary M/M/c queue at its own arrival rate, and staff each to a target. It is accurate
 * when periods are long compared with the time a queue takes to settle (weeks-long periods and
 * weeks-long waits: check before relying on it) and can miss targets when load changes quickly
 * (lagged variants exist).
 * Source: Green, Kolesar & Soares (2001) "Improving the SIPP approach for staffing service
 * systems that have cyclic demands", Operations Research 49(4):549–564.
 *
 * PSA (pointwise stationary approximation): the time-average of the stationary measure at each
 * instant's arrival rate. For M/M/c with sinusoidal arrivals it is an upper bound on the true
 * periodic-regime queue length, tight when the cycle is long.
 * Source: Green & Kolesar (1991) "The pointwise stationary approximation for queues with
 * nonstationary arrivals", Management Science 37(1):84–97; Whitt (1991) "The pointwise stationary
 * approximation for Mt/Mt/s queues is asymptotically correct as the rates increase",
 * Management Science 37(3):307–314.
 */
import { assertNonNegative, assertPositiveRate, assertServers, mmcMetrics } from "./erlang";
import { siteMetrics } from "./site-wait";

/**
 * Smallest team count per period with P(wait) = C(c, λ/μ) ≤ target (and c > λ/μ, so that the
 * period has a steady state); 0 for a period with no arrivals.
 *
 * Walks c upward from ⌊a⌋ + 1 updating Erlang B by one recursion step per team, so the cost is
 * linear in the answer.
 * Worked example (Green, Kolesar & Soares 2001): λ = 9 then 10, μ = 1, target 0.7 → 10 then 11
 * (C(10, 9) = 0.6687, C(11, 10) = 0.6821).
 *
 * @param arrivalRates λ per period
 * @param ratePerServer μ
 * @param targetProbabilityOfWaiting in (0, 1]
 */
export function sippStaffing(arrivalRates: readonly number[], ratePerServer: number, targetProbabilityOfWaiting: number): number[] {
  assertPositiveRate(ratePerServer);
  if (!(targetProbabilityOfWaiting > 0 && targetProbabilityOfWaiting <= 1)) {
    throw new RangeError(`targetProbabilityOfWaiting must be a probability in (0, 1], got ${String(targetProbabilityOfWaiting)}`);
  }
  return arrivalRates.map((arrivalRate, period) => {
    assertNonNegative(arrivalRate, `arrivalRates[${period}]`);
    if (arrivalRate === 0) return 0;
    const load = arrivalRate / ratePerServer;
    let blocking = 1;
    for (let servers = 1; ; servers++) {
      const numerator = load * blocking;
      blocking = numerator / (servers + numerator);
      if (servers <= load) continue;
      const utilisation = load / servers;
      const probabilityOfWaiting = blocking / (1 - utilisation * (1 - blocking));
      if (probabilityOfWaiting <= targetProbabilityOfWaiting) return servers;
    }
  });
}

export interface ServersNeededOptions {
  /** Routine referrals per week. */
  arrivalRate: number;
  /** Patients per team per week. */
  ratePerServer: number;
  /** The waiting standard t in weeks. */
  standardWeeks: number;
  /** Required share of routine patients waiting at most t, in (0, 1). */
  targetShareWithin: number;
  /** Coefficient of variation of service time; 1 by default. */
  serviceCv?: number;
  /** Urgent referrals per week served ahead of routine ones; 0 by default. */
  urgentArrivalRate?: number;
}

/**
 * Smallest number of teams with P(routine Wq ≤ standardWeeks) ≥ targetShareWithin, using the
 * same share as `siteMetrics` (exact for M/M/c FCFS, 1 − C·exp(−(cμ − λ)t); the documented
 * approximation there under priority or cv ≠ 1). 0 when there are no arrivals at all.
 * Worked example: λ = 9, μ = 1, t = 0.5 weeks, target 0.9 → 12 (share 0.940640; 11 teams give 0.841639).
 */
export function serversNeeded(options: ServersNeededOptions): number {
  const { arrivalRate, ratePerServer, standardWeeks, targetShareWithin } = options;
  const serviceCv = options.serviceCv ?? 1;
  const urgentArrivalRate = options.urgentArrivalRate ?? 0;
  assertNonNegative(arrivalRate, "arrivalRate");
  assertPositiveRate(ratePerServer);
  assertNonNegative(standardWeeks, "standardWeeks");
  assertNonNegative(serviceCv, "serviceCv");
  assertNonNegative(urgentArrivalRate, "urgentArrivalRate");
  if (!(targetShareWithin > 0 && targetShareWithin < 1)) {
    throw new RangeError(`targetShareWithin must be a share in (0, 1), got ${String(targetShareWithin)}`);
  }
  const totalRate = arrivalRate + urgentArrivalRate;
  if (totalRate === 0) return 0;
  for (let servers = Math.floor(totalRate / ratePerServer) + 1; ; servers++) {
    const { shareWithinStandard } = siteMetrics({ teams: servers, ratePerTeam: ratePerServer, serviceCv }, urgentArrivalRate, arrivalRate, standardWeeks);
    if (shareWithinStandard >= targetShareWithin) return servers;
  }
}

export interface PointwiseStationaryOptions {
  servers: number;
  ratePerServer: number;
  /** λ(t), periodic with the given period. */
  arrivalRate: (time: number) => number;
  period: number;
  /** Equally spaced sample points over one period; 4096 by default. */
  points?: number;
}

export interface PointwiseStationaryResult {
  /** (1/T)∫ Lq(λ(t)) dt; Infinity if λ(t) ≥ cμ anywhere sampled. */
  queueLength: number;
  /** Arrival-weighted mean queue wait ∫λ(t)Wq(t)dt / ∫λ(t)dt (= average Lq / average λ). */
  queueWait: number;
  /** max_t λ(t)/(cμ). */
  peakUtilisation: number;
}

/**
 * Pointwise stationary approximation over one period of a periodic arrival rate.
 *
 *   Lq_PSA = (1/T) ∫₀ᵀ Lq_{M/M/c}(λ(t)) dt,
 *
 * integrated by the rectangle rule on equally spaced points, which for a smooth periodic
 * integrand converges faster than any power of the spacing (it is the trapezoid rule on a
 * periodic function).
 * Worked example (Green & Kolesar 1991): c = 4, μ = 1, λ(t) = 3(1 + 0.25 sin 2πt/T) → 3.561560,
 * for any T (the PSA does not depend on the cycle length).
 */
export function pointwiseStationaryAverage(options: PointwiseStationaryOptions): PointwiseStationaryResult {
  const { servers, ratePerServer, arrivalRate, period } = options;
  const points = options.points ?? 4096;
  assertServers(servers);
  assertPositiveRate(ratePerServer);
  assertPositiveRate(period, "period");
  assertServers(points, "points");
  let queueLengthSum = 0;
  let arrivalSum = 0;
  let peakUtilisation = 0;
  for (let k = 0; k < points; k++) {
    const rate = arrivalRate((k / points) * period);
    assertNonNegative(rate, `arrivalRate(${(k / points) * period})`);
    const metrics = mmcMetrics(servers, ratePerServer, rate);
    peakUtilisation = Math.max(peakUtilisation, metrics.utilisation);
    queueLengthSum += metrics.queueLength;
    arrivalSum += rate;
  }
  const queueLength = queueLengthSum / points;
  const meanArrivalRate = arrivalSum / points;
  return {
    queueLength,
    queueWait: meanArrivalRate > 0 ? queueLength / meanArrivalRate : 0,
    peakUtilisation,
  };
}
