/** Builds `LineProblem`s for solver tests from plain arrays, with the engine's M/M/c site model. */
import type { LineProblem, SiteWaitModel } from "../../../../app/engine/problem";
import { createSiteWaitModel } from "../../../../app/engine/site-wait";
import { seededRandom } from "../../../support/random";

/** Mulberry32 (tests/support/random.ts), under the name these tests use. */
export const seeded = seededRandom;


export interface ProblemSpec {
  demand: number[];
  /** Travel cost in weeks per pair, rows = sources. */
  travel: number[][];
  sites: SiteWaitModel[];
  outsideCost?: number | number[];
  outsideSpread?: number | number[];
}

/** An M/M/c site: `teams` servers at `rate` patients per team per week. */
export function mmc(teams: number, rate: number): SiteWaitModel {
  return createSiteWaitModel({ teams, ratePerTeam: rate, serviceCv: 1 });
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


/** Inflow per site of an allocation. */
export function loadsOf(problem: LineProblem, flow: Float64Array): number[] {
  const loads = new Array<number>(problem.m).fill(0);
  for (let i = 0; i < problem.n; i++) for (let j = 0; j < problem.m; j++) loads[j] += flow[i * problem.m + j];
  return loads;
}
