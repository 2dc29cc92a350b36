/**
 * CSV import and export of scenario inputs: every row error is reported with its file, line and
 * column before anything is built; an exported set of files re-imports to the same scenario.
 */
import { describe, expect, it } from "vitest";
import { parseScenario, type Scenario } from "~/engine/scenario";
import { importCsvFiles, MAX_CSV_BYTES, type CsvFiles } from "~/models/csv-import";
import { scenarioToCsvFiles, csvOmissions } from "~/models/csv-export";

const practices = [
  "id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.ortho,demand.eyes,outsideCost.ortho,outsideCost.eyes",
  "ZZP001,Harbour Lane Surgery,10.01,-30.02,2,12000,0.4,4.2,3.1,24,",
  "ZZP002,Mill Row Practice,10.05,-30.10,9,6000,0.3,2.5,1.75,18,21",
].join("\n");

const sites = ["id,name,lat,lon,sector", "ZZS1,Teaching Hospital,10.02,-30.05,public", "ZZS2,Brookfield Clinic,10.08,-30.12,independent"].join("\n");

const capacities = [
  "site,line,teams,ratePerTeam,serviceCv,minWeekly,maxWeekly",
  "ZZS1,ortho,3,2.5,1,,",
  "ZZS1,eyes,2,3,0.8,,",
  "ZZS2,ortho,1,2,1,0.5,4",
].join("\n");

const goodFiles: CsvFiles = { practices, sites, capacities };

describe("importCsvFiles", () => {
  it("builds an exchange-format scenario from valid files", () => {
    const preview = importCsvFiles(goodFiles, { kmPerWeek: 20 });
    expect(preview.errors).toEqual([]);
    const scenario = preview.scenario as Scenario;
    expect(scenario.schema).toBe("equilibra/scenario@1");
    expect(scenario.kmPerWeek).toBe(20);
    expect(scenario.serviceLines.map((line) => line.id)).toEqual(["ortho", "eyes"]);
    expect(scenario.sources[0]).toMatchObject({ id: "ZZP001", demand: { ortho: 4.2, eyes: 3.1 }, outsideCost: { ortho: 24 }, deprivationDecile: 2, population: 12000 });
    expect(scenario.sources[1].outsideCost).toEqual({ ortho: 18, eyes: 21 });
    expect(scenario.providers[1]).toMatchObject({ id: "ZZS2", sector: "independent", lines: { ortho: { teams: 1, ratePerTeam: 2, minWeekly: 0.5, maxWeekly: 4 } } });
    expect(preview.rowCounts).toEqual({ practices: 2, sites: 2, capacities: 3 });
  });

  it("reports every broken row with its file line (header = line 1) and column, and builds nothing", () => {
    const broken = [
      "id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.ortho,demand.eyes,outsideCost.ortho,outsideCost.eyes",
      "ZZP001,Harbour Lane Surgery,10.01,-30.02,2,12000,0.4,4.2,3.1,24,",
      "ZZP002,Mill Row Practice,north,-30.10,11,6000,0.3,-1,1.75,18,21",
      "ZZP001,Copy,10.0,-30.0,,,,1,1,,",
    ].join("\n");
    const preview = importCsvFiles({ ...goodFiles, practices: broken });
    expect(preview.scenario).toBeUndefined();
    expect(preview.errors).toEqual([
      { file: "practices.csv", line: 3, field: "lat", message: 'must be a latitude in degrees between -90 and 90; got "north"' },
      { file: "practices.csv", line: 3, field: "deprivationDecile", message: 'must be a whole number from 1 (most deprived) to 10; got "11"' },
      { file: "practices.csv", line: 3, field: "demand.ortho", message: 'must be a number ≥ 0 (referrals/week); got "-1"' },
      { file: "practices.csv", line: 4, field: "id", message: 'duplicate practice id "ZZP001" (also on line 2)' },
    ]);
  });

  it("reports errors in several files at once", () => {
    const preview = importCsvFiles({
      practices,
      sites: ["id,name,lat,lon,sector", "ZZS1,Teaching Hospital,10.02,-30.05,council", "ZZS2,Brookfield Clinic,10.08,-30.12,independent"].join("\n"),
      capacities: ["site,line,teams,ratePerTeam", "ZZS1,ortho,2.5,2", "ZZS9,ortho,1,2", "ZZS2,eyes,,3"].join("\n"),
    });
    expect(preview.errors).toEqual([
      { file: "sites.csv", line: 2, field: "sector", message: 'must be "public" or "independent"; got "council"' },
      { file: "capacities.csv", line: 2, field: "teams", message: 'must be a whole number of teams ≥ 1; got "2.5"' },
      { file: "capacities.csv", line: 4, field: "teams", message: "is required: a whole number of teams ≥ 1" },
      { file: "capacities.csv", line: 3, field: "site", message: 'names no site in sites.csv; got "ZZS9"' },
    ]);
  });

  it("rejects numbers in other notations rather than guessing", () => {
    const preview = importCsvFiles({ ...goodFiles, capacities: ["site,line,teams,ratePerTeam", "ZZS1,ortho,0x3,2", "ZZS1,eyes,2,\"2,5\"", "ZZS2,ortho,1,2"].join("\n") });
    expect(preview.errors.map((error) => [error.line, error.field, error.message])).toEqual([
      [2, "teams", 'must be a whole number of teams ≥ 1; got "0x3"'],
      [3, "ratePerTeam", 'must be a number > 0 (patients per team per week); got "2,5"'],
    ]);
  });

  it("names missing files, missing columns and unknown columns", () => {
    expect(importCsvFiles({ practices, sites }).errors).toEqual([{ file: "capacities.csv", line: null, field: "", message: "capacities.csv is required" }]);
    const preview = importCsvFiles({ ...goodFiles, sites: "id,name,latitude,lon\nZZS1,A,1,2", practices: practices.replace("population", "people") });
    expect(preview.errors).toContainEqual({ file: "sites.csv", line: 1, field: "lat", message: 'the header has no "lat" column (found: id, name, latitude, lon)' });
    expect(preview.errors.find((error) => error.field === "people")?.message).toMatch(/^unknown column "people"/);
  });

  it("refuses a file above the size limit with a message that gives both sizes", () => {
    const padding = `\n${"ZZP999,x,1,1,,,,1,1,,".repeat(1)}`;
    const big = practices + padding.repeat(Math.ceil(MAX_CSV_BYTES / padding.length) + 1);
    const preview = importCsvFiles({ ...goodFiles, practices: big });
    expect(preview.errors).toHaveLength(1);
    expect(preview.errors[0]).toMatchObject({ file: "practices.csv", line: null });
    expect(preview.errors[0].message).toMatch(/^practices\.csv is 2\.\d MB; the limit is 2\.0 MB per file/);
  });

  it("maps whole-scenario checks back to the row that causes them", () => {
    // A capacity row for a line no practice refers to is fine, but a demand column for a line no
    // site offers leaves patients nowhere to go: the engine's cross-check names the line.
    const preview = importCsvFiles({ ...goodFiles, capacities: capacities.split("\n").filter((row) => !row.includes("eyes")).join("\n") });
    expect(preview.errors).toEqual([
      { file: "scenario", line: null, field: "serviceLines[1].id", message: 'service line has 4.85 referrals/week of demand but no provider offers it; got "eyes"' },
    ]);
  });

  it("reads a km matrix in either the wide or the long layout", () => {
    const wide = importCsvFiles({ ...goodFiles, travelKm: "source,ZZS1,ZZS2\nZZP001,5.5,12\nZZP002,,7.25" });
    expect(wide.scenario?.travelKm).toEqual({ ZZP001: { ZZS1: 5.5, ZZS2: 12 }, ZZP002: { ZZS2: 7.25 } });
    const long = importCsvFiles({ ...goodFiles, travelKm: "source,site,km\nZZP001,ZZS1,5.5\nZZP002,ZZS2,7.25" });
    expect(long.scenario?.travelKm).toEqual({ ZZP001: { ZZS1: 5.5 }, ZZP002: { ZZS2: 7.25 } });
    const unknown = importCsvFiles({ ...goodFiles, travelKm: "source,site,km\nZZP001,ZZS1,5.5\nZZP404,ZZS2,7.25" });
    expect(unknown.errors).toEqual([{ file: "travel-km.csv", line: 3, field: "source", message: 'names an unknown source "ZZP404"; got {"ZZS2":7.25}' }]);
  });

  it("keeps service lines (names, standards) from the scenario being replaced", () => {
    const preview = importCsvFiles(goodFiles, { serviceLines: [{ id: "eyes", name: "Ophthalmology", standardWeeks: 12 }] });
    expect(preview.scenario?.serviceLines).toEqual([
      { id: "eyes", name: "Ophthalmology", standardWeeks: 12 },
      { id: "ortho", standardWeeks: 18 },
    ]);
  });
});

describe("CSV export and re-import", () => {
  const scenario = parseScenario({
    schema: "equilibra/scenario@1",
    name: "Round trip",
    kmPerWeek: 15,
    circuity: 1.3,
    serviceLines: [
      { id: "ortho", name: "Orthopaedics, adult", standardWeeks: 18 },
      { id: "derm", name: "Dermatology", standardWeeks: 13.5 },
    ],
    sources: [
      { id: "ZZP001", name: "Quay \"Old\" Surgery", lat: 10.123456789, lon: -30.1, demand: { ortho: 4.2, derm: 1 / 3 }, outsideCost: { ortho: 30, derm: 25.5 }, outsideSpread: 0.35, urgentShare: { ortho: 0.15, derm: 0.1 }, deprivationDecile: 3, population: 15234 },
      { id: "ZZP002", lat: 10.2, lon: -30.3, demand: { ortho: 0.1 + 0.2 }, outsideSpread: 0 },
    ],
    providers: [
      { id: "ZZS1", name: "Teaching, North", lat: 10.15, lon: -30.2, sector: "public", lines: { ortho: { teams: 3, ratePerTeam: 2.5, serviceCv: 1 }, derm: { teams: 2, ratePerTeam: 1e-1 * 33, serviceCv: 0.7, minWeekly: 1, maxWeekly: 9 } } },
      { id: "ZZS2", lat: 10.25, lon: -30.25, sector: "independent", lines: { ortho: { teams: 1, ratePerTeam: 4, serviceCv: 1 } } },
    ],
    travelKm: { ZZP001: { ZZS1: 3.3333333333333335 }, ZZP002: { ZZS2: 12 } },
  });

  it("re-imports an export to the same scenario, number for number", () => {
    const files = scenarioToCsvFiles(scenario);
    const preview = importCsvFiles(
      { practices: files["practices.csv"], sites: files["sites.csv"], capacities: files["capacities.csv"], serviceLines: files["service-lines.csv"], travelKm: files["travel-km.csv"] },
      { name: scenario.name, kmPerWeek: scenario.kmPerWeek, circuity: scenario.circuity, choiceModel: scenario.choiceModel },
    );
    expect(preview.errors).toEqual([]);
    expect(preview.scenario).toEqual(scenario);
    // And exporting again gives byte-identical files.
    expect(scenarioToCsvFiles(preview.scenario as Scenario)).toEqual(files);
  });

  it("writes one demand column per line and quotes text that contains commas or quotes", () => {
    const files = scenarioToCsvFiles(scenario);
    expect(files["practices.csv"].split("\n")[0]).toBe(
      "id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.ortho,demand.derm,outsideCost.ortho,outsideCost.derm,urgentShare.ortho,urgentShare.derm",
    );
    expect(files["practices.csv"]).toContain('ZZP001,"Quay ""Old"" Surgery",10.123456789,-30.1,3,15234,0.35,4.2,0.3333333333333333,30,25.5,0.15,0.1');
    expect(files["sites.csv"]).toContain('ZZS1,"Teaching, North",10.15,-30.2,public');
  });

  it("keeps the pathway stages of the scenario being replaced for site lines the capacities still list", () => {
    const stages = [
      { id: "clinic", teams: 3, ratePerTeam: 2.5, serviceCv: 1 },
      { id: "theatre", teams: 2, ratePerTeam: 3, serviceCv: 1 },
    ];
    const staged = parseScenario({
      ...scenario,
      providers: scenario.providers.map((provider) =>
        provider.id === "ZZS1" ? { ...provider, lines: { ...provider.lines, ortho: { teams: 3, ratePerTeam: 2.5, serviceCv: 1, stages, routing: [[0, 0.6], [0, 0]], entry: "clinic" } } } : provider,
      ),
    });
    const files = scenarioToCsvFiles(staged);
    const preview = importCsvFiles(
      { practices: files["practices.csv"], sites: files["sites.csv"], capacities: files["capacities.csv"], serviceLines: files["service-lines.csv"], travelKm: files["travel-km.csv"] },
      { name: staged.name, kmPerWeek: staged.kmPerWeek, circuity: staged.circuity, choiceModel: staged.choiceModel, providers: staged.providers },
    );
    expect(preview.errors).toEqual([]);
    expect(preview.scenario).toEqual(staged);
  });

  it("says what CSV cannot carry", () => {
    expect(csvOmissions(scenario)).toEqual([]);
    const withPeriods = parseScenario({ ...scenario, periods: [{ id: "jan", weeks: 4.3, demandFactor: 1.05 }] });
    expect(csvOmissions(withPeriods)).toEqual(["1 period"]);
  });
});
