/**
 * Runs once per test run: migrates a PGlite database into a template directory that every test file
 * copies (a fresh PGlite takes seconds; a copy opens in well under one).
 */
import { mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";
import type { TestProject } from "vitest/node";
import { openDatabase } from "../../app/db/client.server";

declare module "vitest" {
  export interface ProvidedContext {
    templateDataDir: string;
  }
}

export default async function setup(project: TestProject) {
  const templateDataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-template-"));
  const open = await openDatabase({ dataDir: templateDataDir });
  await open.close();
  project.provide("templateDataDir", templateDataDir);
  return () => rmSync(templateDataDir, { recursive: true, force: true });
}
