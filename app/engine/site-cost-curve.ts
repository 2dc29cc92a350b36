/**
 * A site's cost as a function of its routine inflow, and the inverse the solvers work with.
 *
 * The solvers (see README.md) iterate on the m site costs w_j, not on the n·m flows: for a
 * cost w_j they need the inflow x_j that produces it, x_j = W_j⁻¹(w_j), and its slope 1/W_j'(x_j).
 * The same code serves two curves:
 *  - the mean wait W_j(x) (the choice model, Wardrop's first principle), and
 *  - the marginal cost M_j(x) = d[x·W_j(x)]/dx = W_j(x) + x·W_j'(x) (the optimum, Wardrop's
 *    second principle; Beckmann, McGuire & Winsten 1956, *Studies in the Economics of Transportation*).
 * Both are increasing on [0, capacity) and tend to infinity at capacity (Erlang C; convexity of
 * W and x·W by Lee & Cohen 1983 and Grassmann 1983).
 *
 * Below the cost of an empty site the inverse is extended linearly (a "negative inflow"). No
 * solution has one — flows are non-negative — but the extension keeps the site-cost equations
 * smooth and strictly monotone everywhere, so Newton steps that overshoot stay well defined.
 */
import type { SiteWaitModel } from "./problem";

export interface SiteCostCurve {
  readonly capacity: number;
  cost(x: number): number;
  slope(x: number): number;
}

/** The marginal cost x ↦ W(x) + x·W'(x) of a site, with slope 2W' + x·W''. */
export function marginalCostCurve(site: SiteWaitModel): SiteCostCurve {
  return {
    capacity: site.capacity,
    cost: (x) => (x >= site.capacity ? Infinity : site.wait(x) + x * site.waitSlope(x)),
    slope: (x) => (x >= site.capacity ? Infinity : 2 * site.waitSlope(x) + x * site.waitCurvature(x)),
  };
}

export function waitCurve(site: SiteWaitModel): SiteCostCurve {
  return {
    capacity: site.capacity,
    cost: (x) => site.wait(x),
    slope: (x) => site.waitSlope(x),
  };
}

/**
 * Volume bounds on a site's inflow (the plan's contracts and ceilings): lower 0 = none, upper
 * Infinity = none.
 */
export interface LoadBounds {
  lower: number;
  upper: number;
}

/**
 * Inverts one site's cost curve with memory of the previous answer (the solvers call it with
 * slowly moving costs, so the previous inflow is an excellent first guess).
 *
 * With volume bounds [L, U] the site's cost is the curve plus the bounds' indicator, whose
 * subgradient at U is [cost(U), ∞) and at L is (−∞, cost(L)]: the inverse is the clamped
 * x = min(max(W⁻¹(w), L), U) (Rockafellar 1970, *Convex Analysis*, §24 — from memory for the
 * section). The excess of w over the curve at a bound is that bound's multiplier (a toll per
 * referral). Beyond a bound the inverse keeps a slope 1e-15 times the typical one, so the Newton
 * systems stay nonsingular when every site of a group sits at a bound; a bound is then exceeded
 * by that share of the typical slope times the toll (about 1e-11 of capacity on the demo region).
 */
export class SiteInverse {
  readonly emptyCost: number;
  /** Slope dx/dw used below the empty cost, and the largest slope ever reported. */
  readonly maxLoadSlope: number;
  private guess = 0;
  /** The last point where the inversion evaluated the curve's slope, and the slope there. */
  private slopeAt = NaN;
  private slopeThere = 0;
  /** Slope beyond a volume bound. */
  private readonly boundSlope: number;
  /** Curve cost at the lower and upper bound (−∞ / +∞ when there is none). */
  private readonly lowerCost: number;
  private readonly upperCost: number;

  /** A site with no capacity for routine patients (e.g. urgent work fills it): never used, cost Infinity. */
  readonly closed: boolean;

  constructor(readonly curve: SiteCostCurve, readonly bounds: LoadBounds = { lower: 0, upper: Infinity }) {
    this.emptyCost = curve.capacity > 0 ? curve.cost(0) : Infinity;
    this.closed = !Number.isFinite(this.emptyCost);
    this.lowerCost = bounds.lower > 0 && bounds.lower < curve.capacity ? curve.cost(bounds.lower) : -Infinity;
    this.upperCost = bounds.upper < curve.capacity ? curve.cost(Math.max(bounds.upper, 0)) : Infinity;
    if (this.closed) {
      this.maxLoadSlope = 1;
      this.boundSlope = 0;
      return;
    }
    const half = curve.capacity / 2;
    // A scale for "flat": the mean slope from empty to half capacity. Near an empty M/M/c site
    // with c ≥ 2 the wait is flat (W ∝ x^c), so dx/dw is unbounded; capping it at a million
    // times the typical value keeps the Newton systems well scaled and changes no solution.
    const typicalSlope = Math.max((curve.cost(half) - this.emptyCost) / half, 1e-300);
    this.maxLoadSlope = 1e6 / typicalSlope;
    this.boundSlope = 1e-15 / typicalSlope;
  }

  /** The cost the site starts from: its empty cost, or its cost at the lower bound. */
  get startCost(): number {
    return Number.isFinite(this.lowerCost) ? this.lowerCost : this.emptyCost;
  }

  /** Whether cost w lies beyond a volume bound (the bound holds the inflow, a toll prices it). */
  atBound(w: number): boolean {
    return w > this.upperCost || w < this.lowerCost;
  }

  /** Inflow x with cost(x) = w (x < 0 below the empty cost, by the linear extension), clamped to the bounds. */
  load(w: number): number {
    if (this.closed) return 0;
    if (w > this.upperCost) return Math.max(this.bounds.upper, 0) + (w - this.upperCost) * this.boundSlope;
    if (w < this.lowerCost) return this.bounds.lower + (w - this.lowerCost) * this.boundSlope;
    return this.curveLoad(w);
  }

  private curveLoad(w: number): number {
    if (w <= this.emptyCost) return (w - this.emptyCost) * this.maxLoadSlope;
    const { curve } = this;
    let lo = 0;
    let hi = curve.capacity;
    let x = this.guess > 0 && this.guess < hi ? this.guess : hi / 2;
    for (let iteration = 0; iteration < 200; iteration++) {
      const value = curve.cost(x) - w;
      if (value === 0) break;
      if (value > 0) hi = x;
      else lo = x;
      // Converged when the bracket or the residual is at rounding level.
      if (Math.abs(value) <= 4e-16 * w || hi - lo <= 4e-16 * curve.capacity) break;
      const slope = curve.slope(x);
      this.slopeAt = x;
      this.slopeThere = slope;
      const newton = slope > 0 && Number.isFinite(slope) ? x - value / slope : NaN;
      // A Newton step at rounding level ends it when the cost is near w. (Tested before the
      // bracket: such a step may round onto the bracket's end, and bisecting a nearly flat cost
      // from there took dozens of steps; the cost's own rounding also keeps |value| from reaching
      // 4e-16·w.) Next to capacity the step is tiny too — it is the distance to the pole — but
      // the cost is far above w there, so the iteration goes on.
      if (Math.abs(newton - x) <= 1e-15 * curve.capacity && Math.abs(value) <= 1e-9 * Math.abs(w)) break;
      // Convex increasing cost: Newton from the right of the root stays right; from the left it
      // may overshoot, possibly past capacity — then fall back to bisection.
      x = newton > lo && newton < hi ? newton : 0.5 * (lo + hi);
    }
    this.guess = x;
    return x;
  }

  /**
   * How finely a cost of w computed from terms of size `scale` (a level plus an offset) pins the
   * inflow down: half the change of inflow over a few rounding steps of w either side. Near an
   * empty site with many teams the wait is so flat in the load that this is far from zero.
   */
  loadResolution(w: number, scale = Math.abs(w)): number {
    if (this.closed) return 0;
    const step = 8 * Number.EPSILON * Math.max(Math.abs(w), scale);
    const guess = this.guess;
    const spread = Math.abs(this.load(w + step) - this.load(w - step)) / 2;
    this.guess = guess;
    return spread;
  }

  /** dx/dw at cost w. */
  loadSlope(w: number, x: number): number {
    if (this.closed) return 1;
    if (this.atBound(w)) return this.boundSlope;
    if (w <= this.emptyCost) return this.maxLoadSlope;
    // The inversion that produced x usually evaluated the slope there already.
    const slope = x === this.slopeAt ? this.slopeThere : this.curve.slope(x);
    return slope > 0 ? Math.min(1 / slope, this.maxLoadSlope) : this.maxLoadSlope;
  }
}
