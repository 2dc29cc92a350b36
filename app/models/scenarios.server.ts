/**
 * Scenarios: storing exchange-format files (PRODUCT.md, "The exchange format (v1)") as rows, and
 * writing them back out. Every function takes the organisation id and filters by it, so an id that
 * belongs to another tenant finds nothing (callers answer 404).
 *
 * Import validates with the engine's own `parseScenario` (the one definition of the format), then
 * writes every row in one transaction: a failure anywhere stores nothing. Export reproduces the
 * stored scenario in canonical form (defaults filled in, per-line maps): importing an export and
 * exporting again gives the identical document.
 */
import { and, asc, eq, isNull, sql } from "drizzle-orm";
import type { PgInsertValue, PgTable } from "drizzle-orm/pg-core";
import type { Database } from "~/db/client.server";
import {
  periods,
  scenarios,
  serviceLines,
  siteLines,
  sites,
  sourceLines,
  sources,
  travelKm,
  type ChoiceModel,
  type Pathway,
  type PlanSettings,
} from "~/db/schema";
import { ScenarioInputError } from "~/engine/problem";
import { parseScenario, SCENARIO_SCHEMA, type Scenario, type ScenarioSiteLine } from "~/engine/scenario";

/**
 * A scenario in the exchange format as Equilibra writes it. Two optional extensions beyond v1:
 * `description` (free text) and `dataDate` (the date the inputs describe, shown beside results).
 */
export type ScenarioDocument = Scenario & { description?: string; dataDate?: string };

export type ScenarioRecord = typeof scenarios.$inferSelect;

export interface ScenarioSummary {
  id: number;
  name: string;
  description: string;
  dataDate: string | null;
  parentId: number | null;
  archivedAt: Date | null;
  createdBy: number | null;
  createdAt: Date;
  updatedAt: Date;
  sourceCount: number;
  siteCount: number;
  lineCount: number;
}

export interface ImportOptions {
  /** Overrides the file's own `name`. */
  name?: string;
  /** Overrides the file's own `description`. */
  description?: string;
  createdBy?: number | null;
  /** The scenario this one derives from (a what-if); must belong to the same organisation. */
  parentId?: number | null;
}

/** Either the database or an open transaction: seeding imports several scenarios in one transaction. */
export type Queryable = Pick<Database, "select" | "insert" | "update" | "delete" | "execute" | "transaction">;

const NAME_MAX_LENGTH = 200;
const DESCRIPTION_MAX_LENGTH = 10_000;
/** PostgreSQL `integer`, the column type of population. */
const LARGEST_INTEGER_COLUMN = 2_147_483_647;
/** Rows per INSERT: far below PostgreSQL's 65,535 bound parameters for the widest table here. */
const INSERT_CHUNK = 1_000;

// ---------------------------------------------------------------------------------------------
// Import
// ---------------------------------------------------------------------------------------------

/**
 * Validates `input` (parsed JSON) and stores it as a new scenario of the organisation.
 * Throws `ScenarioInputError` (with every offending path) for bad input; nothing is written then,
 * and nothing stays written if a later row fails.
 */
export async function importScenario(db: Queryable, organisationId: number, input: unknown, options: ImportOptions = {}): Promise<number> {
  const scenario = parseScenario(input);
  const extras = readExtensions(input);
  const name = (options.name ?? scenario.name ?? "").trim() || "Untitled scenario";
  const description = options.description ?? extras.description ?? "";
  const issues = storageIssues(scenario, name, description);
  if (issues.length > 0) throw new ScenarioInputError(issues);

  return db.transaction(async (tx) => {
    if (options.parentId != null) {
      const parent = await tx
        .select({ id: scenarios.id })
        .from(scenarios)
        .where(and(eq(scenarios.id, options.parentId), eq(scenarios.organisationId, organisationId)));
      if (parent.length === 0) throw new ScenarioInputError([{ path: "parentId", message: `no scenario ${options.parentId} in this organisation` }]);
    }
    const [row] = await tx
      .insert(scenarios)
      .values({
        organisationId,
        name,
        description,
        dataDate: extras.dataDate ?? null,
        kmPerWeek: scenario.kmPerWeek,
        circuity: scenario.circuity,
        choiceModel: scenario.choiceModel as ChoiceModel,
        plan: scenario.plan ?? null,
        parentId: options.parentId ?? null,
        createdBy: options.createdBy ?? null,
      })
      .returning({ id: scenarios.id });
    const scenarioId = row.id;

    await insertChunked(
      tx,
      serviceLines,
      scenario.serviceLines.map((line, position) => ({ scenarioId, code: line.id, name: line.name ?? line.id, standardWeeks: line.standardWeeks, position })),
    );

    const sourceIds = new Map<string, number>();
    for (const chunk of chunks(scenario.sources)) {
      const inserted = await tx
        .insert(sources)
        .values(
          chunk.map((source) => ({
            scenarioId,
            code: source.id,
            name: source.name ?? source.id,
            lat: source.lat,
            lon: source.lon,
            deprivationDecile: source.deprivationDecile ?? null,
            population: source.population ?? null,
            outsideSpread: source.outsideSpread,
          })),
        )
        .returning({ id: sources.id, code: sources.code });
      for (const { id, code } of inserted) sourceIds.set(code, id);
    }
    await insertChunked(
      tx,
      sourceLines,
      scenario.sources.flatMap((source) => sourceLineRows(source, sourceIds.get(source.id) as number)),
    );

    const siteIds = new Map<string, number>();
    for (const chunk of chunks(scenario.providers)) {
      const inserted = await tx
        .insert(sites)
        .values(chunk.map((provider) => ({ scenarioId, code: provider.id, name: provider.name ?? provider.id, lat: provider.lat, lon: provider.lon, sector: provider.sector })))
        .returning({ id: sites.id, code: sites.code });
      for (const { id, code } of inserted) siteIds.set(code, id);
    }
    await insertChunked(
      tx,
      siteLines,
      scenario.providers.flatMap((provider) =>
        Object.entries(provider.lines).map(([lineCode, siteLine]) => siteLineRow(siteIds.get(provider.id) as number, lineCode, siteLine)),
      ),
    );

    await insertChunked(
      tx,
      periods,
      (scenario.periods ?? []).map((period, position) => ({
        scenarioId,
        code: period.id,
        label: period.label ?? period.id,
        weeks: period.weeks,
        demandFactor: typeof period.demandFactor === "number" ? period.demandFactor : 1,
        teamsFactor: typeof period.teamsFactor === "number" ? period.teamsFactor : 1,
        demandFactorByLine: typeof period.demandFactor === "number" ? null : period.demandFactor,
        teamsFactorByLine: typeof period.teamsFactor === "number" ? null : period.teamsFactor,
        position,
      })),
    );

    await insertChunked(
      tx,
      travelKm,
      Object.entries(scenario.travelKm ?? {}).flatMap(([sourceCode, row]) =>
        Object.entries(row).map(([siteCode, km]) => ({ scenarioId, sourceCode, siteCode, km })),
      ),
    );
    return scenarioId;
  });
}

/** `description` and `dataDate` are extensions the engine's schema does not know; read them from the raw input. */
function readExtensions(input: unknown): { description?: string; dataDate?: string } {
  if (input === null || typeof input !== "object") return {};
  const raw = input as Record<string, unknown>;
  const issues: { path: string; message: string }[] = [];
  const text = (key: "description" | "dataDate"): string | undefined => {
    const value = raw[key];
    if (value === undefined || value === null) return undefined;
    if (typeof value !== "string") {
      issues.push({ path: key, message: `must be a text string; got ${JSON.stringify(value)}` });
      return undefined;
    }
    return value;
  };
  const description = text("description");
  const dataDate = text("dataDate");
  if (issues.length > 0) throw new ScenarioInputError(issues);
  return { description, dataDate };
}

/** What the file format allows but the tables cannot hold. */
function storageIssues(scenario: Scenario, name: string, description: string): { path: string; message: string }[] {
  const issues: { path: string; message: string }[] = [];
  if (name.length > NAME_MAX_LENGTH) issues.push({ path: "name", message: `must be at most ${NAME_MAX_LENGTH} characters; got ${name.length}` });
  if (description.length > DESCRIPTION_MAX_LENGTH) {
    issues.push({ path: "description", message: `must be at most ${DESCRIPTION_MAX_LENGTH} characters; got ${description.length}` });
  }
  scenario.sources.forEach((source, i) => {
    const population = source.population;
    if (population != null && (!Number.isInteger(population) || population > LARGEST_INTEGER_COLUMN)) {
      issues.push({ path: `sources[${i}].population`, message: `must be a whole number of people up to ${LARGEST_INTEGER_COLUMN}; got ${population}` });
    }
  });
  return issues;
}

function sourceLineRows(source: Scenario["sources"][number], sourceId: number) {
  const { demand, outsideCost, urgentShare } = source;
  // A line has a row when the file says anything about it; a single number (all lines) says
  // nothing about lines the source never refers to.
  const lineCodes = new Set(Object.keys(demand));
  if (outsideCost && typeof outsideCost === "object") for (const code of Object.keys(outsideCost)) lineCodes.add(code);
  if (urgentShare && typeof urgentShare === "object") for (const code of Object.keys(urgentShare)) lineCodes.add(code);
  return [...lineCodes].map((lineCode) => ({
    sourceId,
    lineCode,
    demand: demand[lineCode] ?? 0,
    outsideCost: outsideCost == null ? null : typeof outsideCost === "number" ? outsideCost : (outsideCost[lineCode] ?? null),
    urgentShare: urgentShare == null ? null : typeof urgentShare === "number" ? urgentShare : (urgentShare[lineCode] ?? null),
  }));
}

function siteLineRow(siteId: number, lineCode: string, siteLine: ScenarioSiteLine) {
  const stages = siteLine.stages;
  let pathway: Pathway | null = null;
  let teams = siteLine.teams;
  let ratePerTeam = siteLine.ratePerTeam;
  if (stages) {
    const entry = siteLine.entry ?? stages[0].id;
    pathway = { stages, routing: siteLine.routing ?? [[0]], entry };
    // With a pathway the engine reads the entry stage; the line's own figures mirror it when absent.
    const entryStage = stages.find((stage) => stage.id === entry) ?? stages[0];
    teams ??= entryStage.teams;
    ratePerTeam ??= entryStage.ratePerTeam;
  }
  return {
    siteId,
    lineCode,
    teams: teams as number,
    ratePerTeam: ratePerTeam as number,
    serviceCv: siteLine.serviceCv,
    minWeekly: siteLine.minWeekly ?? null,
    maxWeekly: siteLine.maxWeekly ?? null,
    pathway,
  };
}

function* chunks<T>(rows: readonly T[]): Generator<T[]> {
  for (let start = 0; start < rows.length; start += INSERT_CHUNK) yield rows.slice(start, start + INSERT_CHUNK);
}

async function insertChunked<T extends PgTable>(tx: Queryable, table: T, rows: PgInsertValue<T>[]): Promise<void> {
  for (const chunk of chunks(rows)) await tx.insert(table).values(chunk);
}

// ---------------------------------------------------------------------------------------------
// Export
// ---------------------------------------------------------------------------------------------

/** The stored scenario as an exchange-format document, or null when the organisation has no such scenario. */
export async function exportScenario(db: Queryable, organisationId: number, scenarioId: number): Promise<ScenarioDocument | null> {
  const scenario = await getScenario(db, organisationId, scenarioId);
  if (!scenario) return null;

  const [lineRows, sourceRows, sourceLineRows, siteRows, siteLineRows, periodRows, travelRows] = await Promise.all([
    db.select().from(serviceLines).where(eq(serviceLines.scenarioId, scenarioId)).orderBy(asc(serviceLines.position)),
    db.select().from(sources).where(eq(sources.scenarioId, scenarioId)).orderBy(asc(sources.id)),
    db
      .select({ row: sourceLines })
      .from(sourceLines)
      .innerJoin(sources, eq(sources.id, sourceLines.sourceId))
      .where(eq(sources.scenarioId, scenarioId)),
    db.select().from(sites).where(eq(sites.scenarioId, scenarioId)).orderBy(asc(sites.id)),
    db
      .select({ row: siteLines })
      .from(siteLines)
      .innerJoin(sites, eq(sites.id, siteLines.siteId))
      .where(eq(sites.scenarioId, scenarioId)),
    db.select().from(periods).where(eq(periods.scenarioId, scenarioId)).orderBy(asc(periods.position)),
    db.select().from(travelKm).where(eq(travelKm.scenarioId, scenarioId)),
  ]);

  // Per-line maps follow the order of the service lines, so exported files are stable.
  const linePosition = new Map(lineRows.map((line) => [line.code, line.position]));
  const byLineOrder = <T extends { lineCode: string }>(rows: T[]) =>
    [...rows].sort((a, b) => (linePosition.get(a.lineCode) ?? 0) - (linePosition.get(b.lineCode) ?? 0));
  const linesOfSource = groupBy(
    sourceLineRows.map(({ row }) => row),
    (row) => row.sourceId,
  );
  const linesOfSite = groupBy(
    siteLineRows.map(({ row }) => row),
    (row) => row.siteId,
  );

  const document: ScenarioDocument = {
    schema: SCENARIO_SCHEMA,
    name: scenario.name,
    ...(scenario.description ? { description: scenario.description } : {}),
    ...(scenario.dataDate ? { dataDate: scenario.dataDate } : {}),
    kmPerWeek: scenario.kmPerWeek,
    circuity: scenario.circuity,
    choiceModel: scenario.choiceModel,
    serviceLines: lineRows.map((line) => ({ id: line.code, name: line.name, standardWeeks: line.standardWeeks })),
    sources: sourceRows.map((source) => {
      const rows = byLineOrder(linesOfSource.get(source.id) ?? []);
      const outside = rows.filter((row) => row.outsideCost !== null);
      const urgent = rows.filter((row) => row.urgentShare !== null);
      return {
        id: source.code,
        name: source.name,
        lat: source.lat,
        lon: source.lon,
        ...(source.population !== null ? { population: source.population } : {}),
        ...(source.deprivationDecile !== null ? { deprivationDecile: source.deprivationDecile } : {}),
        demand: Object.fromEntries(rows.map((row) => [row.lineCode, row.demand])),
        ...(urgent.length > 0 ? { urgentShare: Object.fromEntries(urgent.map((row) => [row.lineCode, row.urgentShare as number])) } : {}),
        ...(outside.length > 0 ? { outsideCost: Object.fromEntries(outside.map((row) => [row.lineCode, row.outsideCost as number])) } : {}),
        outsideSpread: source.outsideSpread,
      };
    }),
    providers: siteRows.map((site) => ({
      id: site.code,
      name: site.name,
      lat: site.lat,
      lon: site.lon,
      sector: site.sector,
      lines: Object.fromEntries(
        byLineOrder(linesOfSite.get(site.id) ?? []).map((row) => [
          row.lineCode,
          {
            teams: row.teams,
            ratePerTeam: row.ratePerTeam,
            serviceCv: row.serviceCv,
            ...(row.minWeekly !== null ? { minWeekly: row.minWeekly } : {}),
            ...(row.maxWeekly !== null ? { maxWeekly: row.maxWeekly } : {}),
            ...(row.pathway ? { stages: row.pathway.stages.map((stage) => ({ ...stage, serviceCv: stage.serviceCv ?? 1 })), routing: row.pathway.routing, entry: row.pathway.entry } : {}),
          },
        ]),
      ),
    })),
  };
  if (travelRows.length > 0) {
    const sourceOrder = new Map(sourceRows.map((source, index) => [source.code, index]));
    const siteOrder = new Map(siteRows.map((site, index) => [site.code, index]));
    const sorted = [...travelRows].sort(
      (a, b) => (sourceOrder.get(a.sourceCode) ?? 0) - (sourceOrder.get(b.sourceCode) ?? 0) || (siteOrder.get(a.siteCode) ?? 0) - (siteOrder.get(b.siteCode) ?? 0),
    );
    const matrix: Record<string, Record<string, number>> = {};
    for (const row of sorted) (matrix[row.sourceCode] ??= {})[row.siteCode] = row.km;
    document.travelKm = matrix;
  }
  if (periodRows.length > 0) {
    document.periods = periodRows.map((period) => ({
      id: period.code,
      label: period.label,
      weeks: period.weeks,
      demandFactor: period.demandFactorByLine ?? period.demandFactor,
      teamsFactor: period.teamsFactorByLine ?? period.teamsFactor,
    }));
  }
  if (scenario.plan) document.plan = scenario.plan as PlanSettings;
  return document;
}

function groupBy<T, K>(rows: T[], key: (row: T) => K): Map<K, T[]> {
  const groups = new Map<K, T[]>();
  for (const row of rows) {
    const k = key(row);
    const group = groups.get(k);
    if (group) group.push(row);
    else groups.set(k, [row]);
  }
  return groups;
}

// ---------------------------------------------------------------------------------------------
// Reading and managing
// ---------------------------------------------------------------------------------------------

/** The organisation's scenarios with their sizes: live ones first (oldest first), archived ones only when asked. */
export async function listScenarios(db: Queryable, organisationId: number, options: { includeArchived?: boolean } = {}): Promise<ScenarioSummary[]> {
  const where = options.includeArchived
    ? eq(scenarios.organisationId, organisationId)
    : and(eq(scenarios.organisationId, organisationId), isNull(scenarios.archivedAt));
  return db
    .select({
      id: scenarios.id,
      name: scenarios.name,
      description: scenarios.description,
      dataDate: scenarios.dataDate,
      parentId: scenarios.parentId,
      archivedAt: scenarios.archivedAt,
      createdBy: scenarios.createdBy,
      createdAt: scenarios.createdAt,
      updatedAt: scenarios.updatedAt,
      // Spelled out: drizzle leaves columns unqualified inside a select's SQL, which would let the
      // subqueries' "id" bind to the inner table instead of the scenario.
      sourceCount: sql<number>`(select count(*)::int from sources where sources.scenario_id = scenarios.id)`,
      siteCount: sql<number>`(select count(*)::int from sites where sites.scenario_id = scenarios.id)`,
      lineCount: sql<number>`(select count(*)::int from service_lines where service_lines.scenario_id = scenarios.id)`,
    })
    .from(scenarios)
    .where(where)
    .orderBy(sql`${scenarios.archivedAt} is not null`, asc(scenarios.id));
}

/** The scenario's own row, or null when it does not exist in this organisation (answer 404). */
export async function getScenario(db: Queryable, organisationId: number, scenarioId: number): Promise<ScenarioRecord | null> {
  if (!Number.isSafeInteger(scenarioId)) return null;
  const [row] = await db
    .select()
    .from(scenarios)
    .where(and(eq(scenarios.id, scenarioId), eq(scenarios.organisationId, organisationId)));
  return row ?? null;
}

/** Copies a scenario (a what-if starting point); the copy records its parent. Null when not found. */
export async function duplicateScenario(
  db: Queryable,
  organisationId: number,
  scenarioId: number,
  options: { name?: string; createdBy?: number | null } = {},
): Promise<number | null> {
  return db.transaction(async (tx) => {
    const document = await exportScenario(tx, organisationId, scenarioId);
    if (!document) return null;
    return importScenario(tx, organisationId, document, {
      name: options.name ?? `${document.name} (copy)`.slice(0, NAME_MAX_LENGTH),
      createdBy: options.createdBy,
      parentId: scenarioId,
    });
  });
}

/** Renames a scenario; false when it is not in this organisation. */
export async function renameScenario(db: Queryable, organisationId: number, scenarioId: number, name: string): Promise<boolean> {
  const trimmed = name.trim();
  if (trimmed === "") throw new ScenarioInputError([{ path: "name", message: "must not be empty" }]);
  if (trimmed.length > NAME_MAX_LENGTH) throw new ScenarioInputError([{ path: "name", message: `must be at most ${NAME_MAX_LENGTH} characters; got ${trimmed.length}` }]);
  const updated = await db
    .update(scenarios)
    .set({ name: trimmed, updatedAt: new Date() })
    .where(and(eq(scenarios.id, scenarioId), eq(scenarios.organisationId, organisationId)))
    .returning({ id: scenarios.id });
  return updated.length > 0;
}

/** Archives (or, with `archived: false`, restores) a scenario; false when it is not in this organisation. */
export async function archiveScenario(db: Queryable, organisationId: number, scenarioId: number, archived = true): Promise<boolean> {
  const updated = await db
    .update(scenarios)
    .set({ archivedAt: archived ? new Date() : null, updatedAt: new Date() })
    .where(and(eq(scenarios.id, scenarioId), eq(scenarios.organisationId, organisationId)))
    .returning({ id: scenarios.id });
  return updated.length > 0;
}
