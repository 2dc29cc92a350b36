/** Builds `LineProblem`s for solver tests from plain arrays. */
import type { LineProblem, SiteWaitModel } from "../../../../app/engine/problem";

export interface ProblemSpec {
  demand: number[];
  /** Travel cost in weeks per pair, rows = sources. */
  travel: number[][];
  sites: SiteWaitModel[];
  outsideCost?: number | number[];
  outsideSpread?: number | number[];
}

export function lineProblem(spec: ProblemSpec): LineProblem {
  const n = spec.demand.length;
  const m = spec.sites.length;
  const perSource = (value: number | number[] | undefined, fallback: number): Float64Array =>
    Float64Array.from({ length: n }, (_, i) => (value === undefined ? fallback : Array.isArray(value) ? value[i] : value));
  const travelCost = new Float64Array(n * m);
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) travelCost[i * m + j] = spec.travel[i][j];
  return {
    lineId: "test",
    standardWeeks: 18,
    n,
    m,
    sourceIds: Array.from({ length: n }, (_, i) => `S${i + 1}`),
    siteIds: Array.from({ length: m }, (_, j) => `P${j + 1}`),
    demand: Float64Array.from(spec.demand),
    outsideCost: perSource(spec.outsideCost, Infinity),
    outsideSpread: perSource(spec.outsideSpread, 0),
    travelCost,
    km: Float64Array.from(travelCost, (t) => t * 15),
    sites: spec.sites,
    minWeekly: new Float64Array(m).fill(NaN),
    maxWeekly: new Float64Array(m).fill(NaN),
  };
}
