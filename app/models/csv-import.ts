/**
 * CSV import: practices, sites, capacities, an optional km matrix and optional service lines, turned
 * into one exchange-format scenario (`equilibra/scenario@1`) or a list of every row error.
 *
 * Pure (no database, no React): the browser runs it for the import preview and the server runs it
 * again before storing, so what the preview shows is exactly what the server accepts.
 *
 * File layouts (header names follow the exchange format's field names):
 * - practices.csv   id, name, lat, lon, deprivationDecile, population, outsideSpread,
 *                   outsideCost (all lines) or outsideCost.<line>, urgentShare or urgentShare.<line>,
 *                   demand.<line> (referrals/week) — one `demand.<line>` column per service line.
 * - sites.csv       id, name, lat, lon, sector (public | independent)
 * - capacities.csv  site, line, teams, ratePerTeam, serviceCv, minWeekly, maxWeekly
 * - travel-km.csv   optional: a matrix (first column `source`, one column per site id) or a long
 *                   list with columns source, site, km
 * - service-lines.csv optional: id, name, standardWeeks; otherwise lines come from the scenario
 *                   being replaced, or from the demand columns and capacity rows (standard 18 weeks).
 * Pathway stages and periods have no CSV form: they travel in the JSON exchange format. Importing
 * CSV into an existing scenario keeps its periods, and keeps the pathway of every site and line
 * that the new capacities still list (the stages are not in the file, so nothing replaces them).
 *
 * Line numbers are file lines: the header is line 1, so data row `index` sits on line index + 2.
 */
import Papa from "papaparse";
import { z } from "zod";
import { parseScenario, SCENARIO_SCHEMA, type Scenario } from "~/engine/scenario";
import { ScenarioInputError } from "~/engine/problem";

export const CSV_FILE_KINDS = ["practices", "sites", "capacities", "travelKm", "serviceLines"] as const;
export type CsvFileKind = (typeof CSV_FILE_KINDS)[number];

/** The file name each kind is reported and exported under. */
export const CSV_FILE_NAMES: Record<CsvFileKind, string> = {
  practices: "practices.csv",
  sites: "sites.csv",
  capacities: "capacities.csv",
  travelKm: "travel-km.csv",
  serviceLines: "service-lines.csv",
};

/** Largest CSV file accepted: a region of a few hundred practices and sites is far below it. */
export const MAX_CSV_BYTES = 2 * 1024 * 1024;
/** Largest number of data rows in one file; a km matrix of 2,000 practices × 100 sites fits. */
export const MAX_CSV_ROWS = 200_000;

export interface CsvRowError {
  /** The file name, e.g. "practices.csv"; "scenario" for a problem no single file owns. */
  file: string;
  /** The file line (header = 1, first data row = 2); null when the problem is the whole file. */
  line: number | null;
  /** The column, or the exchange-format path when no column applies; "" for the whole row or file. */
  field: string;
  message: string;
}

export type CsvFiles = Partial<Record<CsvFileKind, string>>;

/** The scenario-wide settings a CSV import keeps from the scenario it replaces (or the defaults). */
export type CsvImportBase = Partial<
  Pick<Scenario, "name" | "kmPerWeek" | "circuity" | "choiceModel" | "periods" | "plan" | "serviceLines" | "providers">
>;

export interface CsvPreview {
  /** Rows read per file, for the preview's summary. */
  rowCounts: Partial<Record<CsvFileKind, number>>;
  errors: CsvRowError[];
  /** Present only when there are no errors at all. */
  scenario?: Scenario;
}

function byteLength(text: string): number {
  return new TextEncoder().encode(text).length;
}

function megabytes(bytes: number): string {
  return `${(bytes / (1024 * 1024)).toFixed(1)} MB`;
}

// ---------------------------------------------------------------------------------------------
// Cells
// ---------------------------------------------------------------------------------------------

type Cell = string | undefined;

function quoted(text: string): string {
  return JSON.stringify(text.length > 40 ? `${text.slice(0, 37)}...` : text);
}

/** A numeric cell: empty → undefined (or an error when required); anything not a plain finite number → an error. */
function numberCell(expectation: string, ok: (value: number) => boolean = () => true) {
  return z.string().optional().transform((raw, ctx): number | undefined => {
    const text = (raw ?? "").trim();
    if (text === "") return undefined;
    // Number("") and Number(" ") are 0 and Number("0x1f") is 31: accept only decimal notation.
    const value = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text) ? Number(text) : Number.NaN;
    if (!Number.isFinite(value) || !ok(value)) {
      ctx.addIssue({ code: "custom", message: `must be ${expectation}; got ${quoted(text)}` });
      return z.NEVER;
    }
    return value;
  });
}

function required<T>(schema: z.ZodType<T | undefined, Cell>, expectation: string) {
  return schema.transform((value, ctx): T => {
    if (value === undefined) {
      ctx.addIssue({ code: "custom", message: `is required: ${expectation}` });
      return z.NEVER;
    }
    return value;
  });
}

const idCell = z
  .string()
  .optional()
  .transform((raw, ctx): string => {
    const text = (raw ?? "").trim();
    if (text === "") {
      ctx.addIssue({ code: "custom", message: "is required: a non-empty id" });
      return z.NEVER;
    }
    return text;
  });

const textCell = z
  .string()
  .optional()
  .transform((raw) => {
    const text = (raw ?? "").trim();
    return text === "" ? undefined : text;
  });

const latitudeCell = required(numberCell("a latitude in degrees between -90 and 90", (v) => v >= -90 && v <= 90), "a latitude in degrees");
const longitudeCell = required(numberCell("a longitude in degrees between -180 and 180", (v) => v >= -180 && v <= 180), "a longitude in degrees");
const demandCell = numberCell("a number ≥ 0 (referrals/week)", (v) => v >= 0);
const outsideCostCell = numberCell("a number > 0 (weeks-equivalent), or empty for no outside option", (v) => v > 0);
const shareCell = numberCell("a share between 0 and 1", (v) => v >= 0 && v <= 1);

// ---------------------------------------------------------------------------------------------
// Reading one file
// ---------------------------------------------------------------------------------------------

interface ReadFile {
  header: string[];
  rows: Record<string, string>[];
}

function readCsv(kind: CsvFileKind, text: string, errors: CsvRowError[]): ReadFile | undefined {
  const file = CSV_FILE_NAMES[kind];
  const bytes = byteLength(text);
  if (bytes > MAX_CSV_BYTES) {
    errors.push({
      file,
      line: null,
      field: "",
      message: `${file} is ${megabytes(bytes)}; the limit is ${megabytes(MAX_CSV_BYTES)} per file. Split the region or remove unused columns.`,
    });
    return undefined;
  }
  const parsed = Papa.parse<Record<string, string>>(text.replace(/^\uFEFF/, ""), {
    header: true,
    skipEmptyLines: "greedy",
    transformHeader: (name) => name.trim(),
  });
  for (const error of parsed.errors) {
    // Papaparse counts data rows from 0; a row that cannot be split has no usable fields.
    errors.push({ file, line: error.row === undefined ? null : error.row + 2, field: "", message: error.message });
  }
  const header = (parsed.meta.fields ?? []).filter((name) => name !== "");
  if (header.length === 0) {
    errors.push({ file, line: 1, field: "", message: `${file} has no header row` });
    return undefined;
  }
  if (parsed.data.length > MAX_CSV_ROWS) {
    errors.push({ file, line: null, field: "", message: `${file} has ${parsed.data.length} rows; the limit is ${MAX_CSV_ROWS}.` });
    return undefined;
  }
  const seen = new Set<string>();
  for (const name of header) {
    if (seen.has(name)) errors.push({ file, line: 1, field: name, message: `column "${name}" appears twice` });
    seen.add(name);
  }
  return { header, rows: parsed.data };
}

function requireColumns(kind: CsvFileKind, read: ReadFile, columns: string[], errors: CsvRowError[]): boolean {
  const missing = columns.filter((column) => !read.header.includes(column));
  for (const column of missing) {
    errors.push({ file: CSV_FILE_NAMES[kind], line: 1, field: column, message: `the header has no "${column}" column (found: ${read.header.join(", ")})` });
  }
  return missing.length === 0;
}

/** Validates each row with `schema`; every issue becomes an error on its file line and column. */
function validateRows<T>(kind: CsvFileKind, read: ReadFile, schema: z.ZodType<T>, errors: CsvRowError[]): Array<{ index: number; value: T }> {
  const valid: Array<{ index: number; value: T }> = [];
  read.rows.forEach((row, index) => {
    const parsed = schema.safeParse(row);
    if (parsed.success) valid.push({ index, value: parsed.data });
    else {
      for (const issue of parsed.error.issues) {
        errors.push({ file: CSV_FILE_NAMES[kind], line: index + 2, field: issue.path.map(String).join("."), message: issue.message });
      }
    }
  });
  return valid;
}

function checkDuplicates(kind: CsvFileKind, keyed: Array<{ index: number; key: string }>, field: string, what: string, errors: CsvRowError[]) {
  const first = new Map<string, number>();
  for (const { index, key } of keyed) {
    const earlier = first.get(key);
    if (earlier === undefined) first.set(key, index);
    else errors.push({ file: CSV_FILE_NAMES[kind], line: index + 2, field, message: `duplicate ${what} "${key}" (also on line ${earlier + 2})` });
  }
}

// ---------------------------------------------------------------------------------------------
// The files
// ---------------------------------------------------------------------------------------------

/** Columns of the form `demand.ortho`: the line ids they name, in header order. */
function perLineColumns(header: string[], prefix: string): string[] {
  return header.filter((name) => name.startsWith(`${prefix}.`)).map((name) => name.slice(prefix.length + 1));
}

const PRACTICE_FIXED_COLUMNS = ["id", "name", "lat", "lon", "deprivationDecile", "population", "outsideSpread", "outsideCost", "urgentShare"];

function practiceRowSchema(header: string[]) {
  const shape: Record<string, z.ZodType> = {
    id: idCell,
    name: textCell,
    lat: latitudeCell,
    lon: longitudeCell,
    deprivationDecile: numberCell("a whole number from 1 (most deprived) to 10", (v) => Number.isInteger(v) && v >= 1 && v <= 10),
    population: numberCell("a number of people ≥ 0", (v) => v >= 0),
    outsideSpread: numberCell("a spread in [0, 1)", (v) => v >= 0 && v < 1),
    outsideCost: outsideCostCell,
    urgentShare: shareCell,
  };
  for (const line of perLineColumns(header, "demand")) shape[`demand.${line}`] = demandCell;
  for (const line of perLineColumns(header, "outsideCost")) shape[`outsideCost.${line}`] = outsideCostCell;
  for (const line of perLineColumns(header, "urgentShare")) shape[`urgentShare.${line}`] = shareCell;
  return z.object(shape).superRefine((row, ctx) => {
    const perLineCost = perLineColumns(header, "outsideCost").some((line) => row[`outsideCost.${line}`] !== undefined);
    if (row.outsideCost !== undefined && perLineCost) {
      ctx.addIssue({ code: "custom", path: ["outsideCost"], message: "give either outsideCost (all lines) or outsideCost.<line> columns in one row, not both" });
    }
    const perLineShare = perLineColumns(header, "urgentShare").some((line) => row[`urgentShare.${line}`] !== undefined);
    if (row.urgentShare !== undefined && perLineShare) {
      ctx.addIssue({ code: "custom", path: ["urgentShare"], message: "give either urgentShare (all lines) or urgentShare.<line> columns in one row, not both" });
    }
  });
}

function readPractices(read: ReadFile, errors: CsvRowError[]): Scenario["sources"] {
  const unknown = read.header.filter(
    (name) => !PRACTICE_FIXED_COLUMNS.includes(name) && !/^(demand|outsideCost|urgentShare)\.[^.]+$/.test(name),
  );
  for (const name of unknown) {
    errors.push({
      file: CSV_FILE_NAMES.practices,
      line: 1,
      field: name,
      message: `unknown column "${name}": expected ${PRACTICE_FIXED_COLUMNS.join(", ")} or demand.<line>, outsideCost.<line>, urgentShare.<line>`,
    });
  }
  if (!requireColumns("practices", read, ["id", "lat", "lon"], errors)) return [];
  if (perLineColumns(read.header, "demand").length === 0) {
    errors.push({ file: CSV_FILE_NAMES.practices, line: 1, field: "demand.<line>", message: "the header has no demand column: add one demand.<line> column per service line, e.g. demand.ortho" });
    return [];
  }
  const rows = validateRows("practices", read, practiceRowSchema(read.header), errors) as Array<{ index: number; value: Record<string, unknown> }>;
  checkDuplicates("practices", rows.map(({ index, value }) => ({ index, key: String(value.id) })), "id", "practice id", errors);
  return rows.map(({ value }) => {
    const perLine = (prefix: string) => {
      const map: Record<string, number> = {};
      for (const line of perLineColumns(read.header, prefix)) {
        const cell = value[`${prefix}.${line}`];
        if (typeof cell === "number") map[line] = cell;
      }
      return map;
    };
    const source: Scenario["sources"][number] = {
      id: value.id as string,
      lat: value.lat as number,
      lon: value.lon as number,
      demand: perLine("demand"),
      outsideSpread: (value.outsideSpread as number | undefined) ?? 0,
    };
    if (value.name !== undefined) source.name = value.name as string;
    if (typeof value.outsideCost === "number") source.outsideCost = value.outsideCost;
    else if (perLineColumns(read.header, "outsideCost").length > 0) {
      const costs = perLine("outsideCost");
      if (Object.keys(costs).length > 0) source.outsideCost = costs;
    }
    if (typeof value.urgentShare === "number") source.urgentShare = value.urgentShare;
    else if (perLineColumns(read.header, "urgentShare").length > 0) {
      const shares = perLine("urgentShare");
      if (Object.keys(shares).length > 0) source.urgentShare = shares;
    }
    if (value.deprivationDecile !== undefined) source.deprivationDecile = value.deprivationDecile as number;
    if (value.population !== undefined) source.population = value.population as number;
    return source;
  });
}

const siteRowSchema = z.object({
  id: idCell,
  name: textCell,
  lat: latitudeCell,
  lon: longitudeCell,
  sector: z
    .string()
    .optional()
    .transform((raw, ctx): "public" | "independent" => {
      const text = (raw ?? "").trim().toLowerCase();
      if (text === "") return "public";
      if (text === "public" || text === "independent") return text;
      ctx.addIssue({ code: "custom", message: `must be "public" or "independent"; got ${quoted(raw ?? "")}` });
      return z.NEVER;
    }),
});

function readSites(read: ReadFile, errors: CsvRowError[]): Scenario["providers"] {
  if (!requireColumns("sites", read, ["id", "lat", "lon"], errors)) return [];
  const rows = validateRows("sites", read, siteRowSchema, errors);
  checkDuplicates("sites", rows.map(({ index, value }) => ({ index, key: value.id })), "id", "site id", errors);
  return rows.map(({ value }) => {
    const provider: Scenario["providers"][number] = { id: value.id, lat: value.lat, lon: value.lon, sector: value.sector, lines: {} };
    if (value.name !== undefined) provider.name = value.name;
    return provider;
  });
}

const capacityRowSchema = z
  .object({
    site: idCell,
    line: idCell,
    teams: required(numberCell("a whole number of teams ≥ 1", (v) => Number.isInteger(v) && v >= 1), "a whole number of teams ≥ 1"),
    ratePerTeam: required(numberCell("a number > 0 (patients per team per week)", (v) => v > 0), "a number > 0 (patients per team per week)"),
    serviceCv: numberCell("a coefficient of variation ≥ 0 (1 = exponential service times)", (v) => v >= 0),
    minWeekly: numberCell("a number ≥ 0 (referrals/week)", (v) => v >= 0),
    maxWeekly: numberCell("a number ≥ 0 (referrals/week)", (v) => v >= 0),
  })
  .superRefine((row, ctx) => {
    if (row.minWeekly !== undefined && row.maxWeekly !== undefined && row.minWeekly > row.maxWeekly) {
      ctx.addIssue({ code: "custom", path: ["minWeekly"], message: `exceeds maxWeekly (${row.maxWeekly})` });
    }
  });

/** Where each (site, line) capacity came from, to report engine issues on the right file line. */
type CapacityLines = Map<string, number>;

function readCapacities(read: ReadFile, providers: Scenario["providers"], errors: CsvRowError[]): CapacityLines {
  const origin: CapacityLines = new Map();
  if (!requireColumns("capacities", read, ["site", "line", "teams", "ratePerTeam"], errors)) return origin;
  const rows = validateRows("capacities", read, capacityRowSchema, errors);
  checkDuplicates("capacities", rows.map(({ index, value }) => ({ index, key: `${value.site} / ${value.line}` })), "line", "site and line", errors);
  const byId = new Map(providers.map((provider) => [provider.id, provider]));
  for (const { index, value } of rows) {
    const provider = byId.get(value.site);
    if (!provider) {
      errors.push({ file: CSV_FILE_NAMES.capacities, line: index + 2, field: "site", message: `names no site in sites.csv; got ${quoted(value.site)}` });
      continue;
    }
    if (provider.lines[value.line]) continue; // duplicate, reported above
    const siteLine: Scenario["providers"][number]["lines"][string] = { teams: value.teams, ratePerTeam: value.ratePerTeam, serviceCv: value.serviceCv ?? 1 };
    if (value.minWeekly !== undefined) siteLine.minWeekly = value.minWeekly;
    if (value.maxWeekly !== undefined) siteLine.maxWeekly = value.maxWeekly;
    provider.lines[value.line] = siteLine;
    origin.set(`${value.site}\u0000${value.line}`, index);
  }
  return origin;
}

const kmCell = required(numberCell("a number ≥ 0 (road km)", (v) => v >= 0), "a number ≥ 0 (road km)");

function readTravelKm(read: ReadFile, errors: CsvRowError[]): { matrix: Record<string, Record<string, number>>; origin: Map<string, number> } {
  const matrix: Record<string, Record<string, number>> = {};
  const origin = new Map<string, number>();
  const file = CSV_FILE_NAMES.travelKm;
  const isLong = read.header.includes("site") && read.header.includes("km");
  if (isLong) {
    if (!requireColumns("travelKm", read, ["source", "site", "km"], errors)) return { matrix, origin };
    const rows = validateRows("travelKm", read, z.object({ source: idCell, site: idCell, km: kmCell }), errors);
    checkDuplicates("travelKm", rows.map(({ index, value }) => ({ index, key: `${value.source} → ${value.site}` })), "site", "pair", errors);
    for (const { index, value } of rows) {
      (matrix[value.source] ??= {})[value.site] = value.km;
      origin.set(value.source, origin.get(value.source) ?? index);
    }
    return { matrix, origin };
  }
  if (!requireColumns("travelKm", read, ["source"], errors)) return { matrix, origin };
  const siteColumns = read.header.filter((name) => name !== "source");
  const shape: Record<string, z.ZodType> = { source: idCell };
  // In a matrix an empty cell means "no uploaded distance": that pair falls back to straight-line km.
  for (const site of siteColumns) shape[site] = numberCell("a number ≥ 0 (road km)", (v) => v >= 0);
  const rows = validateRows("travelKm", read, z.object(shape), errors) as Array<{ index: number; value: Record<string, unknown> }>;
  checkDuplicates("travelKm", rows.map(({ index, value }) => ({ index, key: String(value.source) })), "source", "source", errors);
  for (const { index, value } of rows) {
    const row: Record<string, number> = {};
    for (const site of siteColumns) if (typeof value[site] === "number") row[site] = value[site] as number;
    matrix[value.source as string] = row;
    origin.set(value.source as string, index);
  }
  return { matrix, origin };
}

const serviceLineRowSchema = z.object({
  id: idCell,
  name: textCell,
  standardWeeks: numberCell("a number > 0 (weeks)", (v) => v > 0),
});

function readServiceLines(read: ReadFile, errors: CsvRowError[]): Scenario["serviceLines"] {
  if (!requireColumns("serviceLines", read, ["id"], errors)) return [];
  const rows = validateRows("serviceLines", read, serviceLineRowSchema, errors);
  checkDuplicates("serviceLines", rows.map(({ index, value }) => ({ index, key: value.id })), "id", "service line id", errors);
  return rows.map(({ value }) => {
    const line: Scenario["serviceLines"][number] = { id: value.id, standardWeeks: value.standardWeeks ?? 18 };
    if (value.name !== undefined) line.name = value.name;
    return line;
  });
}

// ---------------------------------------------------------------------------------------------
// The whole import
// ---------------------------------------------------------------------------------------------

/**
 * Reads the files into a scenario. Every problem in every file is collected (not just the first);
 * a scenario is returned only when there is none. `base` supplies the settings CSV files do not
 * carry (assumptions, periods, plan, and the service lines when no service-lines.csv is given).
 */
export function importCsvFiles(files: CsvFiles, base: CsvImportBase = {}): CsvPreview {
  const errors: CsvRowError[] = [];
  const rowCounts: CsvPreview["rowCounts"] = {};
  for (const kind of ["practices", "sites", "capacities"] as const) {
    if (files[kind] === undefined || files[kind].trim() === "") {
      errors.push({ file: CSV_FILE_NAMES[kind], line: null, field: "", message: `${CSV_FILE_NAMES[kind]} is required` });
    }
  }
  const read: Partial<Record<CsvFileKind, ReadFile>> = {};
  for (const kind of CSV_FILE_KINDS) {
    const text = files[kind];
    if (text === undefined || text.trim() === "") continue;
    const result = readCsv(kind, text, errors);
    if (result) {
      read[kind] = result;
      rowCounts[kind] = result.rows.length;
    }
  }

  const sources = read.practices ? readPractices(read.practices, errors) : [];
  const providers = read.sites ? readSites(read.sites, errors) : [];
  const capacityOrigin = read.capacities ? readCapacities(read.capacities, providers, errors) : new Map<string, number>();
  const travel = read.travelKm ? readTravelKm(read.travelKm, errors) : undefined;
  const serviceLines = read.serviceLines ? readServiceLines(read.serviceLines, errors) : inferServiceLines(base, sources, providers);

  if (errors.length > 0) return { rowCounts, errors };
  keepPathways(providers, base.providers ?? []);

  const candidate: Record<string, unknown> = {
    schema: SCENARIO_SCHEMA,
    ...(base.name !== undefined ? { name: base.name } : {}),
    kmPerWeek: base.kmPerWeek ?? 15,
    circuity: base.circuity ?? 1.3,
    choiceModel: base.choiceModel ?? { kind: "wardrop" },
    serviceLines,
    sources,
    providers,
    ...(travel ? { travelKm: travel.matrix } : {}),
    ...(base.periods ? { periods: base.periods } : {}),
    ...(base.plan ? { plan: base.plan } : {}),
  };
  try {
    return { rowCounts, errors, scenario: parseScenario(candidate) };
  } catch (error) {
    if (!(error instanceof ScenarioInputError)) throw error;
    const origins: IssueOrigins = {
      capacityOrigin,
      travelOrigin: travel?.origin ?? new Map(),
      providers,
      serviceLinesFromFile: Boolean(read.serviceLines),
    };
    return { rowCounts, errors: error.issues.map((issue) => locateIssue(issue, origins)) };
  }
}

/** Copies the pathway (stages, routing, entry) of each site line the scenario being replaced had. */
function keepPathways(providers: Scenario["providers"], previous: Scenario["providers"]): void {
  const before = new Map(previous.map((provider) => [provider.id, provider]));
  for (const provider of providers) {
    const old = before.get(provider.id);
    if (!old) continue;
    for (const [lineId, siteLine] of Object.entries(provider.lines)) {
      const oldLine = old.lines[lineId];
      if (!oldLine?.stages) continue;
      siteLine.stages = structuredClone(oldLine.stages);
      if (oldLine.routing) siteLine.routing = structuredClone(oldLine.routing);
      if (oldLine.entry) siteLine.entry = oldLine.entry;
    }
  }
}

/** Lines from the scenario being replaced; otherwise those named in the files, in order of appearance. */
function inferServiceLines(base: CsvImportBase, sources: Scenario["sources"], providers: Scenario["providers"]): Scenario["serviceLines"] {
  const known = new Map((base.serviceLines ?? []).map((line) => [line.id, line]));
  const ids: string[] = [...known.keys()];
  const add = (id: string) => {
    if (!ids.includes(id)) ids.push(id);
  };
  for (const source of sources) Object.keys(source.demand).forEach(add);
  for (const provider of providers) Object.keys(provider.lines).forEach(add);
  return ids.map((id) => known.get(id) ?? { id, standardWeeks: 18 });
}

interface IssueOrigins {
  capacityOrigin: CapacityLines;
  travelOrigin: Map<string, number>;
  providers: Scenario["providers"];
  serviceLinesFromFile: boolean;
}

/** Turns an engine issue (`sources[3].demand.ortho`) back into the file line a person must fix. */
function locateIssue(issue: { path: string; message: string }, origins: IssueOrigins): CsvRowError {
  const source = /^sources\[(\d+)\](?:\.(.+))?$/.exec(issue.path);
  if (source) return { file: CSV_FILE_NAMES.practices, line: Number(source[1]) + 2, field: source[2] ?? "", message: issue.message };
  const capacity = /^providers\[(\d+)\]\.lines\.([^.]+)(?:\.(.+))?$/.exec(issue.path);
  if (capacity) {
    const provider = origins.providers[Number(capacity[1])];
    const index = provider ? origins.capacityOrigin.get(`${provider.id}\u0000${capacity[2]}`) : undefined;
    if (index !== undefined) return { file: CSV_FILE_NAMES.capacities, line: index + 2, field: capacity[3] ?? "line", message: issue.message };
  }
  const provider = /^providers\[(\d+)\](?:\.(.+))?$/.exec(issue.path);
  if (provider) return { file: CSV_FILE_NAMES.sites, line: Number(provider[1]) + 2, field: provider[2] ?? "", message: issue.message };
  const travel = /^travelKm\.([^.]+)(?:\.(.+))?$/.exec(issue.path);
  if (travel && origins.travelOrigin.has(travel[1])) {
    return { file: CSV_FILE_NAMES.travelKm, line: (origins.travelOrigin.get(travel[1]) as number) + 2, field: travel[2] ?? "source", message: issue.message };
  }
  const line = /^serviceLines\[(\d+)\](?:\.(.+))?$/.exec(issue.path);
  if (line && origins.serviceLinesFromFile) {
    return { file: CSV_FILE_NAMES.serviceLines, line: Number(line[1]) + 2, field: line[2] ?? "", message: issue.message };
  }
  return { file: "scenario", line: null, field: issue.path, message: issue.message };
}
