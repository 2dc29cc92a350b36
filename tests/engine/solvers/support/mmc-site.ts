/**
 * A small M/M/c site wait model for the solver tests, independent of the engine's queue kernels
 * so that solver tests do not depend on them. Erlang B by the stable recursion
 * B_k = a·B_{k−1}/(k + a·B_{k−1}), Erlang C = B/(1 − ρ(1 − B)), Wq = C/(cμ − λ)
 * (Erlang 1917; Kleinrock 1975, *Queueing Systems* vol. 1 — from memory), with the exact
 * derivative obtained by differentiating the recursion.
 */
import type { SiteWaitModel } from "../../../../app/engine/problem";

function erlangCWithSlope(c: number, a: number): { c: number; slope: number } {
  let b = 1;
  let db = 0;
  for (let k = 1; k <= c; k++) {
    const denominator = k + a * b;
    const nextSlope = (k * (b + a * db)) / (denominator * denominator);
    b = (a * b) / denominator;
    db = nextSlope;
  }
  const rho = a / c;
  const denominator = 1 - rho * (1 - b);
  const value = b / denominator;
  const slope = (db * denominator - b * (-(1 - b) / c + rho * db)) / (denominator * denominator);
  return { c: value, slope };
}

/** M/M/c with `servers` teams of rate `rate` per week, plus an optional constant added to the wait (e.g. mean service time for sojourn costs). */
export function mmcSite(servers: number, rate: number): SiteWaitModel & { waitCurvature(x: number): number } {
  const capacity = servers * rate;
  const wait = (x: number): number => {
    if (x >= capacity) return Infinity;
    if (x <= 0) return 0;
    return erlangCWithSlope(servers, x / rate).c / (capacity - x);
  };
  const waitSlope = (x: number): number => {
    if (x >= capacity) return Infinity;
    const load = Math.max(x, 0);
    const { c, slope } = erlangCWithSlope(servers, load / rate);
    return slope / rate / (capacity - load) + c / ((capacity - load) * (capacity - load));
  };
  return {
    capacity,
    wait,
    waitSlope,
    // Curvature by a central difference of the exact slope (only the optimum's Newton Jacobian uses it).
    waitCurvature: (x: number) => {
      const h = 1e-6 * Math.max(Math.min(x, capacity - x), 1e-9);
      return x < h ? (waitSlope(x + h) - waitSlope(x)) / h : (waitSlope(x + h) - waitSlope(x - h)) / (2 * h);
    },
  };
}
