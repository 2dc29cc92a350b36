/**
 * The one database factory. PGlite (PostgreSQL in WebAssembly) persisted in DATA_DIR is the embedded
 * default; with DATABASE_URL=postgres://… the same schema and migrations run on a PostgreSQL server
 * through drizzle's node-postgres driver, so several app instances can share one database.
 *
 * Drivers are imported dynamically so that a deployment only loads the one it uses.
 */
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import path from "node:path";
import type { PgDatabase, PgQueryResultHKT } from "drizzle-orm/pg-core";
import * as schema from "./schema";

export type Database = PgDatabase<PgQueryResultHKT, typeof schema>;

export interface OpenDatabase {
  db: Database;
  kind: "pglite" | "postgres";
  close(): Promise<void>;
}

export const MIGRATIONS_FOLDER = path.resolve(process.cwd(), "drizzle");

export class DatabaseLockedError extends Error {
  constructor(dataDir: string, pid: number) {
    super(
      `The data directory ${dataDir} is already open in process ${pid}. ` +
        "Only one process may open an embedded database: stop that process, or point DATA_DIR elsewhere.",
    );
    this.name = "DatabaseLockedError";
  }
}

function processIsAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === "EPERM";
  }
}

/** PGlite does not lock its directory; a pid file refuses a second process instead of corrupting it. */
function acquireLock(databaseDir: string): () => void {
  const lockFile = `${databaseDir}.lock`;
  if (existsSync(lockFile)) {
    const pid = Number(readFileSync(lockFile, "utf8").trim());
    if (pid && pid !== process.pid && processIsAlive(pid)) throw new DatabaseLockedError(databaseDir, pid);
  }
  writeFileSync(lockFile, String(process.pid));
  return () => {
    try {
      if (readFileSync(lockFile, "utf8").trim() === String(process.pid)) rmSync(lockFile);
    } catch {
      // already gone
    }
  };
}

/** Opens (and migrates) a database: a PostgreSQL server when `url` is given, else PGlite in `dataDir`. */
export async function openDatabase(options: { url?: string; dataDir?: string; migrate?: boolean }): Promise<OpenDatabase> {
  const migrate = options.migrate ?? true;
  if (options.url) {
    const { Pool } = (await import("pg")).default;
    const { drizzle } = await import("drizzle-orm/node-postgres");
    const pool = new Pool({ connectionString: options.url, max: 10 });
    const db = drizzle(pool, { schema });
    if (migrate) {
      const { migrate: runMigrations } = await import("drizzle-orm/node-postgres/migrator");
      await runMigrations(db, { migrationsFolder: MIGRATIONS_FOLDER });
    }
    return { db: db as unknown as Database, kind: "postgres", close: async () => (pool.ended ? undefined : pool.end()) };
  }

  const dataDir = path.resolve(options.dataDir ?? "./data");
  const databaseDir = path.join(dataDir, "pglite");
  mkdirSync(dataDir, { recursive: true });
  const releaseLock = acquireLock(databaseDir);
  try {
    const { PGlite } = await import("@electric-sql/pglite");
    const { drizzle } = await import("drizzle-orm/pglite");
    const client = await PGlite.create(databaseDir);
    const db = drizzle(client, { schema });
    if (migrate) {
      const { migrate: runMigrations } = await import("drizzle-orm/pglite/migrator");
      await runMigrations(db, { migrationsFolder: MIGRATIONS_FOLDER });
    }
    return {
      db: db as unknown as Database,
      kind: "pglite",
      close: async () => {
        // Closing twice (shutdown hook and test teardown both holding it) is harmless.
        if (!client.closed) await client.close();
        releaseLock();
      },
    };
  } catch (error) {
    releaseLock();
    throw error;
  }
}

let current: Promise<OpenDatabase> | undefined;

/** The process-wide database, opened on first use from DATABASE_URL or DATA_DIR. */
export function getDatabase(): Promise<OpenDatabase> {
  current ??= openDatabase({ url: process.env.DATABASE_URL || undefined, dataDir: process.env.DATA_DIR || "./data" });
  return current;
}

export async function getDb(): Promise<Database> {
  return (await getDatabase()).db;
}

/** Makes `open` the process-wide database (tests give each file its own copy). */
export function setDatabase(open: OpenDatabase): void {
  current = Promise.resolve(open);
}

/** Closes the process-wide database (tests, shutdown). */
export async function closeDatabase(): Promise<void> {
  const open = current;
  current = undefined;
  if (open) await (await open).close();
}
