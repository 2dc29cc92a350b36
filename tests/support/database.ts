/**
 * Gives a test file its own migrated database and makes it the app's `getDb()`.
 *
 * PGlite (default): a copy of the template prepared once per run in global-setup.ts.
 * PostgreSQL server: `useTestDatabase({ kind: "postgres" })` creates a fresh database on the server at
 * TEST_DATABASE_URL (started by .ci/run), migrates it, and drops it afterwards.
 */
import { cpSync, mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterAll, beforeAll, inject } from "vitest";
import { closeDatabase, openDatabase, setDatabase, type Database, type OpenDatabase } from "../../app/db/client.server";

export type TestDatabaseKind = "pglite" | "postgres";

export interface TestDatabase {
  readonly db: Database;
  readonly open: OpenDatabase;
}

/** Whether a PostgreSQL server is configured for tests; CI always sets one. */
export function postgresConfigured(): boolean {
  return Boolean(process.env.TEST_DATABASE_URL);
}

export async function createTestDatabase(kind: TestDatabaseKind = "pglite"): Promise<{ open: OpenDatabase; dispose(): Promise<void> }> {
  if (kind === "postgres") {
    const serverUrl = process.env.TEST_DATABASE_URL;
    if (!serverUrl) throw new Error("TEST_DATABASE_URL is not set: start a PostgreSQL server (see .ci/run).");
    const { Client } = (await import("pg")).default;
    const name = `equilibra_test_${process.pid}_${Math.random().toString(36).slice(2, 10)}`;
    const admin = new Client({ connectionString: serverUrl });
    await admin.connect();
    await admin.query(`CREATE DATABASE ${name}`);
    await admin.end();
    const url = new URL(serverUrl);
    url.pathname = `/${name}`;
    const open = await openDatabase({ url: url.toString() });
    return {
      open,
      async dispose() {
        await open.close();
        const dropper = new Client({ connectionString: serverUrl });
        await dropper.connect();
        await dropper.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
        await dropper.end();
      },
    };
  }
  const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-test-"));
  cpSync(inject("templateDataDir"), dataDir, { recursive: true });
  const open = await openDatabase({ dataDir, migrate: false });
  return {
    open,
    async dispose() {
      await open.close();
      rmSync(dataDir, { recursive: true, force: true });
    },
  };
}

/** Call at the top of a test file: the file's tests share one fresh database, which `getDb()` returns. */
export function useTestDatabase(kind: TestDatabaseKind = "pglite"): TestDatabase {
  let created: Awaited<ReturnType<typeof createTestDatabase>> | undefined;
  beforeAll(async () => {
    created = await createTestDatabase(kind);
    setDatabase(created.open);
  });
  afterAll(async () => {
    await closeDatabase();
    await created?.dispose();
  });
  return {
    get db() {
      if (!created) throw new Error("useTestDatabase: the database is ready only inside tests and hooks.");
      return created.open.db;
    },
    get open() {
      if (!created) throw new Error("useTestDatabase: the database is ready only inside tests and hooks.");
      return created.open;
    },
  };
}
