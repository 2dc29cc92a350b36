/**
 * The invented demo region "Caldervey", drawn on a local km grid (see geometry.ts for where the
 * grid sits on open sea). Every name here is made up; each was searched for in public text and
 * code, where none turned up as a real place (a few appear in games and fiction).
 * Structure and figures follow DEMO.md: ~480,000 people, six towns plus villages, 40 practices,
 * seven provider sites. With 40 practices for 480,000 people lists average 12,000; the village
 * practices (58,000 people, five practices) therefore serve ~11,600 each, each covering its own
 * village and the hamlets around it, rather than DEMO.md's 4–7k rural lists.
 * Generators turn this into the committed files the app loads (region.geojson,
 * demo-scenario.json); nothing here is read at run time.
 */
import type { Km } from "./geometry";

export const ISLAND_NAME = "Caldervey";
export const COMMISSIONER_NAME = "Caldervey Commissioning Board";
export const NEIGHBOUR_COMMISSIONER_NAME = "Upper Caldervey Commissioning Board";

/** Coarse outline of the whole island (counter-clockwise, km); the region is its south-west part. */
export const ISLAND_OUTLINE: Km[] = [
  [-2, 3], [6, -1.5], [14, -2.5], [24, -3.5], [34, -2.5], [44, -2], [52, 0], [60, 5], [70, 14], [80, 26],
  [86, 40], [89, 56], [87, 72], [80, 84], [68, 91], [55, 89], [45, 82], [35, 74], [24, 66], [13, 60],
  [3, 57], [-3, 50], [-3.5, 44], [1, 41.5], [4.5, 39.5], [1.5, 37.5], [-3, 35], [-3, 31], [-5, 26], [-2.5, 19],
  [0.5, 14], [0.8, 11.5], [-0.2, 8.5], [0.5, 6],
];

/**
 * The commissioning body's area is the island clipped to this convex polygon (counter-clockwise):
 * the coast bounds it to the west and south, a land border with Upper Caldervey to the north-east.
 */
export const REGION_CLIP: Km[] = [[-20, -20], [46, -20], [47, 22], [45, 42], [39, 50], [-20, 50]];

export type TownCharacter = "city" | "industrial" | "commuter" | "coastal" | "affluent-market" | "rural-market" | "villages";

export interface PracticeSpec {
  code: string;
  name: string;
  /** Offset from the town centre in km (for villages: the village itself, offset 0). */
  offset: Km;
  deprivationDecile: number;
  /** Relative list size within the town; list sizes share the town's population in these proportions. */
  weight: number;
}

export interface TownSpec {
  name: string;
  character: TownCharacter;
  centre: Km;
  population: number;
  /** Radius of the built-up outline (km); about 3,000–4,000 people per km². */
  radiusKm: number;
  /** Demand factor for orthopaedics and ophthalmology (older towns 1.3, the young commuter town 0.8). */
  ageFactor: number;
  practices: PracticeSpec[];
  /** Named neighbourhoods, for the map legend and practice names. */
  estates?: { name: string; centre: Km; note: string }[];
}

const p = (code: string, name: string, offset: Km, deprivationDecile: number, weight = 1): PracticeSpec => ({
  code,
  name,
  offset,
  deprivationDecile,
  weight,
});

/** The six towns of the region (DEMO.md "Shape"). */
export const TOWNS: TownSpec[] = [
  {
    name: "Halvercombe",
    character: "city",
    centre: [24, 21],
    population: 165_000,
    radiusKm: 4.0,
    ageFactor: 1,
    estates: [
      { name: "Quarnholt", centre: [21, 18.5], note: "deprived estate, south-west of the centre" },
      { name: "Brindwater", centre: [27, 23.5], note: "deprived estate, north-east of the centre" },
    ],
    practices: [
      p("ZZP001", "Quarnholt Health Centre", [-3.0, -2.4], 1, 1.2),
      p("ZZP002", "Quarnholt Road Surgery", [-2.2, -3.0], 1, 1.0),
      p("ZZP003", "Gatehouse Medical Practice", [-3.4, -1.4], 2, 1.1),
      p("ZZP004", "Brindwater Family Practice", [2.8, 2.6], 2, 1.15),
      p("ZZP005", "Brindwater Park Surgery", [3.3, 1.8], 3, 0.95),
      p("ZZP006", "Cathedral Close Surgery", [0.2, 0.4], 6, 1.0),
      p("ZZP007", "Ropewalk Medical Centre", [-0.9, 1.6], 5, 0.9),
      p("ZZP008", "Victoria Quay Practice", [1.4, -1.2], 4, 0.85),
      p("ZZP009", "Larkspur Avenue Surgery", [-1.8, 2.8], 7, 0.9),
      p("ZZP010", "Eastgate Health Centre", [3.0, -1.0], 5, 1.0),
      p("ZZP011", "Millbrook Lane Surgery", [0.6, -3.1], 4, 0.9),
      p("ZZP012", "Westerhall Medical Practice", [-3.2, 0.9], 6, 0.95),
    ],
  },
  {
    name: "Skelderby",
    character: "industrial",
    centre: [9.5, 37],
    population: 80_000,
    radiusKm: 2.8,
    ageFactor: 1,
    practices: [
      p("ZZP013", "Foundry Road Surgery", [0.3, -0.5], 3, 1.1),
      p("ZZP014", "Kiln Lane Medical Centre", [-1.2, 0.8], 3, 1.0),
      p("ZZP015", "Skelderby Health Centre", [0, 0.4], 4, 1.2),
      p("ZZP016", "Furnace Street Surgery", [1.4, -1.3], 4, 0.9),
      p("ZZP017", "Canalside Practice", [-1.5, -1.0], 5, 0.9),
      p("ZZP018", "Northfield Surgery", [0.8, 1.7], 5, 1.0),
      p("ZZP019", "Anvil Court Medical Practice", [1.7, 0.6], 6, 0.9),
    ],
  },
  {
    name: "Ashbray",
    character: "commuter",
    centre: [35, 11],
    population: 60_000,
    radiusKm: 2.5,
    ageFactor: 0.8,
    practices: [
      p("ZZP020", "Ashbray Station Surgery", [-0.8, 0.9], 6, 1.0),
      p("ZZP021", "Meadowgate Medical Centre", [1.0, 0.8], 7, 1.1),
      p("ZZP022", "Orchard Rise Practice", [0.6, -1.2], 7, 0.9),
      p("ZZP023", "Kingfisher Way Surgery", [-1.3, -0.7], 8, 1.0),
      p("ZZP024", "Ashbray Green Health Centre", [1.6, -0.2], 8, 1.0),
    ],
  },
  {
    name: "Saltcrane",
    character: "coastal",
    centre: [3.6, 9.6],
    population: 55_000,
    radiusKm: 2.9,
    ageFactor: 1.3,
    practices: [
      p("ZZP025", "Harbour Street Surgery", [-0.4, 0.3], 1, 1.1),
      p("ZZP026", "Saltcrane Health Centre", [0.8, 0.5], 2, 1.2),
      p("ZZP027", "Promenade Medical Practice", [0.2, -1.4], 2, 0.9),
      p("ZZP028", "Net Loft Surgery", [0.9, 1.7], 3, 0.9),
      p("ZZP029", "Cliff Terrace Practice", [1.7, -0.7], 3, 0.9),
    ],
  },
  {
    name: "Wyncaster",
    character: "affluent-market",
    centre: [27, 41],
    population: 40_000,
    radiusKm: 2.0,
    ageFactor: 1.3,
    practices: [
      p("ZZP030", "Wyncaster Market Place Surgery", [0.2, -0.2], 8, 1.1),
      p("ZZP031", "Abbey Meadows Practice", [-0.9, 0.7], 9, 1.0),
      p("ZZP032", "Chantry House Surgery", [0.9, 0.6], 10, 0.9),
      p("ZZP033", "Glebe Field Medical Centre", [-0.4, -1.0], 10, 1.0),
    ],
  },
  {
    name: "Tollbarrow",
    character: "rural-market",
    centre: [38.5, 43.5],
    population: 22_000,
    radiusKm: 1.4,
    ageFactor: 1.3,
    practices: [
      p("ZZP034", "Tollbarrow Surgery", [-0.3, 0.2], 6, 1.1),
      p("ZZP035", "Drovers Way Practice", [0.5, -0.4], 7, 0.9),
    ],
  },
];

export interface VillageSpec {
  name: string;
  at: Km;
  /** The village practice serving it and its neighbours, if it has one. */
  practice?: PracticeSpec;
}

/** Villages (~58,000 people in all); five have a practice serving the villages around them, 20–45 km from the city. */
export const VILLAGES_POPULATION = 58_000;
export const VILLAGES: VillageSpec[] = [
  { name: "Hobbenford", at: [3, 26], practice: p("ZZP036", "Hobbenford Surgery", [0, 0], 7, 1.0) },
  { name: "Ambrick", at: [16, 1.5], practice: p("ZZP037", "Ambrick and District Practice", [0, 0], 6, 1.1) },
  { name: "Pennymoss", at: [42.5, 31], practice: p("ZZP038", "Pennymoss Medical Practice", [0, 0], 8, 0.9) },
  { name: "Cresswold", at: [12, 47.5], practice: p("ZZP039", "Cresswold Surgery", [0, 0], 9, 1.0) },
  { name: "Yarnmere", at: [42, 3], practice: p("ZZP040", "Yarnmere Health Centre", [0, 0], 8, 1.0) },
  { name: "Sallowick", at: [33, 30] },
  { name: "Wendlecott", at: [16, 30] },
  { name: "Little Skelder", at: [5, 44] },
  { name: "Fenwhistle", at: [19, 9] },
];

/** Towns outside the commissioning body's area that host sites 6 and 7 (shown on the map only). */
export const NEIGHBOUR_TOWNS: { name: string; centre: Km; radiusKm: number; note: string }[] = [
  { name: "Corrisbury", centre: [57, 62.2], radiusKm: 2.2, note: "Upper Caldervey: neighbouring region" },
  { name: "Pellingmoor", centre: [68, 70], radiusKm: 1.6, note: "Upper Caldervey: regional orthopaedic centre" },
];

export type LineId = "ortho" | "ophth" | "gensurg" | "derm";

export interface SiteLineSpec {
  teams: number;
  ratePerTeam: number;
  serviceCv: number;
  minWeekly?: number;
  maxWeekly?: number;
}

export interface SiteSpec {
  code: string;
  name: string;
  at: Km;
  sector: "public" | "independent";
  description: string;
  /** Capacity = teams × ratePerTeam, matching DEMO.md "Capacity" (new patients per week, net of leave). */
  lines: Partial<Record<LineId, SiteLineSpec>>;
}

const line = (teams: number, ratePerTeam: number, serviceCv: number, volumes?: { minWeekly: number; maxWeekly: number }): SiteLineSpec => ({
  teams,
  ratePerTeam,
  serviceCv,
  ...volumes,
});

export const SITES: SiteSpec[] = [
  {
    code: "ZZS1",
    name: "Halvercombe University Hospital",
    at: [24.8, 21.8],
    sector: "public",
    description: "Teaching hospital: all four lines, the largest site, long waits.",
    lines: { ortho: line(9, 10, 1.2), ophth: line(7, 10, 1), gensurg: line(8, 10, 1.1), derm: line(6, 10, 1) },
  },
  {
    code: "ZZS2",
    name: "Skelderby General Hospital",
    at: [10.2, 37.6],
    sector: "public",
    description: "District general hospital.",
    lines: { ortho: line(6, 10, 1), ophth: line(4, 10, 1), gensurg: line(5, 11, 1), derm: line(4, 8.75, 1) },
  },
  {
    code: "ZZS3",
    name: "Saltcrane Community Hospital",
    at: [4.6, 10.4],
    sector: "public",
    description: "Small community hospital: outpatients, ophthalmology and dermatology, a minor-surgery list.",
    lines: { ophth: line(3, 10, 0.9), gensurg: line(1, 10, 1), derm: line(4, 10, 0.9) },
  },
  {
    code: "ZZS4",
    name: "Wyncaster Elective Surgery Centre",
    at: [27.6, 41.5],
    sector: "public",
    description: "Public elective centre: orthopaedic day cases and cataract; no emergency work.",
    lines: { ortho: line(3, 10, 0.7), ophth: line(2, 10, 0.6) },
  },
  {
    code: "ZZS5",
    name: "Ashbray Park Hospital",
    at: [32.5, 13.5],
    sector: "independent",
    description: "Independent-sector hospital under contract: low-complexity work only, short waits.",
    lines: {
      ortho: line(4, 10, 0.7, { minWeekly: 20, maxWeekly: 40 }),
      ophth: line(4, 8.75, 0.6, { minWeekly: 15, maxWeekly: 35 }),
      gensurg: line(2, 12.5, 0.7, { minWeekly: 10, maxWeekly: 25 }),
    },
  },
  {
    code: "ZZS6",
    name: "Corrisbury District Hospital",
    at: [57.5, 62.8],
    sector: "public",
    description: "The neighbouring region's hospital, ~26 km beyond Tollbarrow: cross-border flow.",
    lines: { ortho: line(2, 7.5, 1), ophth: line(1, 10, 1), gensurg: line(2, 7.5, 1), derm: line(1, 10, 1) },
  },
  {
    code: "ZZS7",
    name: "Pellingmoor Regional Orthopaedic Centre",
    at: [68.5, 70.5],
    sector: "public",
    description: "Distant regional centre: complex orthopaedics only.",
    lines: { ortho: line(1, 5, 1.3) },
  },
];

/** The teaching hospital's orthopaedic pathway: first appointment → imaging → theatre (a Jackson network). */
export const TEACHING_ORTHO_PATHWAY = {
  stages: [
    { id: "clinic", teams: 9, ratePerTeam: 10, serviceCv: 1.2 },
    { id: "imaging", teams: 3, ratePerTeam: 25, serviceCv: 0.8 },
    { id: "theatre", teams: 6, ratePerTeam: 10, serviceCv: 1.1 },
  ],
  // From clinic: 60% to imaging, 25% straight to theatre, the rest discharged with advice.
  // From imaging: half go on to theatre. Theatre is the last stage.
  routing: [
    [0, 0.6, 0.25],
    [0, 0, 0.5],
    [0, 0, 0],
  ],
  entry: "clinic",
};

export const SERVICE_LINES: { id: LineId; name: string; ratePer1000: number; urgentShare: number }[] = [
  { id: "ortho", name: "Orthopaedics", ratePer1000: 28, urgentShare: 0.15 },
  { id: "ophth", name: "Ophthalmology", ratePer1000: 22, urgentShare: 0.2 },
  { id: "gensurg", name: "General surgery", ratePer1000: 20, urgentShare: 0.15 },
  // Dermatology's suspected-cancer fast track is outside this model; 10% urgent is the rest.
  { id: "derm", name: "Dermatology", ratePer1000: 18, urgentShare: 0.1 },
];

/** Lines whose demand rises with age (DEMO.md: older towns × 1.3, the commuter town × 0.8). */
export const AGE_SENSITIVE_LINES: LineId[] = ["ortho", "ophth"];
/** Inpatient surgical lines, whose teams shrink in winter (bed pressure). */
export const INPATIENT_SURGICAL_LINES: LineId[] = ["ortho", "gensurg"];

export const MONTHS: { id: string; label: string; days: number; demandFactor: number; teamsFactor: number; winterSurgery?: number }[] = [
  { id: "jan", label: "January", days: 31, demandFactor: 1.05, teamsFactor: 1, winterSurgery: 0.85 },
  { id: "feb", label: "February", days: 28, demandFactor: 1.0, teamsFactor: 1, winterSurgery: 0.85 },
  { id: "mar", label: "March", days: 31, demandFactor: 1.08, teamsFactor: 1 },
  { id: "apr", label: "April", days: 30, demandFactor: 0.95, teamsFactor: 1 },
  { id: "may", label: "May", days: 31, demandFactor: 1.0, teamsFactor: 1 },
  { id: "jun", label: "June", days: 30, demandFactor: 1.02, teamsFactor: 1 },
  { id: "jul", label: "July", days: 31, demandFactor: 1.0, teamsFactor: 1 },
  { id: "aug", label: "August", days: 31, demandFactor: 0.88, teamsFactor: 0.9 },
  { id: "sep", label: "September", days: 30, demandFactor: 1.02, teamsFactor: 1 },
  { id: "oct", label: "October", days: 31, demandFactor: 1.05, teamsFactor: 1 },
  { id: "nov", label: "November", days: 30, demandFactor: 1.04, teamsFactor: 1 },
  { id: "dec", label: "December", days: 31, demandFactor: 0.82, teamsFactor: 0.6 },
];

/**
 * Outside option (private care) in weeks-equivalent: 27 for the most deprived decile down to 18 for
 * the least (DEMO.md: 18–27, lower where patients can more often pay); the spread of reservation
 * costs widens from 0.3 to 0.5 with affluence, where a few patients go private very readily.
 */
export function outsideCostFor(decile: number): number {
  return 27 - (decile - 1);
}
export function outsideSpreadFor(decile: number): number {
  return Math.round((0.3 + (0.2 * (decile - 1)) / 9) * 100) / 100;
}
