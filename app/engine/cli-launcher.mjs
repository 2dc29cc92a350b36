/**
 * `npm run solve`: starts the command line (`cli.ts`) from a bundle of its TypeScript sources,
 * built with esbuild on the first run and again whenever a source it was built from changes.
 *
 * Why a bundle: through tsx's loader every module of the engine and of the schema library is
 * resolved and compiled via a hooks thread, in the main thread and again in the solver thread —
 * about 0.7 s of a national solve's 4–5 s went there. A bundle loads as a handful of plain
 * modules. Plain JavaScript, as it must run before anything can compile TypeScript.
 *
 * The bundle lives in node_modules/.cache/equilibra-solve/<key>/, where <key> hashes the path,
 * size and modification time of every input and esbuild's version; `current.json` names the
 * latest. A build is written to a fresh directory and never changed, so a run already using an
 * older bundle (its second thread loads it later) is not disturbed by a rebuild; older builds are
 * pruned after a day. EQUILIBRA_SOLVE_CACHE moves the cache (the tests use a directory of their own).
 */
import { createHash } from "node:crypto";
import { existsSync, mkdirSync, readFileSync, readdirSync, renameSync, rmSync, statSync, writeFileSync } from "node:fs";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "../..");
const cache = path.resolve(process.env.EQUILIBRA_SOLVE_CACHE ?? path.join(root, "node_modules/.cache/equilibra-solve"));
const entries = ["app/engine/cli.ts", "app/engine/rule-thread-entry.ts"];
const PRUNE_AFTER_MS = 24 * 60 * 60 * 1000;

/** A key for the inputs as they are on disk now: their paths, sizes and modification times. */
function inputsKey(inputs, esbuildVersion) {
  const hash = createHash("sha256").update(esbuildVersion);
  for (const input of inputs) {
    const stats = statSync(path.join(root, input));
    hash.update(`\n${input}\t${stats.size}\t${stats.mtimeMs}`);
  }
  return hash.digest("hex").slice(0, 16);
}

/** The current bundle's directory when every input it was built from is unchanged, else null. */
function currentBundle() {
  try {
    const current = JSON.parse(readFileSync(path.join(cache, "current.json"), "utf8"));
    const directory = path.join(cache, current.key);
    if (inputsKey(current.inputs, current.esbuild) !== current.key || !existsSync(path.join(directory, "cli.mjs"))) return null;
    return directory;
  } catch {
    // No bundle yet, or an input has gone: build.
    return null;
  }
}

async function build() {
  const esbuild = await import("esbuild");
  const staging = path.join(cache, `.staging-${process.pid}-${Date.now()}`);
  const result = await esbuild.build({
    absWorkingDir: root,
    entryPoints: entries,
    outdir: staging,
    outExtension: { ".js": ".mjs" },
    bundle: true,
    splitting: true,
    format: "esm",
    platform: "node",
    target: "node20",
    // No source maps: loading them cost ~30 ms per run. A defect's stack trace names the bundled
    // functions; `node --import tsx app/engine/cli.ts FILE` runs the same command from source.
    metafile: true,
    logLevel: "error",
  });
  const inputs = Object.keys(result.metafile.inputs).sort();
  const key = inputsKey(inputs, esbuild.version);
  const directory = path.join(cache, key);
  if (existsSync(directory)) rmSync(staging, { recursive: true, force: true });
  else {
    try {
      renameSync(staging, directory);
    } catch (error) {
      // Another run built the same bundle at the same moment: use theirs.
      rmSync(staging, { recursive: true, force: true });
      if (!existsSync(directory)) throw error;
    }
  }
  const current = path.join(cache, `current.json.${process.pid}`);
  writeFileSync(current, JSON.stringify({ key, esbuild: esbuild.version, inputs }));
  renameSync(current, path.join(cache, "current.json"));
  prune(key);
  return directory;
}

/** Removes builds other than `keep` that are more than a day old (a run may still be using a recent one). */
function prune(keep) {
  for (const name of readdirSync(cache)) {
    if (name === keep || name === "current.json") continue;
    const entry = path.join(cache, name);
    try {
      if (Date.now() - statSync(entry).mtimeMs > PRUNE_AFTER_MS) rmSync(entry, { recursive: true, force: true });
    } catch {
      // Pruned by another run meanwhile.
    }
  }
}

mkdirSync(cache, { recursive: true });
const directory = currentBundle() ?? (await build());
await import(pathToFileURL(path.join(directory, "cli.mjs")).href);
