/**
 * CSV export of a scenario's inputs (the same layouts `csv-import.ts` reads, so an exported set
 * re-imports to the same scenario) and of a run's results (per site and per practice, every rule).
 *
 * Numbers are written with `String(number)`, the shortest text that parses back to the same double,
 * so a round trip is exact. Result files open with `#` lines carrying the planning cautions and
 * assumptions, which spreadsheet programs show as the first rows.
 */
import Papa from "papaparse";
import type { Scenario } from "~/engine/scenario";
import { PLANNING_CAUTIONS } from "~/components/planning-cautions";
import { CSV_FILE_NAMES } from "./csv-import";
import type { ResultDocument } from "./result-document";

type Row = Array<string | number | null | undefined>;

function cell(value: string | number | null | undefined): string {
  if (value === null || value === undefined) return "";
  return typeof value === "number" ? String(value) : value;
}

function toCsv(header: string[], rows: Row[]): string {
  return `${Papa.unparse({ fields: header, data: rows.map((row) => row.map(cell)) }, { newline: "\n" })}\n`;
}

/** The inputs as CSV files keyed by file name. Pathway stages and periods travel only in JSON. */
export function scenarioToCsvFiles(scenario: Scenario): Record<string, string> {
  const lineIds = scenario.serviceLines.map((line) => line.id);
  const files: Record<string, string> = {};

  files[CSV_FILE_NAMES.serviceLines] = toCsv(
    ["id", "name", "standardWeeks"],
    scenario.serviceLines.map((line) => [line.id, line.name, line.standardWeeks]),
  );

  const perLineCost = scenario.sources.some((source) => typeof source.outsideCost === "object" && source.outsideCost !== null);
  const singleCost = scenario.sources.some((source) => typeof source.outsideCost === "number");
  const perLineShare = scenario.sources.some((source) => typeof source.urgentShare === "object");
  const singleShare = scenario.sources.some((source) => typeof source.urgentShare === "number");
  const header = ["id", "name", "lat", "lon", "deprivationDecile", "population", "outsideSpread"];
  if (singleCost) header.push("outsideCost");
  if (singleShare) header.push("urgentShare");
  header.push(...lineIds.map((id) => `demand.${id}`));
  if (perLineCost) header.push(...lineIds.map((id) => `outsideCost.${id}`));
  if (perLineShare) header.push(...lineIds.map((id) => `urgentShare.${id}`));
  files[CSV_FILE_NAMES.practices] = toCsv(
    header,
    scenario.sources.map((source) => {
      const row: Row = [source.id, source.name, source.lat, source.lon, source.deprivationDecile, source.population, source.outsideSpread];
      if (singleCost) row.push(typeof source.outsideCost === "number" ? source.outsideCost : undefined);
      if (singleShare) row.push(typeof source.urgentShare === "number" ? source.urgentShare : undefined);
      row.push(...lineIds.map((id) => source.demand[id]));
      if (perLineCost) {
        const costs = typeof source.outsideCost === "object" && source.outsideCost !== null ? source.outsideCost : {};
        row.push(...lineIds.map((id) => costs[id]));
      }
      if (perLineShare) {
        const shares = typeof source.urgentShare === "object" ? source.urgentShare : {};
        row.push(...lineIds.map((id) => shares[id]));
      }
      return row;
    }),
  );

  files[CSV_FILE_NAMES.sites] = toCsv(
    ["id", "name", "lat", "lon", "sector"],
    scenario.providers.map((provider) => [provider.id, provider.name, provider.lat, provider.lon, provider.sector]),
  );

  const capacityRows: Row[] = [];
  for (const provider of scenario.providers) {
    for (const [lineId, siteLine] of Object.entries(provider.lines)) {
      capacityRows.push([provider.id, lineId, siteLine.teams, siteLine.ratePerTeam, siteLine.serviceCv, siteLine.minWeekly, siteLine.maxWeekly]);
    }
  }
  files[CSV_FILE_NAMES.capacities] = toCsv(["site", "line", "teams", "ratePerTeam", "serviceCv", "minWeekly", "maxWeekly"], capacityRows);

  if (scenario.travelKm && Object.keys(scenario.travelKm).length > 0) {
    const kmRows: Row[] = [];
    for (const [sourceId, row] of Object.entries(scenario.travelKm)) {
      for (const [siteId, km] of Object.entries(row)) kmRows.push([sourceId, siteId, km]);
    }
    files[CSV_FILE_NAMES.travelKm] = toCsv(["source", "site", "km"], kmRows);
  }
  return files;
}

/** What the CSV form cannot carry; the export page says so and points to the JSON export. */
export function csvOmissions(scenario: Scenario): string[] {
  const omitted: string[] = [];
  if (scenario.periods?.length) omitted.push(`${scenario.periods.length} period${scenario.periods.length === 1 ? "" : "s"}`);
  const staged = scenario.providers.flatMap((provider) => Object.entries(provider.lines).filter(([, line]) => line.stages).map(([lineId]) => `${provider.id}/${lineId}`));
  if (staged.length > 0) omitted.push(`pathway stages at ${staged.join(", ")}`);
  return omitted;
}

export interface ResultExportContext {
  scenarioName: string;
  dataDate?: string | null;
  kmPerWeek: number;
  circuity: number;
  runLabel?: string;
  ranAt?: string;
}

function preamble(context: ResultExportContext): string {
  const lines = [
    `# Equilibra results: ${context.scenarioName}${context.runLabel ? ` (${context.runLabel})` : ""}`,
    `# Data date: ${context.dataDate ?? "not stated"}${context.ranAt ? `; run at ${context.ranAt}` : ""}`,
    `# Assumptions: ${context.kmPerWeek} km of travel per week of waiting; road km = straight-line km x ${context.circuity} unless a km matrix was uploaded`,
    ...PLANNING_CAUTIONS.map((caution) => `# ${caution}`),
  ];
  return `${lines.join("\n")}\n`;
}

/** Results as two CSV files: per site (inflow, utilisation, wait) and per practice (balking, wait, km, flows). */
export function resultToCsvFiles(result: ResultDocument, context: ResultExportContext): Record<string, string> {
  const siteRows: Row[] = [];
  const practiceRows: Row[] = [];
  const siteIds = new Set<string>();
  for (const line of Object.values(result.lines)) {
    for (const rule of Object.values(line.rules)) for (const provider of rule?.providers ?? []) siteIds.add(provider.id);
  }
  const sites = [...siteIds];
  for (const [lineId, line] of Object.entries(result.lines)) {
    for (const [ruleKey, rule] of Object.entries(line.rules)) {
      if (!rule) continue;
      for (const provider of rule.providers) {
        siteRows.push([lineId, ruleKey, provider.id, provider.inflow, provider.utilisation, provider.meanWaitWeeks, provider.shareWithinStandard, provider.utilisation === null ? "overloaded" : provider.utilisation >= 0.85 ? "at or above 85%" : ""]);
      }
      for (const source of rule.sources) {
        practiceRows.push([lineId, ruleKey, source.id, source.balked, source.meanWaitWeeks, source.meanKm, ...sites.map((site) => source.flows[site])]);
      }
    }
  }
  const head = preamble(context);
  return {
    "results-sites.csv":
      head +
      toCsv(
        ["line", "rule", "site", "inflow (referrals/week)", "utilisation (share)", "mean wait (weeks)", "share within standard", "warning"],
        siteRows,
      ),
    "results-practices.csv":
      head +
      toCsv(
        ["line", "rule", "practice", "balked (referrals/week)", "mean wait (weeks)", "mean km", ...sites.map((site) => `to ${site} (referrals/week)`)],
        practiceRows,
      ),
  };
}
