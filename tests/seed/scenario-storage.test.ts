/**
 * Scenario storage: an exported scenario re-imports to exactly the same document, a bad or failing
 * import stores nothing, and no function reaches another organisation's scenario.
 */
import { readFileSync } from "node:fs";
import { count, eq } from "drizzle-orm";
import { beforeAll, describe, expect, it } from "vitest";
import type { Database } from "../../app/db/client.server";
import { organisations, periods, scenarios, siteLines, sources, travelKm } from "../../app/db/schema";
import { ScenarioInputError } from "../../app/engine/problem";
import {
  archiveScenario,
  duplicateScenario,
  exportScenario,
  getScenario,
  importScenario,
  listScenarios,
  renameScenario,
} from "../../app/models/scenarios.server";
import { resolveVariant, VARIANT_FILES } from "../../seed/variants";
import { createTestDatabase, postgresConfigured, useTestDatabase } from "../support/database";

const database = useTestDatabase();
const demo = JSON.parse(readFileSync("seed/demo-scenario.json", "utf8")) as Record<string, unknown>;

let home: number;
let other: number;

beforeAll(async () => {
  const rows = await database.db
    .insert(organisations)
    .values([
      { name: "Home body", slug: "home-body" },
      { name: "Other body", slug: "other-body" },
    ])
    .returning({ id: organisations.id });
  [home, other] = rows.map((row) => row.id);
});

async function rowCounts(db: Database) {
  const [scenarioCount] = await db.select({ n: count() }).from(scenarios);
  const [sourceCount] = await db.select({ n: count() }).from(sources);
  const [siteLineCount] = await db.select({ n: count() }).from(siteLines);
  const [periodCount] = await db.select({ n: count() }).from(periods);
  return { scenarios: scenarioCount.n, sources: sourceCount.n, siteLines: siteLineCount.n, periods: periodCount.n };
}

/** A scenario written the short way the format allows: single numbers for all lines, names and defaults left out. */
const terse = {
  schema: "equilibra/scenario@1",
  name: "Terse",
  serviceLines: [{ id: "a" }, { id: "b", name: "Line B", standardWeeks: 26 }],
  sources: [
    { id: "S1", lat: 50, lon: -30, demand: { a: 3.25, b: 1 }, outsideCost: 20, urgentShare: 0.1 },
    { id: "S2", name: "Second", lat: 50.1, lon: -30.1, demand: { a: 2 }, outsideCost: { a: 22, b: null }, outsideSpread: 0.4, population: 1234, deprivationDecile: 5 },
    { id: "S3", lat: 50.2, lon: -30.2, demand: { b: 0.5 }, outsideCost: null },
  ],
  providers: [
    { id: "P1", lat: 50.05, lon: -30.05, lines: { a: { teams: 2, ratePerTeam: 4.5 }, b: { teams: 1, ratePerTeam: 3, minWeekly: 1, maxWeekly: 2.5 } } },
    {
      id: "P2",
      name: "Pathway site",
      lat: 50.15,
      lon: -30.15,
      sector: "independent",
      lines: { a: { stages: [{ id: "first", teams: 3, ratePerTeam: 2 }, { id: "op", teams: 2, ratePerTeam: 2.5, serviceCv: 0.5 }], routing: [[0, 0.4], [0, 0]] } },
    },
  ],
  travelKm: { S1: { P1: 7.125, P2: 12 }, S3: { P2: 3 } },
  periods: [
    { id: "w", weeks: 13, demandFactor: { a: 1.1 }, teamsFactor: 0.85 },
    { id: "s", label: "Summer", weeks: 39.142857142857146 },
  ],
  choiceModel: { kind: "logit", scale: 2 },
  plan: { maxKm: 40 },
};

describe("import and export", () => {
  it("reproduces the demo scenario file exactly", async () => {
    const id = await importScenario(database.db, home, demo);
    expect(await exportScenario(database.db, home, id)).toEqual(demo);
  });

  it("reproduces every saved what-if exactly", async () => {
    for (const key of VARIANT_FILES) {
      const document = resolveVariant(demo, key);
      const id = await importScenario(database.db, home, document);
      expect(await exportScenario(database.db, home, id), key).toEqual(document);
    }
  });

  it("writes a terse file in canonical form, and an export re-imports to the identical document", async () => {
    const first = await importScenario(database.db, home, terse, { description: "short form" });
    const exported = await exportScenario(database.db, home, first);
    expect(exported).toMatchObject({
      name: "Terse",
      description: "short form",
      kmPerWeek: 15,
      circuity: 1.3,
      choiceModel: { kind: "logit", scale: 2 },
      serviceLines: [
        { id: "a", name: "a", standardWeeks: 18 },
        { id: "b", name: "Line B", standardWeeks: 26 },
      ],
      plan: { maxKm: 40 },
      travelKm: { S1: { P1: 7.125, P2: 12 }, S3: { P2: 3 } },
    });
    const [s1, s2, s3] = exported?.sources ?? [];
    expect(s1).toEqual({ id: "S1", name: "S1", lat: 50, lon: -30, demand: { a: 3.25, b: 1 }, urgentShare: { a: 0.1, b: 0.1 }, outsideCost: { a: 20, b: 20 }, outsideSpread: 0 });
    expect(s2).toEqual({
      id: "S2",
      name: "Second",
      lat: 50.1,
      lon: -30.1,
      population: 1234,
      deprivationDecile: 5,
      demand: { a: 2, b: 0 },
      outsideCost: { a: 22 },
      outsideSpread: 0.4,
    });
    expect(s3).toEqual({ id: "S3", name: "S3", lat: 50.2, lon: -30.2, demand: { b: 0.5 }, outsideSpread: 0 });
    expect(exported?.providers[1]).toEqual({
      id: "P2",
      name: "Pathway site",
      lat: 50.15,
      lon: -30.15,
      sector: "independent",
      lines: {
        a: {
          teams: 3,
          ratePerTeam: 2,
          serviceCv: 1,
          stages: [
            { id: "first", teams: 3, ratePerTeam: 2, serviceCv: 1 },
            { id: "op", teams: 2, ratePerTeam: 2.5, serviceCv: 0.5 },
          ],
          routing: [
            [0, 0.4],
            [0, 0],
          ],
          entry: "first",
        },
      },
    });
    expect(exported?.periods).toEqual([
      { id: "w", label: "w", weeks: 13, demandFactor: { a: 1.1 }, teamsFactor: 0.85 },
      { id: "s", label: "Summer", weeks: 39.142857142857146, demandFactor: 1, teamsFactor: 1 },
    ]);

    const second = await importScenario(database.db, home, exported);
    expect(await exportScenario(database.db, home, second)).toEqual(exported);
  });

  it("keeps a scenario without periods, travel matrix or plan free of them", async () => {
    const { periods: _periods, travelKm: _travel, plan: _plan, ...bare } = terse;
    const id = await importScenario(database.db, home, bare);
    const exported = await exportScenario(database.db, home, id);
    expect(exported).not.toHaveProperty("periods");
    expect(exported).not.toHaveProperty("travelKm");
    expect(exported).not.toHaveProperty("plan");
    const [{ n }] = await database.db.select({ n: count() }).from(travelKm).where(eq(travelKm.scenarioId, id));
    expect(n).toBe(0);
  });
});

describe("a broken scenario stores nothing", () => {
  it("rejects invalid input with the path of each fault", async () => {
    const before = await rowCounts(database.db);
    const broken = structuredClone(demo) as { sources: { demand: Record<string, unknown> }[]; providers: { lines: Record<string, { teams: unknown }> }[] };
    broken.sources[3].demand.ortho = -2;
    broken.providers[1].lines.ophth.teams = 2.5;
    const attempt = importScenario(database.db, home, broken);
    await expect(attempt).rejects.toBeInstanceOf(ScenarioInputError);
    await expect(attempt).rejects.toThrow(/sources\[3\]\.demand\.ortho: .*got -2/);
    await expect(attempt).rejects.toThrow(/providers\[1\]\.lines\.ophth\.teams: .*got 2\.5/);
    expect(await rowCounts(database.db)).toEqual(before);
  });

  it("refuses what the tables cannot hold (a fractional population), naming the field", async () => {
    const before = await rowCounts(database.db);
    const broken = structuredClone(terse);
    broken.sources[1].population = 1234.5;
    await expect(importScenario(database.db, home, broken)).rejects.toThrow("sources[1].population: must be a whole number of people");
    expect(await rowCounts(database.db)).toEqual(before);
  });

  it("rolls every row back when a write fails half-way (site lines after scenario, sources and sites)", async () => {
    const before = await rowCounts(database.db);
    const failing = failOnInsertInto(database.db, siteLines);
    await expect(importScenario(failing, home, demo)).rejects.toThrow("injected failure");
    expect(await rowCounts(database.db)).toEqual(before);
  });
});

describe("tenancy", () => {
  it("finds no scenario of another organisation by id, for any function", async () => {
    const theirs = await importScenario(database.db, other, terse, { name: "Theirs" });
    expect(await getScenario(database.db, home, theirs)).toBeNull();
    expect(await exportScenario(database.db, home, theirs)).toBeNull();
    expect(await duplicateScenario(database.db, home, theirs)).toBeNull();
    expect(await renameScenario(database.db, home, theirs, "Mine now")).toBe(false);
    expect(await archiveScenario(database.db, home, theirs)).toBe(false);
    expect((await listScenarios(database.db, home, { includeArchived: true })).map((s) => s.id)).not.toContain(theirs);

    const untouched = await getScenario(database.db, other, theirs);
    expect(untouched?.name).toBe("Theirs");
    expect(untouched?.archivedAt).toBeNull();
  });

  it("refuses a parent scenario from another organisation", async () => {
    const theirs = await importScenario(database.db, other, terse);
    const before = await rowCounts(database.db);
    await expect(importScenario(database.db, home, terse, { parentId: theirs })).rejects.toThrow(`parentId: no scenario ${theirs} in this organisation`);
    expect(await rowCounts(database.db)).toEqual(before);
  });

  it("returns null for ids that are not whole numbers", async () => {
    expect(await getScenario(database.db, home, Number.NaN)).toBeNull();
  });
});

describe("managing scenarios", () => {
  it("duplicates with the parent recorded and identical content", async () => {
    const original = await importScenario(database.db, home, demo);
    const copy = await duplicateScenario(database.db, home, original, { name: "What-if" });
    expect(copy).not.toBeNull();
    const record = await getScenario(database.db, home, copy as number);
    expect(record?.parentId).toBe(original);
    const [a, b] = [await exportScenario(database.db, home, original), await exportScenario(database.db, home, copy as number)];
    expect({ ...b, name: a?.name }).toEqual(a);
    expect(b?.name).toBe("What-if");
    const defaultNamed = await duplicateScenario(database.db, home, original);
    expect((await getScenario(database.db, home, defaultNamed as number))?.name).toBe(`${a?.name} (copy)`);
  });

  it("renames, archives and restores; lists leave archived scenarios out unless asked", async () => {
    const id = await importScenario(database.db, home, terse);
    expect(await renameScenario(database.db, home, id, "  Renamed  ")).toBe(true);
    expect((await getScenario(database.db, home, id))?.name).toBe("Renamed");
    await expect(renameScenario(database.db, home, id, "   ")).rejects.toThrow("name: must not be empty");

    expect(await archiveScenario(database.db, home, id)).toBe(true);
    expect((await listScenarios(database.db, home)).map((s) => s.id)).not.toContain(id);
    const withArchived = await listScenarios(database.db, home, { includeArchived: true });
    const listed = withArchived.find((s) => s.id === id);
    expect(listed).toMatchObject({ name: "Renamed", sourceCount: 3, siteCount: 2, lineCount: 2 });
    expect(listed?.archivedAt).toBeInstanceOf(Date);
    expect(withArchived.at(-1)?.id).toBe(id);

    expect(await archiveScenario(database.db, home, id, false)).toBe(true);
    expect((await listScenarios(database.db, home)).map((s) => s.id)).toContain(id);
  });
});

describe.runIf(postgresConfigured())("on a PostgreSQL server", () => {
  it("round-trips the demo and the terse file exactly, and rolls back a failed import", async () => {
    const { open, dispose } = await createTestDatabase("postgres");
    try {
      const [org] = await open.db.insert(organisations).values({ name: "Server body", slug: "server-body" }).returning();
      const id = await importScenario(open.db, org.id, demo);
      expect(await exportScenario(open.db, org.id, id)).toEqual(demo);
      const terseId = await importScenario(open.db, org.id, terse);
      const exported = await exportScenario(open.db, org.id, terseId);
      const again = await importScenario(open.db, org.id, exported);
      expect(await exportScenario(open.db, org.id, again)).toEqual(exported);
      const before = await rowCounts(open.db);
      await expect(importScenario(failOnInsertInto(open.db, siteLines), org.id, demo)).rejects.toThrow("injected failure");
      expect(await rowCounts(open.db)).toEqual(before);
    } finally {
      await dispose();
    }
  });
});

/** The database, except that inserting into `table` inside a transaction throws: a fault half-way through an import. */
function failOnInsertInto(db: Database, table: unknown): Database {
  const wrapTransaction = (tx: object) =>
    new Proxy(tx, {
      get(target, property, receiver) {
        if (property === "insert") {
          return (into: unknown) => {
            if (into === table) throw new Error("injected failure");
            return (target as Database).insert(into as typeof siteLines);
          };
        }
        const value = Reflect.get(target, property, receiver);
        return typeof value === "function" ? value.bind(target) : value;
      },
    });
  return new Proxy(db, {
    get(target, property, receiver) {
      if (property === "transaction") {
        return (run: (tx: object) => Promise<unknown>) => target.transaction((tx) => run(wrapTransaction(tx)));
      }
      const value = Reflect.get(target, property, receiver);
      return typeof value === "function" ? value.bind(target) : value;
    },
  });
}
