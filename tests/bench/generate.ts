/**
 * Generated benchmark instances (seeded, so every run solves the same problems): towns as
 * clusters of practices, sites near towns, capacity scaled to a target mean utilisation, outside
 * options mostly spread, some sharp, some absent. Sizes follow issue 3: a demo-like region
 * (40 practices × 7 sites × 4 lines), a large region (500 × 40) and a national instance
 * (7,000 × 400, one line).
 */
import type { LineProblem } from "../../app/engine/problem";
import { createSiteWaitModel } from "../../app/engine/site-wait";
import { seededRandom } from "../support/random";

export { seededRandom };



export interface RegionSpec {
  name: string;
  sources: number;
  sites: number;
  lines: number;
  widthKm: number;
  heightKm: number;
  towns: number;
  utilisation: number;
  seed: number;
  /** Share of demand that is urgent and goes to the nearest site (served first). */
  urgentShare: number;
}

export const DEMO_LIKE: RegionSpec = { name: "demo-like 40×7×4", sources: 40, sites: 7, lines: 4, widthKm: 45, heightKm: 50, towns: 6, utilisation: 0.9, seed: 11, urgentShare: 0.15 };
export const LARGE: RegionSpec = { name: "large 500×40", sources: 500, sites: 40, lines: 1, widthKm: 160, heightKm: 180, towns: 25, utilisation: 0.88, seed: 23, urgentShare: 0 };
export const NATIONAL: RegionSpec = { name: "national 7000×400", sources: 7000, sites: 400, lines: 1, widthKm: 600, heightKm: 900, towns: 150, utilisation: 0.88, seed: 37, urgentShare: 0 };

/**
 * Points in km, clustered around weighted towns (gaussian spread of a quarter of a town's share
 * of the area), drawn from `random`; the towns are drawn first.
 */
function townPlacer(spec: RegionSpec, random: () => number): () => { x: number; y: number } {
  const gaussian = (): number => Math.sqrt(-2 * Math.log(1 - random())) * Math.cos(2 * Math.PI * random());
  const towns = Array.from({ length: spec.towns }, () => ({ x: random() * spec.widthKm, y: random() * spec.heightKm, weight: 0.3 + random() }));
  const totalWeight = towns.reduce((s, t) => s + t.weight, 0);
  const pickTown = () => {
    let r = random() * totalWeight;
    for (const town of towns) if ((r -= town.weight) <= 0) return town;
    return towns[towns.length - 1];
  };
  const townRadius = Math.sqrt((spec.widthKm * spec.heightKm) / spec.towns) / 4;
  return () => {
    const town = pickTown();
    return {
      x: Math.min(Math.max(town.x + gaussian() * townRadius, 0), spec.widthKm),
      y: Math.min(Math.max(town.y + gaussian() * townRadius, 0), spec.heightKm),
    };
  };
}

export function generateRegion(spec: RegionSpec): LineProblem[] {
  const random = seededRandom(spec.seed);
  const place = townPlacer(spec, random);
  const sources = Array.from({ length: spec.sources }, place);
  const sites = Array.from({ length: spec.sites }, place);
  const problems: LineProblem[] = [];
  for (let line = 0; line < spec.lines; line++) {
    // In multi-line regions not every site offers every line.
    const offered = sites.map((_, j) => spec.lines === 1 || j < 2 || random() < 0.7);
    const siteIndex = sites.map((_, j) => j).filter((j) => offered[j]);
    const n = spec.sources;
    const m = siteIndex.length;
    const demand = Float64Array.from({ length: n }, () => 0.4 + 2.2 * random());
    const outsideCost = new Float64Array(n);
    const outsideSpread = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const kind = random();
      outsideCost[i] = kind < 0.15 ? Infinity : 15 + 15 * random();
      outsideSpread[i] = kind < 0.35 ? 0 : 0.3 + 0.2 * random();
    }
    const km = new Float64Array(n * m);
    const travelCost = new Float64Array(n * m);
    const nearest = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      let best = Infinity;
      for (let k = 0; k < m; k++) {
        const site = sites[siteIndex[k]];
        const d = Math.hypot(sources[i].x - site.x, sources[i].y - site.y) * 1.3;
        km[i * m + k] = d;
        travelCost[i * m + k] = d / 15;
        if (d < best) {
          best = d;
          nearest[i] = k;
        }
      }
    }
    const totalDemand = demand.reduce((s, d) => s + d, 0);
    const urgent = new Float64Array(m);
    for (let i = 0; i < n; i++) urgent[nearest[i]] += (spec.urgentShare / (1 - spec.urgentShare)) * demand[i];
    const totalUrgent = urgent.reduce((s, u) => s + u, 0);
    const weights = Float64Array.from({ length: m }, () => 0.3 + random());
    const weightSum = weights.reduce((s, w) => s + w, 0);
    const siteModels = siteIndex.map((_, k) => {
      const teams = 2 + Math.floor(random() * 14);
      // Every site gets its urgent work plus a share of the routine capacity the target needs.
      const capacity = urgent[k] / 0.6 + ((totalDemand + totalUrgent) / spec.utilisation - totalUrgent / 0.6) * (weights[k] / weightSum);
      return createSiteWaitModel({ teams, ratePerTeam: capacity / teams, serviceCv: 1 }, urgent[k]);
    });
    problems.push({
      lineId: `line${line + 1}`,
      standardWeeks: 18,
      n,
      m,
      sourceIds: Array.from({ length: n }, (_, i) => `ZZP${String(i + 1).padStart(4, "0")}`),
      siteIds: siteIndex.map((j) => `ZZS${j + 1}`),
      demand,
      outsideCost,
      outsideSpread,
      travelCost,
      km,
      sites: siteModels,
      minWeekly: new Float64Array(m).fill(NaN),
      maxWeekly: new Float64Array(m).fill(NaN),
    });
  }
  return problems;
}

/**
 * The national instance as an exchange-format scenario (for timing the whole `npm run solve`
 * process): the same shape as `generateRegion(NATIONAL)` — towns, demand, outside options, sites
 * sized to the target utilisation — placed in degrees on an invented patch of open sea
 * (1° ≈ 111 km), one service line, no urgent share.
 */
export function generateScenarioDocument(spec: RegionSpec): Record<string, unknown> {
  const random = seededRandom(spec.seed + 1);
  const placeKm = townPlacer(spec, random);
  const place = () => {
    const { x, y } = placeKm();
    return { lat: -20 + y / 111, lon: -20 + x / 111 };
  };
  const line = "line1";
  const sources = Array.from({ length: spec.sources }, (_, i) => {
    const kind = random();
    return {
      id: `ZZP${String(i + 1).padStart(4, "0")}`,
      ...place(),
      demand: { [line]: 0.4 + 2.2 * random() },
      ...(kind < 0.15 ? {} : { outsideCost: 15 + 15 * random() }),
      outsideSpread: kind < 0.35 ? 0 : 0.3 + 0.2 * random(),
    };
  });
  const totalDemand = sources.reduce((s, source) => s + source.demand[line], 0);
  const weights = Array.from({ length: spec.sites }, () => 0.3 + random());
  const weightSum = weights.reduce((s, w) => s + w, 0);
  const providers = weights.map((weight, j) => {
    const teams = 2 + Math.floor(random() * 14);
    const capacity = (totalDemand / spec.utilisation) * (weight / weightSum);
    return { id: `ZZS${j + 1}`, ...place(), lines: { [line]: { teams, ratePerTeam: capacity / teams } } };
  });
  return { schema: "equilibra/scenario@1", name: spec.name, serviceLines: [{ id: line }], sources, providers };
}
