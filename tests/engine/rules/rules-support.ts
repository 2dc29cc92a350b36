/**
 * Small builders for the rules' tests: a LineProblem from plain arrays, M/M/c sites, and an
 * M/M/c wait written out here independently of the engine's kernels (Erlang C by its factorial
 * sum, exact for the few servers used in these tests) for expected values.
 */
import type { LineProblem, SiteWaitModel } from "~/engine/problem";
import { createSiteWaitModel } from "~/engine/site-wait";
import { seededRandom } from "../../support/random";

/** Mulberry32 (tests/support/random.ts), under the name these tests use. */
export const randomGenerator = seededRandom;


/** M/M/c mean queue wait Wq = C(c, a)/(cμ − λ) by Erlang's sum (Erlang 1917; Kleinrock 1975 vol. 1 §3.5, from memory). */
export function mmcWait(servers: number, rate: number, arrival: number): number {
  const capacity = servers * rate;
  if (arrival >= capacity) return Infinity;
  const load = arrival / rate;
  let term = 1;
  let sum = 1;
  for (let k = 1; k < servers; k++) {
    term *= load / k;
    sum += term;
  }
  const top = (term * load) / servers / (1 - load / servers);
  const waitingProbability = top / (sum + top);
  return waitingProbability / (capacity - arrival);
}

/**
 * An M/M/c site (no urgent class) from the engine's site wait model, whose exact wait slope the
 * optimum needs; expected values in the tests use `mmcWait` above, written out independently.
 */
export function mmcSite(servers: number, rate: number): SiteWaitModel {
  return createSiteWaitModel({ teams: servers, ratePerTeam: rate });
}

export interface ProblemSpec {
  demand: number[];
  outsideCost: number[];
  outsideSpread?: number[];
  /** Road km per source (rows) and site (columns); NaN or Infinity = pair not allowed. */
  km: number[][];
  kmPerWeek: number;
  sites: SiteWaitModel[];
  minWeekly?: number[];
  maxWeekly?: number[];
}

export function lineProblem(spec: ProblemSpec): LineProblem {
  const n = spec.demand.length;
  const m = spec.sites.length;
  const travelCost = new Float64Array(n * m);
  const km = new Float64Array(n * m);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      const distance = spec.km[i][j];
      km[i * m + j] = Number.isFinite(distance) ? distance : Infinity;
      travelCost[i * m + j] = Number.isFinite(distance) ? distance / spec.kmPerWeek : Infinity;
    }
  }
  return {
    lineId: "ortho",
    standardWeeks: 18,
    n,
    m,
    sourceIds: spec.demand.map((_, i) => `S${i + 1}`),
    siteIds: spec.sites.map((_, j) => `P${j + 1}`),
    demand: Float64Array.from(spec.demand),
    outsideCost: Float64Array.from(spec.outsideCost),
    outsideSpread: Float64Array.from(spec.outsideSpread ?? spec.demand.map(() => 0)),
    travelCost,
    km,
    sites: spec.sites,
    minWeekly: Float64Array.from(spec.minWeekly ?? spec.sites.map(() => NaN)),
    maxWeekly: Float64Array.from(spec.maxWeekly ?? spec.sites.map(() => NaN)),
  };
}


/** A random instance that has a steady state under every rule (outside options everywhere or spare capacity). */
export function randomProblem(seed: number, n: number, m: number, options: { spread?: boolean; captiveShare?: number } = {}): LineProblem {
  const random = randomGenerator(seed);
  const sites: SiteWaitModel[] = [];
  for (let j = 0; j < m; j++) sites.push(mmcSite(1 + Math.floor(random() * 4), 0.5 + 2 * random()));
  const totalCapacity = sites.reduce((sum, site) => sum + site.capacity, 0);
  const weights = Array.from({ length: n }, () => 0.2 + random());
  const weightSum = weights.reduce((a, b) => a + b, 0);
  const load = 0.6 + 0.8 * random();
  const demand = weights.map((w) => (w / weightSum) * load * totalCapacity);
  const outsideCost = demand.map(() => (random() < (options.captiveShare ?? 0) ? Infinity : 0.5 + 3 * random()));
  const outsideSpread = demand.map(() => (options.spread ? 0.8 * random() : 0));
  const km = demand.map(() => sites.map(() => 1 + 40 * random()));
  return lineProblem({ demand, outsideCost, outsideSpread, km, kmPerWeek: 15, sites });
}
