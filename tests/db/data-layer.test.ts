/**
 * The data layer behaves the same on embedded PGlite and on a PostgreSQL server.
 * The server run uses the PostgreSQL 15 server that tests/support/global-setup.ts starts from Debian's
 * packages (installed by tests/support/prepare.sh); under CI its absence is a failure, not a skip.
 */
import { spawn } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { and, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { DatabaseLockedError, openDatabase } from "../../app/db/client.server";
import { memberships, organisations, sources, scenarios, users } from "../../app/db/schema";
import { createTestDatabase, postgresConfigured, type TestDatabaseKind } from "../support/database";

const kinds: TestDatabaseKind[] = ["pglite"];
if (postgresConfigured()) kinds.push("postgres");

it("runs against a PostgreSQL server in CI", () => {
  if (process.env.CI) expect(postgresConfigured(), "CI must have a PostgreSQL server for the data-layer tests").toBe(true);
});

describe.each(kinds)("data layer on %s", (kind) => {
  it("applies the migrations and round-trips users, organisations and memberships", async () => {
    const { open, dispose } = await createTestDatabase(kind);
    try {
      const { db } = open;
      const [user] = await db.insert(users).values({ githubId: "gh-1", login: "ada" }).returning();
      const [org] = await db.insert(organisations).values({ name: "Test body", slug: "test-body" }).returning();
      await db.insert(memberships).values({ organisationId: org.id, userId: user.id, role: "provider_manager", siteCodes: ["ZZS1", "ZZS2"] });
      const rows = await db.select().from(memberships).where(and(eq(memberships.organisationId, org.id), eq(memberships.userId, user.id)));
      expect(rows).toHaveLength(1);
      expect(rows[0].role).toBe("provider_manager");
      expect(rows[0].siteCodes).toEqual(["ZZS1", "ZZS2"]);
    } finally {
      await dispose();
    }
  });

  it("rolls a failed transaction back completely", async () => {
    const { open, dispose } = await createTestDatabase(kind);
    try {
      const { db } = open;
      const [org] = await db.insert(organisations).values({ name: "Body", slug: "body" }).returning();
      await expect(
        db.transaction(async (tx) => {
          const [scenario] = await tx.insert(scenarios).values({ organisationId: org.id, name: "Half" }).returning();
          await tx.insert(sources).values({ scenarioId: scenario.id, code: "ZZP001", name: "A", lat: 0, lon: 0 });
          // Duplicate code in the same scenario violates the unique index: everything above must vanish.
          await tx.insert(sources).values({ scenarioId: scenario.id, code: "ZZP001", name: "B", lat: 0, lon: 0 });
        }),
      ).rejects.toThrow();
      expect(await db.select().from(scenarios)).toHaveLength(0);
      expect(await db.select().from(sources)).toHaveLength(0);
    } finally {
      await dispose();
    }
  });

  it("enforces one membership per person and organisation", async () => {
    const { open, dispose } = await createTestDatabase(kind);
    try {
      const { db } = open;
      const [user] = await db.insert(users).values({ githubId: "gh-2", login: "bo" }).returning();
      const [org] = await db.insert(organisations).values({ name: "Body", slug: "body-2" }).returning();
      await db.insert(memberships).values({ organisationId: org.id, userId: user.id, role: "reader" });
      await expect(db.insert(memberships).values({ organisationId: org.id, userId: user.id, role: "planner" })).rejects.toThrow();
    } finally {
      await dispose();
    }
  });
});

describe("the embedded database's directory lock", () => {
  it("refuses a second process opening the same data directory", async () => {
    const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-lock-"));
    // Simulate a live server owning the directory: a lock file naming a running process.
    const holder = spawn(process.execPath, ["-e", "setTimeout(() => {}, 20000)"]);
    try {
      writeFileSync(path.join(dataDir, "pglite.lock"), String(holder.pid));
      await expect(openDatabase({ dataDir })).rejects.toThrow(DatabaseLockedError);
      await expect(openDatabase({ dataDir })).rejects.toThrow(/already open in process/);
    } finally {
      holder.kill();
      rmSync(dataDir, { recursive: true, force: true });
    }
  });

  it("takes over a lock left by a process that has died", async () => {
    const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-lock-"));
    try {
      writeFileSync(path.join(dataDir, "pglite.lock"), "999999");
      const open = await openDatabase({ dataDir });
      await open.close();
    } finally {
      rmSync(dataDir, { recursive: true, force: true });
    }
  });
});
