/**
 * Loading the demo: organisations, people with their roles, the map and the scenarios; loading only
 * into an empty database; a reset that reloads the demo and leaves other organisations alone; and
 * the command line refusing a database held by a running server.
 */
import { spawnSync } from "node:child_process";
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { and, eq, inArray } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { memberships, organisations, scenarios, users } from "../../app/db/schema";
import { getRegionMap } from "../../app/models/region-maps.server";
import { exportScenario, listScenarios } from "../../app/models/scenarios.server";
import { readDemoScenario, resetDemo, seedDemo, seedIfEmpty } from "../../seed/load";
import { DEMO_PEOPLE } from "../../seed/people";
import { useTestDatabase } from "../support/database";

const database = useTestDatabase();

describe("seeding", () => {
  it("loads everything into an empty database, and nothing once an organisation exists", async () => {
    const summary = await seedIfEmpty(database.db);
    expect(summary).not.toBeNull();
    expect(await seedIfEmpty(database.db)).toBeNull();

    const { caldervey, "upper-caldervey": neighbour } = summary!.organisations;
    const members = await database.db
      .select({ login: users.login, role: memberships.role, siteCodes: memberships.siteCodes, organisationId: memberships.organisationId })
      .from(memberships)
      .innerJoin(users, eq(users.id, memberships.userId));
    expect(members).toHaveLength(DEMO_PEOPLE.length);
    for (const person of DEMO_PEOPLE) {
      const member = members.find((m) => m.login === person.login);
      expect(member?.role).toBe(person.role);
      expect(member?.siteCodes).toEqual(person.siteCodes ?? []);
      expect(member?.organisationId).toBe(person.organisation === "caldervey" ? caldervey : neighbour);
    }

    const listed = await listScenarios(database.db, caldervey);
    expect(listed).toHaveLength(5);
    expect(listed[0]).toMatchObject({ id: summary!.demoScenarioId, parentId: null, sourceCount: 40, siteCount: 7, lineCount: 4 });
    for (const variant of listed.slice(1)) expect(variant.parentId).toBe(summary!.demoScenarioId);
    expect(await exportScenario(database.db, caldervey, summary!.demoScenarioId)).toEqual(readDemoScenario());
    expect((await listScenarios(database.db, neighbour)).map((s) => s.id)).toEqual([summary!.neighbourScenarioId]);

    const map = await getRegionMap(database.db, caldervey);
    expect(map?.features.filter((f) => f.properties.kind === "land")).toHaveLength(1);
    expect(map?.features.find((f) => f.properties.kind === "boundary")?.properties.name).toBe("Caldervey Commissioning Board");
  });

  it("refuses to load the demo twice, storing nothing the second time", async () => {
    const before = await database.db.select({ id: scenarios.id }).from(scenarios);
    await expect(seedDemo(database.db)).rejects.toThrow();
    expect(await database.db.select({ id: scenarios.id }).from(scenarios)).toHaveLength(before.length);
  });

  it("resets the demo organisations and people, and leaves a real organisation alone", async () => {
    const [real] = await database.db.insert(organisations).values({ name: "A real body", slug: "a-real-body" }).returning();
    const [caldervey] = await database.db.select().from(organisations).where(eq(organisations.slug, "caldervey"));
    // A change a demo user made, which the reset must undo.
    await database.db.update(scenarios).set({ name: "Edited" }).where(eq(scenarios.organisationId, caldervey.id));

    const summary = await resetDemo(database.db);
    expect(summary.organisations.caldervey).not.toBe(caldervey.id);
    const names = (await listScenarios(database.db, summary.organisations.caldervey)).map((s) => s.name);
    expect(names).not.toContain("Edited");
    expect(names).toHaveLength(5);
    expect(await database.db.select().from(organisations).where(eq(organisations.id, real.id))).toHaveLength(1);
    expect(await database.db.select().from(scenarios).where(eq(scenarios.organisationId, caldervey.id))).toHaveLength(0);
    const demoUsers = await database.db
      .select()
      .from(users)
      .where(inArray(users.githubId, DEMO_PEOPLE.map((person) => person.githubId)));
    expect(demoUsers).toHaveLength(DEMO_PEOPLE.length);
    const planner = await database.db
      .select()
      .from(memberships)
      .innerJoin(users, eq(users.id, memberships.userId))
      .where(and(eq(users.login, "piet-planner"), eq(memberships.organisationId, summary.organisations.caldervey)));
    expect(planner).toHaveLength(1);
  });
});

describe("npm run seed", () => {
  it("refuses --reset with a clear message while a running server holds the embedded database", () => {
    const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-seed-lock-"));
    try {
      mkdirSync(path.join(dataDir, "pglite"), { recursive: true });
      // This test process stands in for the running server: a live process id in the lock file.
      writeFileSync(path.join(dataDir, "pglite.lock"), String(process.pid));
      const run = spawnSync(process.execPath, ["--import", "tsx", "seed/cli.ts", "--reset"], {
        env: { ...process.env, DATA_DIR: dataDir, DATABASE_URL: "" },
        encoding: "utf8",
        timeout: 60_000,
      });
      expect(run.status).toBe(1);
      expect(run.stderr).toContain("Cannot seed: the embedded database is in use by a running Equilibra server.");
      expect(run.stderr).toContain(`process ${process.pid}`);
    } finally {
      rmSync(dataDir, { recursive: true, force: true });
    }
  });

  it("rejects an unknown argument with the usage", () => {
    const run = spawnSync(process.execPath, ["--import", "tsx", "seed/cli.ts", "--wipe"], { encoding: "utf8", timeout: 60_000 });
    expect(run.status).toBe(2);
    expect(run.stderr).toContain("Unknown argument --wipe. Usage: npm run seed [-- --reset]");
  });
});
