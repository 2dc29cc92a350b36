/**
 * Gives a test file its own migrated database and makes it the app's `getDb()`.
 *
 * PGlite (default): a copy of the template prepared once per run in global-setup.ts.
 * PostgreSQL server: `useTestDatabase("postgres")` creates a fresh database on the server that
 * global-setup.ts started (or TEST_DATABASE_URL), migrates it, and drops it afterwards.
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

/** Whether a PostgreSQL server is available to the tests (global-setup.ts starts one when it can). */
export function postgresConfigured(): boolean {
  return Boolean(inject("postgresUrl"));
}

export async function createTestDatabase(kind: TestDatabaseKind = "pglite"): Promise<{ open: OpenDatabase; dispose(): Promise<void> }> {
  if (kind === "postgres") {
    const serverUrl = inject("postgresUrl");
    if (!serverUrl) throw new Error("No PostgreSQL server for tests: install Debian's postgresql (tests/support/prepare.sh does).");
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
        // The pool's end() resolves while its clients may still be closing their connections; a
        // FORCE drop then cut one off mid-close, and its error reached vitest as an uncaught
        // exception (a whole run failed on it once). Wait until the server has let them all go.
        for (let attempt = 0; attempt < 250; attempt++) {
          const { rows } = await dropper.query<{ open: number }>("SELECT count(*)::int AS open FROM pg_stat_activity WHERE datname = $1", [name]);
          if (rows[0].open === 0) break;
          await new Promise((resolve) => setTimeout(resolve, 20));
        }
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
