/**
 * Non-preemptive priority on an M/M/c site where every class has the same service rate μ
 * (urgent referrals are seen first but never interrupt a routine patient already in service).
 *
 *   W0 = C(c, a) / (cμ),  a = Σλ/μ   (mean residual work a newcomer must let clear),
 *   σ_k = (λ_1 + … + λ_k)/(cμ)       (utilisation by classes 1..k, class 1 the highest),
 *   Wq_k = W0 / ((1 − σ_{k−1})(1 − σ_k)),  σ_0 = 0.
 *
 * Class k's wait is finite while σ_k < 1 even if lower classes overload the site (then C = 1:
 * the servers are always busy). The λ-weighted mean wait equals the FCFS M/M/c wait
 * (Kleinrock's conservation law), because with equal μ the number of patients present does
 * not depend on the order of service.
 *
 * Source: Cobham (1954) "Priority assignment in waiting line problems", Journal of the
 * Operations Research Society of America 2(1):70–76.
 * Worked example: c = 2, μ = 1, λ = (0.5 urgent, 1.0 routine): C = 9/14, W0 = 9/28,
 * Wq = (3/7, 12/7); λ-weighted mean 9/7 = FCFS Wq.
 */
import { assertNonNegative, assertPositiveRate, assertServers, erlangC, erlangCLoadDerivative } from "./erlang";

function assertClassRates(arrivalRates: readonly number[]): void {
  if (arrivalRates.length === 0) throw new RangeError("arrivalRates must list at least one priority class, got none");
  arrivalRates.forEach((rate, index) => assertNonNegative(rate, `arrivalRates[${index}]`));
}

/**
 * Mean queue wait of each class, highest priority first; Infinity for a class k with σ_k ≥ 1.
 * @param arrivalRates λ_k per class, highest priority first
 */
export function priorityQueueWaits(servers: number, ratePerServer: number, arrivalRates: readonly number[]): number[] {
  assertServers(servers);
  assertPositiveRate(ratePerServer);
  assertClassRates(arrivalRates);
  const capacity = servers * ratePerServer;
  const totalRate = arrivalRates.reduce((sum, rate) => sum + rate, 0);
  const residualWork = erlangC(servers, totalRate / ratePerServer) / capacity;
  const waits: number[] = [];
  let cumulativeBefore = 0;
  for (const rate of arrivalRates) {
    const cumulative = cumulativeBefore + rate / capacity;
    waits.push(cumulative >= 1 ? Infinity : residualWork / ((1 - cumulativeBefore) * (1 - cumulative)));
    cumulativeBefore = cumulative;
  }
  return waits;
}

/**
 * Mean queue wait of the lowest-priority class behind a fixed higher-priority inflow:
 * the two-class case of Cobham's formula, used for the routine class at a site.
 *
 *   Wq_low(x) = C(c, (u + x)/μ) / (cμ) / ((1 − u/(cμ)) · (1 − (u + x)/(cμ))).
 *
 * With u = 0 this is exactly the M/M/c wait C/(cμ − x). Infinity when u + x ≥ cμ.
 * Worked example: c = 2, μ = 1, u = 0.5, x = 1 → 12/7.
 */
export function lowPriorityQueueWait(servers: number, ratePerServer: number, highInflow: number, lowInflow: number): number {
  return priorityQueueWaits(servers, ratePerServer, [highInflow, lowInflow])[1];
}

/**
 * d Wq_low / dx for the two-class case (x the low-priority inflow), exact:
 *
 *   Wq_low = K · C(a) / (1 − σ),  K = 1/(cμ (1 − u/(cμ))),  σ = (u + x)/(cμ),  a = (u + x)/μ,
 *   dWq_low/dx = K · [ C'(a)/(μ(1 − σ)) + C(a)/(cμ (1 − σ)²) ].
 *
 * Worked example: c = 2, μ = 1, u = 0, x = 1 → 8/9 (the M/M/2 slope).
 */
export function lowPriorityQueueWaitSlope(servers: number, ratePerServer: number, highInflow: number, lowInflow: number): number {
  assertServers(servers);
  assertPositiveRate(ratePerServer);
  assertClassRates([highInflow, lowInflow]);
  const capacity = servers * ratePerServer;
  const total = highInflow + lowInflow;
  if (total >= capacity) return Infinity;
  const load = total / ratePerServer;
  const spareShare = 1 - total / capacity;
  const scale = 1 / (capacity * (1 - highInflow / capacity));
  const waitProbability = erlangC(servers, load);
  const waitProbabilitySlope = erlangCLoadDerivative(servers, load);
  return scale * (waitProbabilitySlope / (ratePerServer * spareShare) + waitProbability / (capacity * spareShare * spareShare));
}
