/**
 * From a checked scenario to one `LineProblem` per service line (and per period): distances,
 * travel costs, urgent referrals fixed at their nearest site, routine demand for the rules to
 * allocate, and one wait model per site.
 *
 * Decisions made here (README.md, "Building the problems"):
 *  - Road km = great-circle km × circuity, unless `travelKm` gives the pair's km.
 *  - Urgent referrals (`urgentShare`) go to the nearest site offering the line (fewest km, ties
 *    to the site listed first) and are a fixed urgent inflow there, served ahead of routine
 *    patients; only routine referrals are allocated by the rules and may balk.
 *  - A source belongs to a line's problem when the scenario gives it demand > 0 for that line;
 *    a period keeps the same sources (a demand factor of 0 leaves them with no demand).
 *  - A period's `teamsFactor` f scales capacity exactly: teams c·f are rounded to a whole number
 *    c' = max(1, round(c·f)) and the rate per team becomes μ·c·f/c', so c'μ' = f·cμ. Rounding
 *    alone would lose small changes (2 teams × 0.85 = 1.7 → 2, no change at all); scaling the
 *    rate alone would keep idle teams' parallelism. Both keep the M/M/c model well defined.
 */
import type { LineProblem } from "./problem";
import type { Scenario, ScenarioPeriod, ScenarioSiteLine } from "./scenario";
import { createSiteWaitModel, type SiteQueueSpec } from "./site-wait";

/** Mean Earth radius R₁ = 6371.0088 km (IUGG; Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74:128–133). */
export const EARTH_RADIUS_KM = 6371.0088;

/**
 * Great-circle distance by the haversine formula (Sinnott 1984, "Virtues of the haversine",
 * Sky & Telescope 68(2):159): hav(d/R) = hav(Δφ) + cos φ₁ cos φ₂ hav(Δλ), hav(θ) = sin²(θ/2),
 * d = 2R·atan2(√h, √(1−h)). Well conditioned for the short distances of a region (unlike the
 * spherical law of cosines); it loses digits only near antipodes, ~1e-4 km, irrelevant here. Worked example (Williams, "Aviation
 * Formulary"): LAX (33°57′N, 118°24′W) to JFK (40°38′N, 73°47′W) is 0.623585 rad ≈ 3972.9 km.
 */
export function greatCircleKm(lat1: number, lon1: number, lat2: number, lon2: number): number {
  const toRadians = Math.PI / 180;
  const halfDeltaLat = ((lat2 - lat1) * toRadians) / 2;
  const halfDeltaLon = ((lon2 - lon1) * toRadians) / 2;
  const h = Math.sin(halfDeltaLat) ** 2 + Math.cos(lat1 * toRadians) * Math.cos(lat2 * toRadians) * Math.sin(halfDeltaLon) ** 2;
  return 2 * EARTH_RADIUS_KM * Math.atan2(Math.sqrt(h), Math.sqrt(Math.max(0, 1 - h)));
}

/** sin and cos of half the latitude and longitude, and cos of the latitude: what the haversine needs per point. */
function halfAngles(points: readonly { lat: number; lon: number }[]) {
  const count = points.length;
  const sinLat = new Float64Array(count);
  const cosLat = new Float64Array(count);
  const sinLon = new Float64Array(count);
  const cosLon = new Float64Array(count);
  const cosFull = new Float64Array(count);
  const half = Math.PI / 360;
  points.forEach((point, k) => {
    sinLat[k] = Math.sin(point.lat * half);
    cosLat[k] = Math.cos(point.lat * half);
    sinLon[k] = Math.sin(point.lon * half);
    cosLon[k] = Math.cos(point.lon * half);
    cosFull[k] = Math.cos(point.lat * 2 * half);
  });
  return { sinLat, cosLat, sinLon, cosLon, cosFull };
}

/**
 * Road km for every source–site pair (row-major by source): the uploaded km where `travelKm`
 * has the pair, otherwise great-circle km × circuity. Same haversine as `greatCircleKm`, with
 * the half-angle differences expanded (sin(b/2 − a/2) = sin(b/2)cos(a/2) − cos(b/2)sin(a/2)) so
 * the inner loop has no trigonometry — a national instance has millions of pairs.
 */
export function pairKm(
  sources: readonly { id: string; lat: number; lon: number }[],
  sites: readonly { id: string; lat: number; lon: number }[],
  circuity: number,
  travelKm?: Record<string, Record<string, number>>,
): Float64Array {
  const km = new Float64Array(sources.length * sites.length);
  writePairKm(km, 0, sources, sites, circuity, travelKm);
  return km;
}

/** `pairKm` written into `km` from index `offset` on (e.g. a chunk of rows of a larger array). */
export function writePairKm(
  km: Float64Array,
  offset: number,
  sources: readonly { id: string; lat: number; lon: number }[],
  sites: readonly { id: string; lat: number; lon: number }[],
  circuity: number,
  travelKm?: Record<string, Record<string, number>>,
): void {
  const n = sources.length;
  const m = sites.length;
  const a = halfAngles(sources);
  const b = halfAngles(sites);
  const scale = 2 * EARTH_RADIUS_KM * circuity;
  for (let i = 0; i < n; i++) {
    const sinLat = a.sinLat[i], cosLat = a.cosLat[i], sinLon = a.sinLon[i], cosLon = a.cosLon[i], cosFull = a.cosFull[i];
    const row = offset + i * m;
    for (let j = 0; j < m; j++) {
      const dLat = b.sinLat[j] * cosLat - b.cosLat[j] * sinLat;
      const dLon = b.sinLon[j] * cosLon - b.cosLon[j] * sinLon;
      const h = Math.min(1, dLat * dLat + cosFull * b.cosFull[j] * dLon * dLon);
      km[row + j] = scale * Math.atan2(Math.sqrt(h), Math.sqrt(1 - h));
    }
    const uploaded = travelKm?.[sources[i].id];
    if (uploaded) for (let j = 0; j < m; j++) km[row + j] = uploaded[sites[j].id] ?? km[row + j];
  }
}

/** A line with more demand that must be served than capacity, for `NoSteadyStateError`. */
export interface Shortfall {
  lineId: string;
  periodId?: string;
  siteIds: string[];
  demand: number;
  capacity: number;
  shortfall: number;
}

/** One line's problem with what the report needs beside it. */
export interface LineBuild {
  lineId: string;
  lineName: string;
  standardWeeks: number;
  problem: LineProblem;
  /** For site j of the problem, its index in `scenario.providers`. */
  providerIndex: number[];
  /** For source i of the problem, its index in `scenario.sources`. */
  sourceIndex: number[];
  /** Site j's queue (period factors applied), for reporting utilisation and waits. */
  siteSpecs: SiteQueueSpec[];
  /** Fixed urgent inflow per site (referrals/week). */
  urgentInflow: Float64Array;
  /** Urgent referrals/week per source and the site j they go to (−1 when there are none). */
  urgentDemand: Float64Array;
  urgentSite: Int32Array;
  /** Capacity per site before urgent referrals take their part (referrals/week). */
  fullCapacity: Float64Array;
  /** Empty when a steady state exists; otherwise what is short, and by how much. */
  shortfalls: Shortfall[];
}

/** Demand and team factors of a period for one line (1 when the period does not name the line). */
export function periodFactors(period: ScenarioPeriod | undefined, lineId: string): { demand: number; teams: number } {
  if (!period) return { demand: 1, teams: 1 };
  const pick = (factor: number | Record<string, number>) => (typeof factor === "number" ? factor : (factor[lineId] ?? 1));
  return { demand: pick(period.demandFactor), teams: pick(period.teamsFactor) };
}

/** c' = max(1, round(c·f)), μ' = μ·c·f/c' — capacity scaled exactly by f (see the file comment). */
export function scaleTeams(teams: number, ratePerTeam: number, factor: number): { teams: number; ratePerTeam: number } {
  if (factor === 1) return { teams, ratePerTeam };
  const scaled = Math.max(1, Math.round(teams * factor));
  return { teams: scaled, ratePerTeam: (ratePerTeam * teams * factor) / scaled };
}

/** The queue spec of a site line, with a period's team factor applied to every stage. */
export function siteQueueSpec(siteLine: ScenarioSiteLine, teamsFactor = 1): SiteQueueSpec {
  const stages = siteLine.stages;
  if (!stages) {
    // parseScenario guarantees teams and ratePerTeam when there are no stages.
    const scaled = scaleTeams(siteLine.teams as number, siteLine.ratePerTeam as number, teamsFactor);
    return { ...scaled, serviceCv: siteLine.serviceCv };
  }
  const scaledStages = stages.map((stage) => ({ id: stage.id, serviceCv: stage.serviceCv, ...scaleTeams(stage.teams, stage.ratePerTeam, teamsFactor) }));
  const entry = siteLine.entry ?? stages[0].id;
  const entryStage = scaledStages.find((stage) => stage.id === entry) ?? scaledStages[0];
  return {
    // With a pathway the stages carry the queues; the site-level figures are those of the entry stage.
    teams: entryStage.teams,
    ratePerTeam: entryStage.ratePerTeam,
    serviceCv: entryStage.serviceCv,
    pathway: { stages: scaledStages, routing: siteLine.routing ?? [[0]], entry },
  };
}

function outsideCostFor(outsideCost: number | Record<string, number | null> | null | undefined, lineId: string): number {
  if (outsideCost === null || outsideCost === undefined) return Infinity;
  if (typeof outsideCost === "number") return outsideCost;
  return outsideCost[lineId] ?? Infinity;
}

function urgentShareFor(urgentShare: number | Record<string, number> | undefined, lineId: string): number {
  if (urgentShare === undefined) return 0;
  return typeof urgentShare === "number" ? urgentShare : (urgentShare[lineId] ?? 0);
}

/**
 * Road km of each line's source–site pairs (`pairKm`), by line id. A line's sources and sites are
 * the same in every period, so one map serves the stationary problem and all periods — and, in
 * the command line, both threads (the arrays may live in shared memory). Solvers only read them.
 */
export type LineDistances = Map<string, Float64Array>;

/** Builds every service line's problem, in the scenario's order, for the whole year or one period. */
export function buildLineProblems(scenario: Scenario, period?: ScenarioPeriod, distances?: LineDistances): LineBuild[] {
  return scenario.serviceLines.map((line) => buildLineProblem(scenario, line.id, period, distances));
}

/** Road km of every line's pairs; `allocate` chooses the arrays' memory (e.g. shared between threads). */
export function lineDistances(scenario: Scenario, allocate: (length: number) => Float64Array = (length) => new Float64Array(length)): LineDistances {
  const distances: LineDistances = new Map();
  for (const line of scenario.serviceLines) {
    const { sources, sites } = lineMembers(scenario, line.id);
    const km = allocate(sources.length * sites.length);
    km.set(pairKm(sources.map((index) => scenario.sources[index]), sites.map((index) => scenario.providers[index]), scenario.circuity, scenario.travelKm ?? undefined));
    distances.set(line.id, km);
  }
  return distances;
}

/** The sources with demand for a line and the providers offering it (indices in the scenario). */
export function lineMembers(scenario: Scenario, lineId: string): { sources: number[]; sites: number[] } {
  const sites: number[] = [];
  scenario.providers.forEach((provider, index) => {
    if (provider.lines[lineId]) sites.push(index);
  });
  const sources: number[] = [];
  scenario.sources.forEach((source, index) => {
    if ((source.demand[lineId] ?? 0) > 0) sources.push(index);
  });
  return { sources, sites };
}

/** One line's problem; `distances` supplies (or, when it lacks the line, keeps) the line's road km. */
export function buildLineProblem(scenario: Scenario, lineId: string, period?: ScenarioPeriod, distances?: LineDistances): LineBuild {
  const line = scenario.serviceLines.find((candidate) => candidate.id === lineId);
  if (!line) throw new RangeError(`unknown service line "${lineId}"`);
  const factors = periodFactors(period, lineId);

  const { sources: sourceIndex, sites: providerIndex } = lineMembers(scenario, lineId);
  const n = sourceIndex.length;
  const m = providerIndex.length;

  let km = distances?.get(lineId);
  if (!km || km.length !== n * m) {
    km = pairKm(
      sourceIndex.map((index) => scenario.sources[index]),
      providerIndex.map((index) => scenario.providers[index]),
      scenario.circuity,
      scenario.travelKm ?? undefined,
    );
    distances?.set(lineId, km);
  }
  const travelCost = travelCostOf(km, scenario.kmPerWeek);

  const demand = new Float64Array(n);
  const outsideCost = new Float64Array(n);
  const outsideSpread = new Float64Array(n);
  const urgentDemand = new Float64Array(n);
  const urgentSite = new Int32Array(n).fill(-1);
  const urgentInflow = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const source = scenario.sources[sourceIndex[i]];
    const total = (source.demand[lineId] ?? 0) * factors.demand;
    const urgent = total * urgentShareFor(source.urgentShare, lineId);
    demand[i] = total - urgent;
    outsideCost[i] = outsideCostFor(source.outsideCost, lineId);
    outsideSpread[i] = source.outsideSpread;
    if (urgent > 0 && m > 0) {
      const nearest = nearestSite(km, i, m);
      urgentDemand[i] = urgent;
      urgentSite[i] = nearest;
      urgentInflow[nearest] += urgent;
    }
  }

  const siteSpecs: SiteQueueSpec[] = [];
  const fullCapacity = new Float64Array(m);
  const minWeekly = new Float64Array(m).fill(Number.NaN);
  const maxWeekly = new Float64Array(m).fill(Number.NaN);
  const shortfalls: Shortfall[] = [];
  const periodId = period?.id;
  const sites = providerIndex.map((index, j) => {
    const provider = scenario.providers[index];
    const siteLine = provider.lines[lineId];
    const spec = siteQueueSpec(siteLine, factors.teams);
    siteSpecs.push(spec);
    fullCapacity[j] = createSiteWaitModel(spec, 0).capacity;
    if (siteLine.minWeekly != null) minWeekly[j] = siteLine.minWeekly;
    if (siteLine.maxWeekly != null) maxWeekly[j] = siteLine.maxWeekly;
    if (urgentInflow[j] >= fullCapacity[j]) {
      shortfalls.push({
        lineId,
        ...(periodId ? { periodId } : {}),
        siteIds: [provider.id],
        demand: urgentInflow[j],
        capacity: fullCapacity[j],
        shortfall: urgentInflow[j] - fullCapacity[j],
      });
    }
    return createSiteWaitModel(spec, urgentInflow[j]);
  });

  // Without an outside option patients stay whatever the wait, so their routine demand must fit
  // in the routine capacity left after urgent referrals, or every wait grows without bound.
  if (shortfalls.length === 0 && m > 0) {
    let captive = 0;
    for (let i = 0; i < n; i++) if (outsideCost[i] === Infinity) captive += demand[i];
    const routineCapacity = sites.reduce((total, site) => total + site.capacity, 0);
    if (captive > 0 && captive >= routineCapacity) {
      shortfalls.push({
        lineId,
        ...(periodId ? { periodId } : {}),
        siteIds: providerIndex.map((index) => scenario.providers[index].id),
        demand: captive,
        capacity: routineCapacity,
        shortfall: captive - routineCapacity,
      });
    }
  }

  const problem: LineProblem = {
    lineId,
    standardWeeks: line.standardWeeks,
    n,
    m,
    sourceIds: sourceIndex.map((index) => scenario.sources[index].id),
    siteIds: providerIndex.map((index) => scenario.providers[index].id),
    demand,
    outsideCost,
    outsideSpread,
    travelCost,
    km,
    sites,
    minWeekly,
    maxWeekly,
  };
  return {
    lineId,
    lineName: line.name ?? lineId,
    standardWeeks: line.standardWeeks,
    problem,
    providerIndex,
    sourceIndex,
    siteSpecs,
    urgentInflow,
    urgentDemand,
    urgentSite,
    fullCapacity,
    shortfalls,
  };
}

/** Travel cost per pair of each km array, for the κ it was computed with. */
const travelCosts = new WeakMap<Float64Array, { kmPerWeek: number; travelCost: Float64Array }>();

/**
 * Travel cost km / κ (weeks-equivalent) of every pair of a line's road km, computed once per km
 * array and κ: the periods of a scenario and the rules solved on one thread share it, and with it
 * everything the solvers cache per travel-cost array (the nearest-site lists). Never modified.
 */
export function travelCostOf(km: Float64Array, kmPerWeek: number): Float64Array {
  const known = travelCosts.get(km);
  if (known && known.kmPerWeek === kmPerWeek) return known.travelCost;
  const travelCost = new Float64Array(km.length);
  for (let pair = 0; pair < km.length; pair++) travelCost[pair] = km[pair] / kmPerWeek;
  rememberTravelCost(km, kmPerWeek, travelCost);
  return travelCost;
}

/** Records a travel cost computed elsewhere (by both command-line threads, in shared memory) for `travelCostOf`. */
export function rememberTravelCost(km: Float64Array, kmPerWeek: number, travelCost: Float64Array): void {
  travelCosts.set(km, { kmPerWeek, travelCost });
}

/** The site with the fewest km from source i; ties go to the site listed first. */
function nearestSite(km: Float64Array, i: number, m: number): number {
  let best = 0;
  for (let j = 1; j < m; j++) if (km[i * m + j] < km[i * m + best]) best = j;
  return best;
}
