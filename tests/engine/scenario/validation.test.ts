/**
 * Every validation message of the exchange format, pinned word for word (issue 3, "Bad input"):
 * each names the field path and the value found. A scenario with any issue is rejected whole.
 */
import { describe, expect, it } from "vitest";
import { parseScenario } from "~/engine/scenario";
import { ScenarioInputError } from "~/engine/problem";

// Test fixtures are mutated freely to build bad input, so they are loosely typed on purpose.
type Json = Record<string, any>;

function validScenario(): Json {
  return {
    schema: "equilibra/scenario@1",
    name: "Two practices, two sites",
    serviceLines: [{ id: "ortho", name: "Orthopaedics" }, { id: "derm" }],
    sources: [
      { id: "S1", lat: 54.7, lon: 2.1, demand: { ortho: 2, derm: 1 }, outsideCost: 20, outsideSpread: 0.3, urgentShare: { ortho: 0.15 }, deprivationDecile: 3 },
      { id: "S2", lat: 54.8, lon: 2.3, demand: { ortho: 1.5 }, outsideCost: { ortho: 25, derm: null } },
    ],
    providers: [
      { id: "P1", lat: 54.75, lon: 2.2, sector: "public", lines: { ortho: { teams: 2, ratePerTeam: 2 }, derm: { teams: 1, ratePerTeam: 3 } } },
      { id: "P2", lat: 54.9, lon: 2.0, sector: "independent", lines: { ortho: { teams: 3, ratePerTeam: 1.5, minWeekly: 1, maxWeekly: 4 } } },
    ],
    travelKm: { S1: { P1: 12.5 } },
    periods: [{ id: "winter", label: "Winter", weeks: 13, demandFactor: 1.05, teamsFactor: { ortho: 0.85 } }],
    plan: { maxUtilisation: 0.9, maxKm: 60 },
  };
}

function issuesOf(mutate: (scenario: Json) => void): { path: string; message: string }[] {
  const scenario = validScenario();
  mutate(scenario);
  try {
    parseScenario(scenario);
  } catch (error) {
    expect(error).toBeInstanceOf(ScenarioInputError);
    return (error as ScenarioInputError).issues;
  }
  throw new Error("expected the scenario to be rejected");
}

const pathway = () => ({
  stages: [
    { id: "clinic", teams: 2, ratePerTeam: 4 },
    { id: "scan", teams: 1, ratePerTeam: 6 },
    { id: "surgery", teams: 2, ratePerTeam: 2 },
  ],
  routing: [
    [0, 0.5, 0.3],
    [0, 0, 0.6],
    [0, 0, 0],
  ],
  entry: "clinic",
});

describe("parseScenario accepts a valid file", () => {
  it("fills the documented defaults", () => {
    const scenario = parseScenario(validScenario());
    expect(scenario.kmPerWeek).toBe(15);
    expect(scenario.circuity).toBe(1.3);
    expect(scenario.choiceModel).toEqual({ kind: "wardrop" });
    expect(scenario.serviceLines[0].standardWeeks).toBe(18);
    expect(scenario.sources[1].outsideSpread).toBe(0);
    expect(scenario.providers[0].lines.ortho.serviceCv).toBe(1);
    expect(scenario.periods?.[0].teamsFactor).toEqual({ ortho: 0.85 });
  });

  it("accepts a pathway with stages, routing and entry", () => {
    const scenario = validScenario();
    scenario.providers[0].lines.ortho = pathway();
    expect(parseScenario(scenario).providers[0].lines.ortho.stages).toHaveLength(3);
  });
});

// [mutation, expected issues] — every message pinned.
const cases: [string, (s: Json) => void, { path: string; message: string }[]][] = [
  ["negative demand", (s) => (s.sources[0].demand.ortho = -2), [{ path: "sources[0].demand.ortho", message: "must be a number ≥ 0 (referrals/week); got -2" }]],
  ["NaN demand", (s) => (s.sources[0].demand.ortho = Number.NaN), [{ path: "sources[0].demand.ortho", message: "must be a number ≥ 0 (referrals/week); got NaN" }]],
  ["non-numeric demand", (s) => (s.sources[1].demand.ortho = "4,2"), [{ path: "sources[1].demand.ortho", message: 'must be a number ≥ 0 (referrals/week); got "4,2"' }]],
  ["demand not a map", (s) => (s.sources[0].demand = 3), [{ path: "sources[0].demand", message: "must be an object mapping service-line ids to referrals/week; got 3" }]],
  ["zero teams", (s) => (s.providers[0].lines.ortho.teams = 0), [{ path: "providers[0].lines.ortho.teams", message: "must be a whole number of teams from 1 to 10000; got 0" }]],
  ["fractional teams", (s) => (s.providers[1].lines.ortho.teams = 2.5), [{ path: "providers[1].lines.ortho.teams", message: "must be a whole number of teams from 1 to 10000; got 2.5" }]],
  ["too many teams", (s) => (s.providers[0].lines.ortho.teams = 20000), [{ path: "providers[0].lines.ortho.teams", message: "must be a whole number of teams from 1 to 10000; got 20000" }]],
  ["zero rate", (s) => (s.providers[0].lines.derm.ratePerTeam = 0), [{ path: "providers[0].lines.derm.ratePerTeam", message: "must be a number > 0 (patients per team per week); got 0" }]],
  ["negative rate", (s) => (s.providers[0].lines.ortho.ratePerTeam = -1), [{ path: "providers[0].lines.ortho.ratePerTeam", message: "must be a number > 0 (patients per team per week); got -1" }]],
  ["missing teams", (s) => delete s.providers[0].lines.ortho.teams, [{ path: "providers[0].lines.ortho.teams", message: "is required (a whole number of teams from 1 to 10000) unless stages are given; got nothing (the field is missing)" }]],
  ["negative serviceCv", (s) => (s.providers[0].lines.ortho.serviceCv = -0.5), [{ path: "providers[0].lines.ortho.serviceCv", message: "must be a coefficient of variation ≥ 0 (1 = exponential service times); got -0.5" }]],
  [
    "a line with demand that no site offers",
    (s) => delete s.providers[0].lines.derm,
    [{ path: "serviceLines[1].id", message: 'service line has 1 referrals/week of demand but no provider offers it; got "derm"' }],
  ],
  ["unknown line in demand", (s) => (s.sources[1].demand.opth = 1), [{ path: "sources[1].demand.opth", message: 'names an unknown service line "opth" (known: ortho, derm); got 1' }]],
  ["unknown line in outsideCost", (s) => (s.sources[1].outsideCost.gen = 5), [{ path: "sources[1].outsideCost.gen", message: 'names an unknown service line "gen" (known: ortho, derm); got 5' }]],
  ["unknown line in urgentShare", (s) => (s.sources[0].urgentShare.gen = 0.1), [{ path: "sources[0].urgentShare.gen", message: 'names an unknown service line "gen" (known: ortho, derm); got 0.1' }]],
  ["unknown line at a provider", (s) => (s.providers[1].lines.eye = { teams: 1, ratePerTeam: 1 }), [{ path: "providers[1].lines.eye", message: 'names an unknown service line "eye" (known: ortho, derm); got {"teams":1,"ratePerTeam":1}' }]],
  ["duplicate source id", (s) => (s.sources[1].id = "S1"), [{ path: "sources[1].id", message: 'duplicate source id (also at sources[0]); got "S1"' }]],
  ["duplicate provider id", (s) => (s.providers[1].id = "P1"), [{ path: "providers[1].id", message: 'duplicate provider id (also at providers[0]); got "P1"' }]],
  ["duplicate line id", (s) => s.serviceLines.push({ id: "ortho" }), [{ path: "serviceLines[2].id", message: 'duplicate service line id (also at serviceLines[0]); got "ortho"' }]],
  ["empty id", (s) => (s.sources[0].id = ""), [{ path: "sources[0].id", message: 'must be a non-empty id without surrounding spaces; got ""' }]],
  ["latitude out of range", (s) => (s.sources[0].lat = 91), [{ path: "sources[0].lat", message: "must be a latitude in degrees between -90 and 90; got 91" }]],
  ["longitude out of range", (s) => (s.providers[1].lon = -181), [{ path: "providers[1].lon", message: "must be a longitude in degrees between -180 and 180; got -181" }]],
  ["missing latitude", (s) => delete s.providers[0].lat, [{ path: "providers[0].lat", message: "must be a latitude in degrees between -90 and 90; got nothing (the field is missing)" }]],
  ["travel entry for an unknown practice", (s) => (s.travelKm.S9 = { P1: 3 }), [{ path: "travelKm.S9", message: 'names an unknown source "S9"; got {"P1":3}' }]],
  ["travel entry for an unknown site", (s) => (s.travelKm.S1.P7 = 3), [{ path: "travelKm.S1.P7", message: 'names an unknown provider "P7"; got 3' }]],
  ["negative travel km", (s) => (s.travelKm.S1.P1 = -1), [{ path: "travelKm.S1.P1", message: "must be a number ≥ 0 (road km); got -1" }]],
  ["spread of 1", (s) => (s.sources[0].outsideSpread = 1), [{ path: "sources[0].outsideSpread", message: "must be a spread in [0, 1); got 1" }]],
  ["negative spread", (s) => (s.sources[0].outsideSpread = -0.1), [{ path: "sources[0].outsideSpread", message: "must be a spread in [0, 1); got -0.1" }]],
  ["zero outside cost", (s) => (s.sources[0].outsideCost = 0), [{ path: "sources[0].outsideCost", message: "must be a number > 0 (weeks-equivalent), a map of such numbers per service line, or null; got 0" }]],
  ["bad outside cost in a map", (s) => (s.sources[1].outsideCost.ortho = "high"), [{ path: "sources[1].outsideCost.ortho", message: 'must be a number > 0 (weeks-equivalent); got "high"' }]],
  ["bad schema string", (s) => (s.schema = "equilibra/scenario@2"), [{ path: "schema", message: 'must be "equilibra/scenario@1"; got "equilibra/scenario@2"' }]],
  ["missing schema", (s) => delete s.schema, [{ path: "schema", message: 'must be "equilibra/scenario@1"; got nothing (the field is missing)' }]],
  ["urgent share above 1", (s) => (s.sources[0].urgentShare.ortho = 1.2), [{ path: "sources[0].urgentShare.ortho", message: "must be a share between 0 and 1; got 1.2" }]],
  ["urgent share below 0", (s) => (s.sources[0].urgentShare = -0.1), [{ path: "sources[0].urgentShare", message: "must be a share between 0 and 1 or a map of such shares per service line; got -0.1" }]],
  ["deprivation decile 0", (s) => (s.sources[0].deprivationDecile = 0), [{ path: "sources[0].deprivationDecile", message: "must be a whole number from 1 (most deprived) to 10; got 0" }]],
  ["deprivation decile 11", (s) => (s.sources[0].deprivationDecile = 11), [{ path: "sources[0].deprivationDecile", message: "must be a whole number from 1 (most deprived) to 10; got 11" }]],
  ["fractional deprivation decile", (s) => (s.sources[0].deprivationDecile = 2.5), [{ path: "sources[0].deprivationDecile", message: "must be a whole number from 1 (most deprived) to 10; got 2.5" }]],
  ["non-positive kmPerWeek", (s) => (s.kmPerWeek = 0), [{ path: "kmPerWeek", message: "must be a number > 0 (km a patient would travel to wait one week less); got 0" }]],
  ["circuity below 1", (s) => (s.circuity = 0.9), [{ path: "circuity", message: "must be a road-to-straight-line ratio ≥ 1; got 0.9" }]],
  ["unknown choice model", (s) => (s.choiceModel = { kind: "probit" }), [{ path: "choiceModel.kind", message: 'must be { "kind": "wardrop" } or { "kind": "logit", "scale": θ > 0 }; got "probit"' }]],
  ["logit without a scale", (s) => (s.choiceModel = { kind: "logit" }), [{ path: "choiceModel.scale", message: "must be a number > 0 (logit scale θ per week-equivalent); got nothing (the field is missing)" }]],
  ["bad sector", (s) => (s.providers[0].sector = "private"), [{ path: "providers[0].sector", message: 'must be "public" or "independent"; got "private"' }]],
  ["non-positive standard", (s) => (s.serviceLines[0].standardWeeks = 0), [{ path: "serviceLines[0].standardWeeks", message: "must be a number > 0 (weeks); got 0" }]],
  ["no service lines", (s) => (s.serviceLines = []), [{ path: "serviceLines", message: "must list at least one service line; got []" }]],
  ["sources not an array", (s) => (s.sources = { S1: {} }), [{ path: "sources", message: 'must be an array of referral sources; got {"S1":{}}' }]],
  ["minWeekly above maxWeekly", (s) => (s.providers[1].lines.ortho.minWeekly = 5), [{ path: "providers[1].lines.ortho.minWeekly", message: "exceeds maxWeekly (4); got 5" }]],
  ["negative maxWeekly", (s) => (s.providers[1].lines.ortho.maxWeekly = -1), [{ path: "providers[1].lines.ortho.maxWeekly", message: "must be a number ≥ 0 (referrals/week); got -1" }]],
  ["plan ceiling above 1", (s) => (s.plan.maxUtilisation = 1.05), [{ path: "plan.maxUtilisation", message: "must be a utilisation ceiling in (0, 1]; got 1.05" }]],
  ["plan maxKm of 0", (s) => (s.plan.maxKm = 0), [{ path: "plan.maxKm", message: "must be a number > 0 (km); got 0" }]],
  // Periods
  ["empty periods", (s) => (s.periods = []), [{ path: "periods", message: "must list at least one period (or be left out); got []" }]],
  ["period of zero weeks", (s) => (s.periods[0].weeks = 0), [{ path: "periods[0].weeks", message: "must be a number > 0 (weeks); got 0" }]],
  ["negative demand factor", (s) => (s.periods[0].demandFactor = -0.5), [{ path: "periods[0].demandFactor", message: "must be a factor ≥ 0 or a map of such numbers per service line; got -0.5" }]],
  ["zero teams factor for a line", (s) => (s.periods[0].teamsFactor.ortho = 0), [{ path: "periods[0].teamsFactor.ortho", message: "must be a factor > 0; got 0" }]],
  ["teams factor for an unknown line", (s) => (s.periods[0].teamsFactor.eye = 0.9), [{ path: "periods[0].teamsFactor.eye", message: 'names an unknown service line "eye" (known: ortho, derm); got 0.9' }]],
  ["duplicate period id", (s) => s.periods.push({ id: "winter", weeks: 39 }), [{ path: "periods[1].id", message: 'duplicate period id (also at periods[0]); got "winter"' }]],
  // Pathways
  [
    "routing with too few rows",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), routing: [[0, 1, 0]] }),
    [{ path: "providers[0].lines.ortho.routing", message: "must have one row per stage (3 rows for 3 stages); got [[0,1,0]]" }],
  ],
  [
    "routing row too short",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), routing: [[0, 1], [0, 0, 0], [0, 0, 0]] }),
    [{ path: "providers[0].lines.ortho.routing[0]", message: "must have one entry per stage (3); got [0,1]" }],
  ],
  [
    "routing row summing above 1",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), routing: [[0, 0.7, 0.5], [0, 0, 0], [0, 0, 0]] }),
    [{ path: "providers[0].lines.ortho.routing[0]", message: 'probabilities leaving stage "clinic" sum to 1.2, more than 1; got [0,0.7,0.5]' }],
  ],
  [
    "routing probability above 1",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), routing: [[0, 1.5, 0], [0, 0, 0], [0, 0, 0]] }),
    [{ path: "providers[0].lines.ortho.routing[0][1]", message: "must be a probability between 0 and 1; got 1.5" }],
  ],
  [
    "routing patients can never leave",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), routing: [[0, 1, 0], [0, 0, 1], [0, 1, 0]] }),
    [{ path: "providers[0].lines.ortho.routing", message: 'patients reaching stage "clinic", "scan", "surgery" can never leave the pathway; got [[0,1,0],[0,0,1],[0,1,0]]' }],
  ],
  [
    "entry naming no stage",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), entry: "triage" }),
    [{ path: "providers[0].lines.ortho.entry", message: 'names no stage (stages: clinic, scan, surgery); got "triage"' }],
  ],
  [
    "several stages without routing",
    (s) => (s.providers[0].lines.ortho = { stages: pathway().stages }),
    [{ path: "providers[0].lines.ortho.routing", message: "is required: a 3×3 matrix of probabilities between the 3 stages; got nothing (the field is missing)" }],
  ],
  [
    "routing without stages",
    (s) => (s.providers[0].lines.ortho.routing = [[0]]),
    [{ path: "providers[0].lines.ortho.routing", message: "is given without stages; got [[0]]" }],
  ],
  [
    "duplicate stage id",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), stages: pathway().stages.map((stage, k) => (k === 2 ? { ...stage, id: "scan" } : stage)) }),
    [{ path: "providers[0].lines.ortho.stages[2].id", message: 'duplicate stage id (also at providers[0].lines.ortho.stages[1]); got "scan"' }],
  ],
  [
    "fractional stage teams",
    (s) => (s.providers[0].lines.ortho = { ...pathway(), stages: pathway().stages.map((stage, k) => (k === 1 ? { ...stage, teams: 0.5 } : stage)) }),
    [{ path: "providers[0].lines.ortho.stages[1].teams", message: "must be a whole number of teams from 1 to 10000; got 0.5" }],
  ],
];

describe("parseScenario rejects bad input with a pinned message naming path and value", () => {
  it.each(cases)("%s", (_label, mutate, expected) => {
    expect(issuesOf(mutate)).toEqual(expected);
  });

  it("reports every offending field at once, not only the first", () => {
    const issues = issuesOf((s) => {
      s.sources[0].demand.ortho = -1;
      s.providers[1].lines.ortho.teams = 0;
      s.sources[1].lat = 100;
    });
    expect(issues.map((issue) => issue.path)).toEqual(["sources[0].demand.ortho", "sources[1].lat", "providers[1].lines.ortho.teams"]);
  });

  it("puts each issue on its own line of the error message", () => {
    const scenario = validScenario();
    scenario.sources[0].demand.ortho = -1;
    scenario.kmPerWeek = "fifteen";
    expect(() => parseScenario(scenario)).toThrow(
      'kmPerWeek: must be a number > 0 (km a patient would travel to wait one week less); got "fifteen"\n' +
        "sources[0].demand.ortho: must be a number ≥ 0 (referrals/week); got -1",
    );
  });

  it("rejects something that is not a scenario object at all", () => {
    expect(() => parseScenario(null)).toThrow("(the scenario): must be a scenario object; got null");
    expect(() => parseScenario([1, 2])).toThrow("(the scenario): must be a scenario object; got [1,2]");
  });

  it("lets a line without demand go unoffered", () => {
    const scenario = validScenario();
    delete scenario.sources[0].demand.derm;
    delete scenario.providers[0].lines.derm;
    expect(parseScenario(scenario).serviceLines).toHaveLength(2);
  });
});
