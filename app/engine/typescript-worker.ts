/**
 * Node only: a worker thread that runs a TypeScript module from source, for the command line's
 * second thread (`rule-thread.ts`) and the server's solve pool (`app/models/solve-pool.server.ts`).
 *
 * Workers load TypeScript through tsx (a runtime dependency). `--import tsx` in a worker's
 * execArgv does not reach the worker's own module loader on Node 20, so a two-line bootstrap
 * registers tsx's loader inside the thread and then imports the entry.
 */
import { readFileSync } from "node:fs";
import { createRequire } from "node:module";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { Worker } from "node:worker_threads";

const BOOTSTRAP = `
const { workerData } = require("node:worker_threads");
import(workerData.tsxApi).then((tsx) => { tsx.register(); return import(workerData.entry); });
`;

let tsxApi: string | null = null;

/**
 * tsx's `register` API as an ES module. `require.resolve` would pick the package's CommonJS build
 * of it, which cannot be imported into a worker, and tsx's default entry skips worker threads; so
 * the import condition of its `./esm/api` export is read from its manifest.
 */
function tsxApiUrl(): string {
  if (tsxApi) return tsxApi;
  const manifestPath = createRequire(import.meta.url).resolve("tsx/package.json");
  const manifest = JSON.parse(readFileSync(manifestPath, "utf8")) as { exports?: Record<string, { import?: { default?: string } }> };
  const target = manifest.exports?.["./esm/api"]?.import?.default;
  if (!target) throw new Error(`tsx at ${path.dirname(manifestPath)} has no "./esm/api" import export; worker threads need it to load TypeScript.`);
  tsxApi = pathToFileURL(path.join(path.dirname(manifestPath), target)).href;
  return tsxApi;
}

/** Starts a worker thread running the TypeScript module at `entry` (a file URL). */
export function startTypeScriptWorker(entry: string): Worker {
  return new Worker(BOOTSTRAP, { eval: true, workerData: { tsxApi: tsxApiUrl(), entry } });
}
