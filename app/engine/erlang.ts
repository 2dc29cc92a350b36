/**
 * Erlang's formulas for a site with c identical teams: the M/M/c queue (Poisson arrivals,
 * exponential service, first come first served, unlimited waiting room).
 *
 * Every function takes (servers c, ratePerServer μ, arrivalRate λ) in consistent units
 * (the engine uses patients per week, so waits come out in weeks). The offered load is
 * a = λ/μ and the utilisation ρ = a/c. At or above ρ = 1 there is no steady state and the
 * wait functions return Infinity rather than a meaningless number.
 *
 * Numerical policy: Erlang B is computed by the recursion
 *   B₀ = 1,  B_k = a·B_{k−1} / (k + a·B_{k−1}),
 * whose every step is a ratio of positive numbers in [0, 1], so it neither overflows
 * (no a^c or c!) nor loses precision for hundreds of servers or loads near capacity.
 * Source: Jagerman (1974) "Some properties of the Erlang loss function", Bell System
 * Technical Journal 53(3):525–551 (the recursion and its stability).
 */

/** Throws a RangeError naming the argument unless it is a positive integer. */
export function assertServers(servers: number, name = "servers"): void {
  if (!Number.isInteger(servers) || servers < 1) {
    throw new RangeError(`${name} must be a positive integer, got ${String(servers)}`);
  }
}

/** Throws a RangeError naming the argument unless it is a finite number > 0. */
export function assertPositiveRate(rate: number, name = "ratePerServer"): void {
  if (!Number.isFinite(rate) || rate <= 0) {
    throw new RangeError(`${name} must be a finite number greater than 0, got ${String(rate)}`);
  }
}

/** Throws a RangeError naming the argument unless it is a finite number ≥ 0. */
export function assertNonNegative(value: number, name = "arrivalRate"): void {
  if (!Number.isFinite(value) || value < 0) {
    throw new RangeError(`${name} must be a finite number of at least 0, got ${String(value)}`);
  }
}

function assertQueueInputs(servers: number, ratePerServer: number, arrivalRate: number): void {
  assertServers(servers);
  assertPositiveRate(ratePerServer);
  assertNonNegative(arrivalRate);
}

/**
 * Erlang B (the Erlang loss formula): the share of arrivals that find all c servers busy
 * when there is no waiting room (M/M/c/c). Insensitive to the service distribution.
 *
 *   B(c, a) = (a^c / c!) / Σ_{k=0..c} a^k / k!, computed by the stable recursion above.
 *
 * Source: Erlang (1917) "Solution of some problems in the theory of probabilities of
 * significance in automatic telephone exchanges", Post Office Electrical Engineers' Journal 10.
 * Worked example: B(2, 1) = 0.2; B(10, 8) = 0.1216610643.
 *
 * @param servers c, a positive integer
 * @param offeredLoad a = λ/μ in erlangs, finite and ≥ 0
 */
export function erlangB(servers: number, offeredLoad: number): number {
  assertServers(servers);
  assertNonNegative(offeredLoad, "offeredLoad");
  let blocking = 1;
  for (let k = 1; k <= servers; k++) {
    const numerator = offeredLoad * blocking;
    blocking = numerator / (k + numerator);
  }
  return blocking;
}

/**
 * Derivative of Erlang B with respect to the offered load:
 *
 *   dB/da = B · (c/a − 1 + B),
 *
 * from d ln B/da = c/a − (Σ_{k<c} a^k/k!)/(Σ_{k≤c} a^k/k!) = c/a − (1 − B).
 * At a = 0 the limit is 1 for c = 1 and 0 otherwise.
 * Source: Jagerman (1974), Bell System Technical Journal 53(3) (derivatives of the loss function).
 * Worked example: c = 2, a = 1: B = 0.2, dB/da = 0.2 · (2 − 1 + 0.2) = 0.24.
 */
export function erlangBLoadDerivative(servers: number, offeredLoad: number): number {
  const blocking = erlangB(servers, offeredLoad);
  if (offeredLoad === 0) return servers === 1 ? 1 : 0;
  return blocking * (servers / offeredLoad - 1 + blocking);
}

/**
 * Erlang C: the probability that an arrival must wait in M/M/c (all c servers busy), from
 * Erlang B by C = B / (1 − ρ(1 − B)), ρ = a/c. Returns 1 when a ≥ c (no steady state:
 * every arrival eventually waits).
 *
 * Source: Erlang (1917), as above; the B→C identity in Cooper (1981) *Introduction to
 * Queueing Theory*, 2nd ed., §3.4 (from memory).
 * Worked example: C(2, 1) = 1/3; C(10, 8) = 0.4091801508; C(100, 90) = 0.2169404809.
 */
export function erlangC(servers: number, offeredLoad: number): number {
  assertServers(servers);
  assertNonNegative(offeredLoad, "offeredLoad");
  if (offeredLoad >= servers) return 1;
  const blocking = erlangB(servers, offeredLoad);
  const utilisation = offeredLoad / servers;
  return blocking / (1 - utilisation * (1 - blocking));
}

/**
 * Derivative of Erlang C with respect to the offered load a (for a < c):
 *
 *   with D = 1 − ρ + ρB:  dC/da = [ (1 − ρ)·dB/da + B(1 − B)/c ] / D².
 *
 * Obtained by differentiating C = B/D with dρ/da = 1/c. Worked example: c = 2, a = 1:
 * B = 0.2, dB/da = 0.24, D = 0.6, dC/da = (0.5·0.24 + 0.2·0.8/2)/0.36 = 5/9.
 */
export function erlangCLoadDerivative(servers: number, offeredLoad: number): number {
  assertServers(servers);
  assertNonNegative(offeredLoad, "offeredLoad");
  if (offeredLoad >= servers) return Infinity;
  const blocking = erlangB(servers, offeredLoad);
  const blockingSlope = erlangBLoadDerivative(servers, offeredLoad);
  const utilisation = offeredLoad / servers;
  const denominator = 1 - utilisation + utilisation * blocking;
  return ((1 - utilisation) * blockingSlope + (blocking * (1 - blocking)) / servers) / (denominator * denominator);
}

/**
 * M/M/c mean wait in queue (before service starts):
 *
 *   Wq = C(c, a) / (cμ − λ),   Infinity when λ ≥ cμ.
 *
 * Source: Erlang (1917); Kleinrock (1975) *Queueing Systems* vol. 1, §3.5 (from memory).
 * Worked example: c = 2, μ = 1, λ = 1 → C = 1/3, Wq = 1/3.
 */
export function mmcQueueWait(servers: number, ratePerServer: number, arrivalRate: number): number {
  assertQueueInputs(servers, ratePerServer, arrivalRate);
  const spareRate = servers * ratePerServer - arrivalRate;
  if (spareRate <= 0) return Infinity;
  return erlangC(servers, arrivalRate / ratePerServer) / spareRate;
}

/**
 * Derivative of the M/M/c mean queue wait with respect to the arrival rate λ (λ < cμ):
 *
 *   dWq/dλ = (dC/da)/(μ·(cμ − λ)) + C/(cμ − λ)².
 *
 * This is the congestion term of a site's marginal cost: an extra referral/week raises
 * every patient's wait by this many weeks. Infinity at or above capacity.
 * Worked example: c = 2, μ = 1, λ = 1: (5/9)/1 + (1/3)/1 = 8/9.
 */
export function mmcQueueWaitSlope(servers: number, ratePerServer: number, arrivalRate: number): number {
  assertQueueInputs(servers, ratePerServer, arrivalRate);
  const spareRate = servers * ratePerServer - arrivalRate;
  if (spareRate <= 0) return Infinity;
  const offeredLoad = arrivalRate / ratePerServer;
  const waitProbability = erlangC(servers, offeredLoad);
  const waitProbabilitySlope = erlangCLoadDerivative(servers, offeredLoad);
  return waitProbabilitySlope / (ratePerServer * spareRate) + waitProbability / (spareRate * spareRate);
}

/**
 * P(Wq ≤ t) in M/M/c FCFS: the share of patients whose queue wait is at most t.
 *
 *   P(Wq ≤ t) = 1 − C(c, a) · exp(−(cμ − λ)·t),   0 when λ ≥ cμ.
 *
 * Exact for M/M/c FCFS: the wait of a patient who must wait is exponential with rate cμ − λ.
 * Source: Gross & Harris (1998) *Fundamentals of Queueing Theory*, 3rd ed., §2.3 (from memory).
 * Worked example: c = 2, μ = 1, λ = 1, t = 1: 1 − (1/3)e^{−1} = 0.877374.
 */
export function mmcShareWaitingWithin(
  servers: number,
  ratePerServer: number,
  arrivalRate: number,
  withinTime: number,
): number {
  assertQueueInputs(servers, ratePerServer, arrivalRate);
  assertNonNegative(withinTime, "withinTime");
  const spareRate = servers * ratePerServer - arrivalRate;
  if (spareRate <= 0) return 0;
  return 1 - erlangC(servers, arrivalRate / ratePerServer) * Math.exp(-spareRate * withinTime);
}

/** Steady-state measures of an M/M/c queue. Times in the units of 1/λ; counts in patients. */
export interface MmcMetrics {
  /** ρ = λ/(cμ), the share of team time in use (may be ≥ 1 when unstable). */
  utilisation: number;
  /** a = λ/μ, the offered load in erlangs (mean busy teams when stable). */
  offeredLoad: number;
  /** C(c, a): probability an arrival must wait; 1 when unstable. */
  probabilityOfWaiting: number;
  /** P0: probability the site is empty; 0 when unstable. */
  probabilityEmpty: number;
  /** Lq: mean number waiting; Infinity when unstable. */
  queueLength: number;
  /** L = Lq + a: mean number present; Infinity when unstable. */
  numberInSystem: number;
  /** Wq: mean wait in queue; Infinity when unstable. */
  queueWait: number;
  /** W = Wq + 1/μ: mean time in system; Infinity when unstable. */
  timeInSystem: number;
}

/**
 * All steady-state measures of M/M/c at once.
 *
 *   Lq = λ·Wq,  L = Lq + a,  W = Wq + 1/μ (Little's law),
 *   P0 = 1 / (Σ_{k<c} a^k/k! + a^c/(c!(1 − ρ))) = 1 / (T·(1/B − 1 + 1/(1 − ρ))),  T = a^c/c!,
 * with T taken through logarithms so that P0 is computed without overflow for large c.
 *
 * Source: Hillier & Lieberman, *Introduction to Operations Research*, queueing chapter (from memory).
 * Worked example (their hospital example): λ = 2/h, μ = 3/h, c = 2 → P0 = 1/2, Lq = 1/12,
 * L = 3/4, Wq = 1/24 h.
 */
export function mmcMetrics(servers: number, ratePerServer: number, arrivalRate: number): MmcMetrics {
  assertQueueInputs(servers, ratePerServer, arrivalRate);
  const offeredLoad = arrivalRate / ratePerServer;
  const utilisation = offeredLoad / servers;
  if (utilisation >= 1) {
    return {
      utilisation,
      offeredLoad,
      probabilityOfWaiting: 1,
      probabilityEmpty: 0,
      queueLength: Infinity,
      numberInSystem: Infinity,
      queueWait: Infinity,
      timeInSystem: Infinity,
    };
  }
  const queueWait = mmcQueueWait(servers, ratePerServer, arrivalRate);
  const queueLength = arrivalRate * queueWait;
  return {
    utilisation,
    offeredLoad,
    probabilityOfWaiting: erlangC(servers, offeredLoad),
    probabilityEmpty: mmcProbabilityEmpty(servers, offeredLoad),
    queueLength,
    numberInSystem: queueLength + offeredLoad,
    queueWait,
    timeInSystem: queueWait + 1 / ratePerServer,
  };
}

function mmcProbabilityEmpty(servers: number, offeredLoad: number): number {
  if (offeredLoad === 0) return 1;
  let logLastTerm = servers * Math.log(offeredLoad); // ln(a^c / c!)
  for (let k = 2; k <= servers; k++) logLastTerm -= Math.log(k);
  const blocking = erlangB(servers, offeredLoad);
  const utilisation = offeredLoad / servers;
  // 1/P0 = T·(1/B − 1 + 1/(1 − ρ)); combine in log space so that T may be huge or tiny.
  return Math.exp(-logLastTerm - Math.log(1 / blocking - 1 + 1 / (1 - utilisation)));
}
