/**
 * Runs once per test run:
 * - migrates a PGlite database into a template directory that every test file copies (a fresh PGlite
 *   takes seconds; a copy opens in well under one);
 * - starts a throwaway PostgreSQL server for the data-layer tests, unless TEST_DATABASE_URL names one.
 */
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { TestProject } from "vitest/node";
import { openDatabase } from "../../app/db/client.server";
import { startPostgresServer } from "./postgres-server";

declare module "vitest" {
  export interface ProvidedContext {
    templateDataDir: string;
    /** A PostgreSQL server for tests, or "" when none is available. */
    postgresUrl: string;
  }
}

export default async function setup(project: TestProject) {
  const templateDataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-template-"));
  const open = await openDatabase({ dataDir: templateDataDir });
  await open.close();
  project.provide("templateDataDir", templateDataDir);

  let server: Awaited<ReturnType<typeof startPostgresServer>>;
  if (process.env.TEST_DATABASE_URL) {
    project.provide("postgresUrl", process.env.TEST_DATABASE_URL);
  } else {
    server = await startPostgresServer();
    project.provide("postgresUrl", server?.url ?? "");
  }

  return () => {
    server?.stop();
    rmSync(templateDataDir, { recursive: true, force: true });
  };
}
