/**
 * The outside option (private care, or going without): who balks, and what balkers pay.
 *
 * A source's patients carry reservation costs r spread uniformly over [a, b] = [o(1 − s), o(1 + s)]
 * (PRODUCT.md, "The model"); s = 0 is a sharp threshold at o, and o = Infinity means there is no
 * outside option. A patient whose cheapest public option costs u balks when r < u, so
 *
 *   balking share          F(u) = clamp((u − a)/(b − a), 0, 1)      (a step at o when s = 0)
 *   balkers' mean cost     (a + min(u, b))/2                        (o when s = 0)
 *   patient's cost         E[min(r, u)] = u − ∫_a^u F(v) dv
 *
 * Example (o = 10, s = 0.2, so r ~ U[8, 12]): at u = 9, F = 0.25, balkers pay 8.5 on average and
 * E[min(r, u)] = 9 − ∫_8^9 (v − 8)/4 dv = 8.875.
 *
 * The "balking cost" B(b) of b balkers out of demand d is the reservation cost of the b patients
 * with the lowest reservations (the ones who balk first): B(b) = d·∫_a^{F⁻¹(b/d)} r dF(r); its
 * slope F⁻¹(b/d) is the marginal balker's reservation cost. B enters the total cost of every rule
 * and the Beckmann potential of the choice model alike, which is why the optimum treats balking
 * exactly as the choice model does (Edelson & Hildebrand 1975 in the sharp case).
 */

/** Reservation-cost range [low, high] of one source; low = high = o when sharp. */
export interface ReservationRange {
  low: number;
  high: number;
}

export function reservationRange(outsideCost: number, spread: number): ReservationRange {
  return { low: outsideCost * (1 - spread), high: outsideCost * (1 + spread) };
}

/** Share of patients whose reservation cost is below u. At u = o with s = 0 this is 1 (the tie is resolved by the allocation, not here). */
export function balkingShare(u: number, outsideCost: number, spread: number): number {
  if (!Number.isFinite(outsideCost)) return 0;
  const { low, high } = reservationRange(outsideCost, spread);
  if (u <= low) return 0;
  if (u >= high) return 1;
  return (u - low) / (high - low);
}

/** d/du of the balking share (0 for a sharp threshold away from o; undefined at o — reported as 0). */
export function balkingShareSlope(u: number, outsideCost: number, spread: number): number {
  if (!Number.isFinite(outsideCost) || spread === 0) return 0;
  const { low, high } = reservationRange(outsideCost, spread);
  return u > low && u < high ? 1 / (high - low) : 0;
}

/** Expected cost E[min(r, u)] of one patient whose cheapest public option costs u. */
export function expectedPatientCost(u: number, outsideCost: number, spread: number): number {
  if (!Number.isFinite(outsideCost)) return u;
  const { low, high } = reservationRange(outsideCost, spread);
  if (u <= low) return u;
  if (u >= high) return outsideCost;
  // low < u < high, hence spread > 0.
  return u - (u - low) * (u - low) / (2 * (high - low));
}

/** Mean reservation cost of the patients who balk when the cheapest public option costs u. */
export function meanBalkerCost(u: number, outsideCost: number, spread: number): number {
  const { low, high } = reservationRange(outsideCost, spread);
  return (low + Math.min(Math.max(u, low), high)) / 2;
}

/**
 * Reservation cost paid by `balked` balkers out of `demand` patients when the lowest-reservation
 * patients balk first (B(b) above). Sharp: o·b. Spread: the b lowest reservations, uniform on [a, r_b]
 * with r_b = a + (b/d)(b − a), so their mean is (a + r_b)/2.
 */
export function balkingCost(balked: number, demand: number, outsideCost: number, spread: number): number {
  if (balked <= 0) return 0;
  if (!Number.isFinite(outsideCost)) return Infinity;
  const { low, high } = reservationRange(outsideCost, spread);
  const share = Math.min(balked / demand, 1);
  const marginal = low + share * (high - low);
  return balked * (low + marginal) / 2;
}

/** Reservation cost of the marginal balker when `balked` of `demand` balk (the slope of B). */
export function marginalBalkingCost(balked: number, demand: number, outsideCost: number, spread: number): number {
  const { low, high } = reservationRange(outsideCost, spread);
  const share = demand > 0 ? Math.min(Math.max(balked / demand, 0), 1) : 0;
  return low + share * (high - low);
}

/**
 * The logit model with an outside option. A patient with reservation r chooses among the sites
 * (costs g_j) and the outside option (cost r) with probabilities ∝ exp(−θ·cost). Given that the
 * patient stays public, the site shares exp(−θ g_j)/Σ_k exp(−θ g_k) do not depend on r, so the
 * model nests: let V = −(1/θ)·ln Σ_j exp(−θ g_j) be the sites' "inclusive" cost; then the share
 * who balk, averaged over r ~ U[a, b], is
 *
 *   P_out(V) = (softmin(b, V) − softmin(a, V)) / (b − a),   softmin(x, V) = −(1/θ)·ln(e^{−θx} + e^{−θV}),
 *
 * because d/dr softmin(r, V) = e^{−θr}/(e^{−θr} + e^{−θV}) is the balking probability at r. With
 * s = 0 this is the plain logit share of an option costing o: 1/(1 + e^{θ(o − V)}). As θ → ∞,
 * softmin → min and P_out → F(V), the Wardrop balking share.
 */
export interface LogitBalking {
  /** Share of the source's patients who balk. */
  share: number;
  /** d share / dV (≥ 0). */
  slope: number;
}

function softmin(x: number, v: number, theta: number): number {
  const low = Math.min(x, v);
  return low - Math.log1p(Math.exp(-theta * Math.abs(x - v))) / theta;
}

/** 1/(1 + e^{θ(V − x)}) computed without overflow: d softmin(x, V)/dV. */
function logisticAbove(x: number, v: number, theta: number): number {
  const z = theta * (v - x);
  if (z >= 0) {
    const e = Math.exp(-z);
    return e / (1 + e);
  }
  return 1 / (1 + Math.exp(z));
}

export function logitBalking(inclusiveCost: number, outsideCost: number, spread: number, theta: number): LogitBalking {
  const slope = new Float64Array(1);
  const share = logitBalkingShare(inclusiveCost, outsideCost, spread, theta, slope, 0);
  return { share, slope: slope[0] };
}

/** `logitBalking` without allocation (the solvers' hot loop): returns the share, writes the slope to slopeOut[index]. */
export function logitBalkingShare(
  inclusiveCost: number,
  outsideCost: number,
  spread: number,
  theta: number,
  slopeOut: Float64Array,
  index: number,
): number {
  if (!(outsideCost < Infinity)) {
    slopeOut[index] = 0;
    return 0;
  }
  if (!(inclusiveCost < Infinity)) {
    slopeOut[index] = 0;
    return 1;
  }
  const low = outsideCost * (1 - spread);
  const high = outsideCost * (1 + spread);
  // Below this width the divided difference loses digits: use the sharp formula (error O(θ²(b−a)²)).
  if ((high - low) * theta < 1e-6) {
    // P_out = 1/(1 + e^{θ(o − V)}).
    const balk = logisticAbove(inclusiveCost, outsideCost, theta);
    slopeOut[index] = theta * balk * (1 - balk);
    return balk;
  }
  const share = (softmin(high, inclusiveCost, theta) - softmin(low, inclusiveCost, theta)) / (high - low);
  const slope = (logisticAbove(high, inclusiveCost, theta) - logisticAbove(low, inclusiveCost, theta)) / (high - low);
  slopeOut[index] = Math.max(slope, 0);
  return Math.min(Math.max(share, 0), 1);
}
