/**
 * The Allen–Cunneen approximation: the mean queue wait of a GI/G/c site from the exact M/M/c
 * wait, scaled by the variability of arrivals and service.
 *
 *   Wq(GI/G/c) ≈ Wq(M/M/c) · (ca² + cs²)/2,
 *
 * with ca, cs the coefficients of variation (standard deviation / mean) of inter-arrival and
 * service times. Referrals arrive as a Poisson stream (ca = 1), so the factor is (1 + cs²)/2:
 * 1 for exponential service, 1/2 for fixed-length appointments.
 *
 * For one server and Poisson arrivals it is exact (Pollaczek–Khinchine):
 * Wq = ρ·E[S]·(1 + cs²)/(2(1 − ρ)). For several servers it is an approximation, usually within
 * a few per cent at the loads that matter (e.g. ~2% low for M/D/2 at ρ = 0.75).
 *
 * Sources: Allen (1990) *Probability, Statistics, and Queueing Theory*, 2nd ed., §6 (from memory);
 * Kingman (1961) "The single server queue in heavy traffic", Proc. Cambridge Phil. Soc. 57(4).
 * Worked example: M/D/1 at ρ = 0.9, E[S] = 1: Wq(M/M/1) = 9, factor 1/2 → 4.5 (exact by P–K).
 */
import { assertNonNegative, mmcQueueWait, mmcQueueWaitSlope } from "./erlang";

/**
 * The variability factor (ca² + cs²)/2. Throws a RangeError naming the argument unless each
 * coefficient of variation is a finite number ≥ 0.
 * Worked example: serviceCv = 0 (fixed appointment length), Poisson arrivals → 0.5.
 */
export function allenCunneenFactor(serviceCv: number, arrivalCv = 1): number {
  assertNonNegative(serviceCv, "serviceCv");
  assertNonNegative(arrivalCv, "arrivalCv");
  return (arrivalCv * arrivalCv + serviceCv * serviceCv) / 2;
}

/**
 * Approximate mean queue wait of a GI/G/c site: Wq(M/M/c) · (ca² + cs²)/2; Infinity when λ ≥ cμ.
 * Worked example: c = 1, μ = 1, λ = 0.9, serviceCv = 0 → 4.5.
 */
export function allenCunneenQueueWait(
  servers: number,
  ratePerServer: number,
  arrivalRate: number,
  serviceCv: number,
  arrivalCv = 1,
): number {
  return mmcQueueWait(servers, ratePerServer, arrivalRate) * allenCunneenFactor(serviceCv, arrivalCv);
}

/**
 * d Wq / dλ of the Allen–Cunneen wait: the exact M/M/c slope times the same constant factor
 * (the factor does not depend on λ). Worked example: c = 2, μ = 1, λ = 1, serviceCv = 0 → 4/9.
 */
export function allenCunneenQueueWaitSlope(
  servers: number,
  ratePerServer: number,
  arrivalRate: number,
  serviceCv: number,
  arrivalCv = 1,
): number {
  return mmcQueueWaitSlope(servers, ratePerServer, arrivalRate) * allenCunneenFactor(serviceCv, arrivalCv);
}
