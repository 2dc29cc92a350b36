/**
 * The exchange format (v1): the zod schema of a scenario file and `parseScenario`, which turns
 * untrusted JSON into a checked `Scenario` or throws a `ScenarioInputError` listing every
 * offending field path with its value. Field names follow PRODUCT.md ("The exchange format
 * (v1)") exactly; anything added here is an optional extension, never a rename.
 *
 * Two passes: the schema checks each field on its own (types, ranges, integers), then
 * `crossCheck` checks what needs the whole file (unknown or duplicate ids, lines nobody offers,
 * routing matrices against their stages). Nothing is half-accepted: any issue rejects the file.
 */
import {
  array,
  type core,
  custom,
  discriminatedUnion,
  enum as enumOf,
  literal,
  null as nullSchema,
  object,
  type output,
  record,
  string,
  union,
  type ZodType,
} from "zod";
import { ScenarioInputError } from "./problem";

/**
 * The schema builders used here, under their zod names. Imported by name so that the command
 * line's bundle leaves out the rest of zod — its 60-odd message locales above all, 0.6 MB that
 * every start parsed (~40 ms).
 */
const z = { array, custom, discriminatedUnion, enum: enumOf, literal, null: nullSchema, object, record, string, union };

export const SCENARIO_SCHEMA = "equilibra/scenario@1";

/**
 * A field that must be a finite number passing `ok`. One custom check per field keeps every
 * failure (missing, a string, NaN, out of range) under one pinned message that says what is
 * expected; the formatter appends the value actually found.
 */
function numberField(expectation: string, ok: (value: number) => boolean = () => true) {
  return z.custom<number>((value) => typeof value === "number" && Number.isFinite(value) && ok(value), {
    error: `must be ${expectation}`,
  });
}

const idField = z.custom<string>((value) => typeof value === "string" && value.trim().length > 0 && value === value.trim(), {
  error: "must be a non-empty id without surrounding spaces",
});
const textField = z.custom<string>((value) => typeof value === "string", { error: "must be a text string" });

const positive = (unit: string) => numberField(`a number > 0 (${unit})`, (v) => v > 0);
const latitude = numberField("a latitude in degrees between -90 and 90", (v) => v >= -90 && v <= 90);
const longitude = numberField("a longitude in degrees between -180 and 180", (v) => v >= -180 && v <= 180);
/** The Erlang recursion costs O(teams) per evaluation: the cap keeps an absurd file from stalling a solve. */
export const MAX_TEAMS = 10_000;
const teamsField = numberField(`a whole number of teams from 1 to ${MAX_TEAMS}`, (v) => Number.isInteger(v) && v >= 1 && v <= MAX_TEAMS);
const rateField = positive("patients per team per week");
const serviceCvField = numberField("a coefficient of variation ≥ 0 (1 = exponential service times)", (v) => v >= 0);
const demandValue = numberField("a number ≥ 0 (referrals/week)", (v) => v >= 0);
const outsideCostValue = positive("weeks-equivalent");
const shareValue = numberField("a share between 0 and 1", (v) => v >= 0 && v <= 1);

/** A map keyed by service-line id. */
function perLine<T extends ZodType>(value: T, what: string) {
  return z.record(z.string(), value, { error: `must be an object mapping service-line ids to ${what}` });
}

const serviceLineSchema = z.object(
  {
    id: idField,
    name: textField.optional(),
    standardWeeks: positive("weeks").default(18),
  },
  { error: "must be an object describing a service line" },
);

const sourceSchema = z.object(
  {
    id: idField,
    name: textField.optional(),
    lat: latitude,
    lon: longitude,
    demand: perLine(demandValue, "referrals/week"),
    /** A number (all lines), a map per line (a missing or null entry = no outside option), or absent/null. */
    outsideCost: z
      .union([outsideCostValue, perLine(outsideCostValue.nullable(), "outside costs"), z.null()], {
        error: "must be a number > 0 (weeks-equivalent), a map of such numbers per service line, or null",
      })
      .optional(),
    outsideSpread: numberField("a spread in [0, 1)", (v) => v >= 0 && v < 1).default(0),
    /** Extension: a single number applies to every line; PRODUCT.md's form is the map. */
    urgentShare: z
      .union([shareValue, perLine(shareValue, "shares between 0 and 1")], {
        error: "must be a share between 0 and 1 or a map of such shares per service line",
      })
      .optional(),
    deprivationDecile: numberField("a whole number from 1 (most deprived) to 10", (v) => Number.isInteger(v) && v >= 1 && v <= 10)
      .nullable()
      .optional(),
    population: numberField("a number of people ≥ 0", (v) => v >= 0).nullable().optional(),
  },
  { error: "must be an object describing a referral source" },
);

const stageSchema = z.object(
  {
    id: idField,
    teams: teamsField,
    ratePerTeam: rateField,
    serviceCv: serviceCvField.default(1),
  },
  { error: "must be an object describing a pathway stage" },
);

const probabilityRow = z.array(numberField("a probability between 0 and 1", (v) => v >= 0 && v <= 1), {
  error: "must be an array of probabilities",
});

const siteLineSchema = z.object(
  {
    /** Required unless `stages` describes the pathway (then the stages carry the teams). */
    teams: teamsField.optional(),
    ratePerTeam: rateField.optional(),
    serviceCv: serviceCvField.default(1),
    minWeekly: numberField("a number ≥ 0 (referrals/week)", (v) => v >= 0).nullable().optional(),
    maxWeekly: numberField("a number ≥ 0 (referrals/week)", (v) => v >= 0).nullable().optional(),
    stages: z.array(stageSchema, { error: "must be an array of stages" }).min(1, { error: "must list at least one stage" }).optional(),
    /** routing[k][l]: probability that a patient finishing stage k goes next to stage l; the rest leave. */
    routing: z.array(probabilityRow, { error: "must be a matrix (array of rows) of probabilities" }).optional(),
    /** The stage where referrals arrive; defaults to the first stage. */
    entry: idField.optional(),
  },
  { error: "must be an object with teams and ratePerTeam" },
);

const providerSchema = z.object(
  {
    id: idField,
    name: textField.optional(),
    lat: latitude,
    lon: longitude,
    sector: z.enum(["public", "independent"], { error: 'must be "public" or "independent"' }).default("public"),
    lines: perLine(siteLineSchema, "capacities"),
  },
  { error: "must be an object describing a provider site" },
);

const factorField = (expectation: string, ok: (v: number) => boolean) =>
  z.union([numberField(expectation, ok), perLine(numberField(expectation, ok), "factors")], {
    error: `must be ${expectation} or a map of such numbers per service line`,
  });

const periodSchema = z.object(
  {
    id: idField,
    label: textField.optional(),
    weeks: positive("weeks"),
    /** Multiplies every source's demand (a number, or per line; lines not named keep 1). */
    demandFactor: factorField("a factor ≥ 0", (v) => v >= 0).default(1),
    /** Multiplies every site's capacity (a number, or per line; lines not named keep 1). See build-problem.ts. */
    teamsFactor: factorField("a factor > 0", (v) => v > 0).default(1),
  },
  { error: "must be an object describing a period" },
);

const choiceModelSchema = z.discriminatedUnion(
  "kind",
  [z.object({ kind: z.literal("wardrop") }), z.object({ kind: z.literal("logit"), scale: positive("logit scale θ per week-equivalent") })],
  { error: 'must be { "kind": "wardrop" } or { "kind": "logit", "scale": θ > 0 }' },
);

export const scenarioSchema = z.object(
  {
    schema: z.custom<typeof SCENARIO_SCHEMA>((value) => value === SCENARIO_SCHEMA, { error: `must be "${SCENARIO_SCHEMA}"` }),
    name: textField.optional(),
    kmPerWeek: positive("km a patient would travel to wait one week less").default(15),
    circuity: numberField("a road-to-straight-line ratio ≥ 1", (v) => v >= 1).default(1.3),
    choiceModel: choiceModelSchema.default({ kind: "wardrop" }),
    serviceLines: z.array(serviceLineSchema, { error: "must be an array of service lines" }).min(1, { error: "must list at least one service line" }),
    sources: z.array(sourceSchema, { error: "must be an array of referral sources" }).min(1, { error: "must list at least one referral source" }),
    providers: z.array(providerSchema, { error: "must be an array of provider sites" }).min(1, { error: "must list at least one provider site" }),
    travelKm: z
      .record(z.string(), z.record(z.string(), numberField("a number ≥ 0 (road km)", (v) => v >= 0), { error: "must map provider ids to km" }), {
        error: "must map source ids to { providerId: km }",
      })
      .nullable()
      .optional(),
    periods: z.array(periodSchema, { error: "must be an array of periods" }).min(1, { error: "must list at least one period (or be left out)" }).optional(),
    plan: z
      .object(
        {
          maxUtilisation: numberField("a utilisation ceiling in (0, 1]", (v) => v > 0 && v <= 1).optional(),
          maxKm: positive("km").optional(),
        },
        { error: "must be an object with maxUtilisation and/or maxKm" },
      )
      .nullable()
      .optional(),
  },
  { error: "must be a scenario object" },
);

export type Scenario = output<typeof scenarioSchema>;
export type ScenarioSource = Scenario["sources"][number];
export type ScenarioProvider = Scenario["providers"][number];
export type ScenarioSiteLine = ScenarioProvider["lines"][string];
export type ScenarioPeriod = NonNullable<Scenario["periods"]>[number];

export interface ScenarioIssue {
  path: string;
  message: string;
}

/**
 * Validates untrusted input (parsed JSON or an object posted to a worker) against the exchange
 * format. Returns the scenario with defaults filled in, or throws `ScenarioInputError` with one
 * issue per offending field: `{ path: "sources[3].demand.ortho", message: "must be … ; got -2" }`.
 */
export function parseScenario(input: unknown): Scenario {
  const parsed = scenarioSchema.safeParse(input);
  if (!parsed.success) {
    throw new ScenarioInputError(dedupe(parsed.error.issues.flatMap((issue) => describeIssue(issue, [], input))));
  }
  const issues = crossCheck(parsed.data, input);
  if (issues.length > 0) throw new ScenarioInputError(issues);
  return parsed.data;
}

// ---------------------------------------------------------------------------------------------
// Turning zod issues into "path: message; got value"
// ---------------------------------------------------------------------------------------------

type PathKey = string | number | symbol;

/** `["sources", 3, "demand", "ortho"]` → `sources[3].demand.ortho`; keys that are not identifiers are quoted. */
export function formatPath(path: readonly PathKey[]): string {
  let text = "";
  for (const key of path) {
    if (typeof key === "number") text += `[${key}]`;
    else {
      const name = String(key);
      text += /^[A-Za-z_$][\w$-]*$/.test(name) ? (text ? `.${name}` : name) : `[${JSON.stringify(name)}]`;
    }
  }
  return text || "(the scenario)";
}

/** How a value found in the input is quoted in a message: short, and exact for numbers. */
export function describeValue(value: unknown): string {
  if (value === undefined) return "nothing (the field is missing)";
  if (typeof value === "number") return String(value);
  if (typeof value === "string") return JSON.stringify(value.length > 60 ? `${value.slice(0, 57)}...` : value);
  if (value === null) return "null";
  if (typeof value === "object") {
    if (Array.isArray(value) && JSON.stringify(value).length > 60) return `an array of ${value.length}`;
    const text = JSON.stringify(value);
    return text.length > 60 ? `${text.slice(0, 57)}...` : text;
  }
  return String(value);
}

function valueAt(root: unknown, path: readonly PathKey[]): unknown {
  let node: unknown = root;
  for (const key of path) {
    if (node === null || typeof node !== "object") return undefined;
    node = (node as Record<PathKey, unknown>)[key as string];
  }
  return node;
}

function describeIssue(issue: core.$ZodIssue, prefix: readonly PathKey[], input: unknown): ScenarioIssue[] {
  const path = [...prefix, ...issue.path];
  if (issue.code === "invalid_union") {
    // A union (e.g. outsideCost: number | map | null) fails in every branch; when one branch got
    // inside the value (a bad entry in a map), that entry is the precise complaint to report.
    const deeper = issue.errors.flat().filter((inner) => inner.path.length > 0);
    if (deeper.length > 0) return deeper.flatMap((inner) => describeIssue(inner, path, input));
  }
  if (issue.code === "invalid_key") {
    return [{ path: formatPath(path), message: `has an invalid key; ${issue.message}` }];
  }
  return [{ path: formatPath(path), message: `${issue.message}; got ${describeValue(valueAt(input, path))}` }];
}

function dedupe(issues: ScenarioIssue[]): ScenarioIssue[] {
  const seen = new Set<string>();
  return issues.filter((issue) => {
    const key = `${issue.path}\u0000${issue.message}`;
    if (seen.has(key)) return false;
    seen.add(key);
    return true;
  });
}

// ---------------------------------------------------------------------------------------------
// Checks that need the whole scenario
// ---------------------------------------------------------------------------------------------

/** Row sums of a routing matrix may exceed 1 by rounding in a spreadsheet export, no more. */
const ROUTING_ROW_TOLERANCE = 1e-9;

function crossCheck(scenario: Scenario, input: unknown): ScenarioIssue[] {
  const issues: ScenarioIssue[] = [];
  const add = (path: readonly PathKey[], message: string) =>
    issues.push({ path: formatPath(path), message: `${message}; got ${describeValue(valueAt(input, path))}` });

  const lineIds = new Set<string>();
  checkUnique(scenario.serviceLines, ["serviceLines"], "service line", add);
  for (const line of scenario.serviceLines) lineIds.add(line.id);
  const knownLines = [...lineIds].join(", ");
  const checkLineKeys = (map: Record<string, unknown> | null | undefined, path: PathKey[]) => {
    if (!map || typeof map !== "object") return;
    for (const key of Object.keys(map)) {
      if (!lineIds.has(key)) add([...path, key], `names an unknown service line "${key}" (known: ${knownLines})`);
    }
  };

  checkUnique(scenario.sources, ["sources"], "source", add);
  const demandByLine = new Map<string, number>();
  scenario.sources.forEach((source, i) => {
    checkLineKeys(source.demand, ["sources", i, "demand"]);
    if (typeof source.outsideCost === "object") checkLineKeys(source.outsideCost, ["sources", i, "outsideCost"]);
    if (typeof source.urgentShare === "object") checkLineKeys(source.urgentShare, ["sources", i, "urgentShare"]);
    for (const [lineId, demand] of Object.entries(source.demand)) demandByLine.set(lineId, (demandByLine.get(lineId) ?? 0) + demand);
  });

  checkUnique(scenario.providers, ["providers"], "provider", add);
  const offered = new Set<string>();
  scenario.providers.forEach((provider, j) => {
    checkLineKeys(provider.lines, ["providers", j, "lines"]);
    for (const [lineId, siteLine] of Object.entries(provider.lines)) {
      offered.add(lineId);
      checkSiteLine(siteLine, ["providers", j, "lines", lineId], add);
    }
  });

  scenario.serviceLines.forEach((line, s) => {
    const demand = demandByLine.get(line.id) ?? 0;
    if (demand > 0 && !offered.has(line.id)) {
      add(["serviceLines", s, "id"], `service line has ${round(demand)} referrals/week of demand but no provider offers it`);
    }
  });

  if (scenario.travelKm) {
    const sourceIds = new Set(scenario.sources.map((source) => source.id));
    const providerIds = new Set(scenario.providers.map((provider) => provider.id));
    for (const [sourceId, row] of Object.entries(scenario.travelKm)) {
      if (!sourceIds.has(sourceId)) add(["travelKm", sourceId], `names an unknown source "${sourceId}"`);
      for (const providerId of Object.keys(row)) {
        if (!providerIds.has(providerId)) add(["travelKm", sourceId, providerId], `names an unknown provider "${providerId}"`);
      }
    }
  }

  if (scenario.periods) {
    checkUnique(scenario.periods, ["periods"], "period", add);
    scenario.periods.forEach((period, k) => {
      if (typeof period.demandFactor === "object") checkLineKeys(period.demandFactor, ["periods", k, "demandFactor"]);
      if (typeof period.teamsFactor === "object") checkLineKeys(period.teamsFactor, ["periods", k, "teamsFactor"]);
    });
  }
  return issues;
}

function checkUnique(items: { id: string }[], at: PathKey[], what: string, add: (path: PathKey[], message: string) => void) {
  const first = new Map<string, number>();
  items.forEach((item, index) => {
    const earlier = first.get(item.id);
    if (earlier === undefined) first.set(item.id, index);
    else add([...at, index, "id"], `duplicate ${what} id (also at ${formatPath([...at, earlier])})`);
  });
}

function checkSiteLine(siteLine: ScenarioSiteLine, path: PathKey[], add: (path: PathKey[], message: string) => void) {
  const min = siteLine.minWeekly ?? null;
  const max = siteLine.maxWeekly ?? null;
  if (min !== null && max !== null && min > max) add([...path, "minWeekly"], `exceeds maxWeekly (${max})`);

  const stages = siteLine.stages;
  if (!stages) {
    if (siteLine.teams === undefined) add([...path, "teams"], `is required (a whole number of teams from 1 to ${MAX_TEAMS}) unless stages are given`);
    if (siteLine.ratePerTeam === undefined) add([...path, "ratePerTeam"], "is required (a number > 0, patients per team per week) unless stages are given");
    if (siteLine.routing !== undefined) add([...path, "routing"], "is given without stages");
    if (siteLine.entry !== undefined) add([...path, "entry"], "is given without stages");
    return;
  }

  checkUnique(stages, [...path, "stages"], "stage", add);
  const count = stages.length;
  const routing = siteLine.routing;
  if (routing === undefined) {
    if (count > 1) add([...path, "routing"], `is required: a ${count}×${count} matrix of probabilities between the ${count} stages`);
  } else {
    if (routing.length !== count) {
      add([...path, "routing"], `must have one row per stage (${count} rows for ${count} stages)`);
    } else {
      routing.forEach((row, k) => {
        if (row.length !== count) add([...path, "routing", k], `must have one entry per stage (${count})`);
        const sum = row.reduce((total, p) => total + p, 0);
        if (sum > 1 + ROUTING_ROW_TOLERANCE) add([...path, "routing", k], `probabilities leaving stage "${stages[k].id}" sum to ${round(sum)}, more than 1`);
      });
    }
  }
  const entry = siteLine.entry ?? stages[0].id;
  const entryIndex = stages.findIndex((stage) => stage.id === entry);
  if (entryIndex < 0) {
    add([...path, "entry"], `names no stage (stages: ${stages.map((stage) => stage.id).join(", ")})`);
    return;
  }
  const wellFormed = routing !== undefined && routing.length === count && routing.every((row) => row.length === count);
  if (wellFormed) {
    const trapped = stagesNeverLeft(routing, entryIndex);
    if (trapped.length > 0) {
      add([...path, "routing"], `patients reaching stage ${trapped.map((k) => `"${stages[k].id}"`).join(", ")} can never leave the pathway`);
    }
  }
}

/**
 * Stages reachable from the entry from which no route leads out of the pathway. In an open
 * Jackson network every reachable stage must drain (spectral radius of the routing matrix
 * restricted to them below 1), otherwise traffic equations have no finite solution.
 */
export function stagesNeverLeft(routing: number[][], entry: number): number[] {
  const count = routing.length;
  const reachable = new Array<boolean>(count).fill(false);
  const stack = [entry];
  reachable[entry] = true;
  while (stack.length > 0) {
    const k = stack.pop() as number;
    for (let l = 0; l < count; l++) {
      if (routing[k][l] > 0 && !reachable[l]) {
        reachable[l] = true;
        stack.push(l);
      }
    }
  }
  // Backwards from the exits: a stage drains if some probability leaves the pathway from it,
  // or it routes with positive probability to a stage that drains.
  const drains = routing.map((row) => row.reduce((total, p) => total + p, 0) < 1 - ROUTING_ROW_TOLERANCE);
  let changed = true;
  while (changed) {
    changed = false;
    for (let k = 0; k < count; k++) {
      if (drains[k]) continue;
      if (routing[k].some((p, l) => p > 0 && drains[l])) {
        drains[k] = true;
        changed = true;
      }
    }
  }
  const trapped: number[] = [];
  for (let k = 0; k < count; k++) if (reachable[k] && !drains[k]) trapped.push(k);
  return trapped;
}

function round(value: number): string {
  return String(Math.round(value * 1e6) / 1e6);
}
