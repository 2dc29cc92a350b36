/**
 * Builds the demo scenario (exchange format) from the layout, with DEMO.md's figures:
 * list sizes sharing each town's population, demand per line from the rates per 1,000 people per
 * year with the older-town and commuter-town factors, urgent shares, outside options by
 * deprivation, capacities as teams × rate, and monthly periods.
 */
import type { ScenarioDocument } from "../app/models/scenarios.server";
import { round, toLonLat, type Km } from "./geometry";
import {
  AGE_SENSITIVE_LINES,
  INPATIENT_SURGICAL_LINES,
  MONTHS,
  SERVICE_LINES,
  SITES,
  TEACHING_ORTHO_PATHWAY,
  TOWNS,
  VILLAGES,
  VILLAGES_POPULATION,
  outsideCostFor,
  outsideSpreadFor,
  type LineId,
  type PracticeSpec,
} from "./layout";

/** DEMO.md's weekly figures divide yearly rates by 52 (258/wk of orthopaedics for 480,000 people at 28 per 1,000). */
const WEEKS_PER_YEAR = 52;

export const DEMO_SCENARIO_NAME = "Caldervey 2026/27 baseline";

interface PlacedPractice {
  spec: PracticeSpec;
  at: Km;
  listSize: number;
  ageFactor: number;
}

/** Shares `population` in proportion to `weights`, in whole tens, summing exactly to the population. */
export function shareOut(population: number, weights: number[]): number[] {
  const total = weights.reduce((sum, weight) => sum + weight, 0);
  const shares = weights.map((weight) => Math.round((population * weight) / total / 10) * 10);
  shares[shares.length - 1] += population - shares.reduce((sum, share) => sum + share, 0);
  return shares;
}

export function placedPractices(): PlacedPractice[] {
  const placed: PlacedPractice[] = [];
  for (const town of TOWNS) {
    const sizes = shareOut(
      town.population,
      town.practices.map((practice) => practice.weight),
    );
    town.practices.forEach((spec, index) => {
      placed.push({ spec, at: [town.centre[0] + spec.offset[0], town.centre[1] + spec.offset[1]], listSize: sizes[index], ageFactor: town.ageFactor });
    });
  }
  const villagePractices = VILLAGES.filter((village) => village.practice);
  const sizes = shareOut(
    VILLAGES_POPULATION,
    villagePractices.map((village) => (village.practice as PracticeSpec).weight),
  );
  villagePractices.forEach((village, index) => {
    placed.push({ spec: village.practice as PracticeSpec, at: village.at, listSize: sizes[index], ageFactor: 1 });
  });
  return placed;
}

/**
 * Demand per practice and line (referrals/week). The town factors redistribute the region's demand
 * rather than add to it: the region's total per line stays at rate × population, as DEMO.md gives.
 */
export function practiceDemand(practices: PlacedPractice[]): Record<LineId, number>[] {
  const population = practices.reduce((sum, practice) => sum + practice.listSize, 0);
  const demand = practices.map(() => ({}) as Record<LineId, number>);
  for (const line of SERVICE_LINES) {
    const factor = (practice: PlacedPractice) => (AGE_SENSITIVE_LINES.includes(line.id) ? practice.ageFactor : 1);
    const weighted = practices.reduce((sum, practice) => sum + practice.listSize * factor(practice), 0);
    const regionTotal = (population * line.ratePer1000) / 1000 / WEEKS_PER_YEAR;
    practices.forEach((practice, index) => {
      demand[index][line.id] = round((regionTotal * practice.listSize * factor(practice)) / weighted, 2);
    });
  }
  return demand;
}

export function buildDemoScenario(): ScenarioDocument {
  const practices = placedPractices();
  const demand = practiceDemand(practices);
  const [lon, lat] = [0, 1];
  return {
    schema: "equilibra/scenario@1",
    name: DEMO_SCENARIO_NAME,
    description:
      "Invented demo region (Caldervey): 40 practices, 7 provider sites, 4 service lines. " +
      "Every place, organisation and figure is made up for demonstration; none describes real services.",
    dataDate: "2026-04-01",
    kmPerWeek: 15,
    circuity: 1.3,
    choiceModel: { kind: "wardrop" },
    serviceLines: SERVICE_LINES.map((line) => ({ id: line.id, name: line.name, standardWeeks: 18 })),
    sources: practices.map((practice, index) => {
      const position = toLonLat(practice.at);
      const decile = practice.spec.deprivationDecile;
      return {
        id: practice.spec.code,
        name: practice.spec.name,
        lat: position[lat],
        lon: position[lon],
        population: practice.listSize,
        deprivationDecile: decile,
        demand: demand[index],
        urgentShare: Object.fromEntries(SERVICE_LINES.map((line) => [line.id, line.urgentShare])),
        outsideCost: Object.fromEntries(SERVICE_LINES.map((line) => [line.id, outsideCostFor(decile)])),
        outsideSpread: outsideSpreadFor(decile),
      };
    }),
    providers: SITES.map((site) => {
      const position = toLonLat(site.at);
      return {
        id: site.code,
        name: site.name,
        lat: position[lat],
        lon: position[lon],
        sector: site.sector,
        lines: Object.fromEntries(
          SERVICE_LINES.filter((line) => site.lines[line.id]).map((line) => {
            const spec = site.lines[line.id] as NonNullable<(typeof site.lines)[LineId]>;
            const withPathway = site.code === "ZZS1" && line.id === "ortho";
            return [
              line.id,
              {
                teams: spec.teams,
                ratePerTeam: spec.ratePerTeam,
                serviceCv: spec.serviceCv,
                ...(spec.minWeekly !== undefined ? { minWeekly: spec.minWeekly, maxWeekly: spec.maxWeekly } : {}),
                ...(withPathway ? structuredClone(TEACHING_ORTHO_PATHWAY) : {}),
              },
            ];
          }),
        ),
      };
    }),
    periods: MONTHS.map((month) => ({
      id: month.id,
      label: month.label,
      weeks: round(month.days / 7, 4),
      demandFactor: month.demandFactor,
      teamsFactor: winterFactors(month.teamsFactor, month.winterSurgery),
    })),
    plan: { maxUtilisation: 0.9, maxKm: 60 },
  };
}

/** A month's team factor; in winter months a map that shrinks inpatient surgery only (bed pressure). */
function winterFactors(teamsFactor: number, winterSurgery: number | undefined): number | Record<string, number> {
  if (winterSurgery === undefined) return teamsFactor;
  return Object.fromEntries(SERVICE_LINES.map((line) => [line.id, INPATIENT_SURGICAL_LINES.includes(line.id) ? winterSurgery : teamsFactor]));
}
