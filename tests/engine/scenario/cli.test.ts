/**
 * `npm run solve -- FILE.json`: exit codes 0 / 2 / 3 and their messages, on fixture files,
 * by running the real command line in a child process — through its launcher, which runs a
 * bundle of the TypeScript sources (`app/engine/cli-launcher.mjs`), as `npm run solve` does.
 */
import { spawn } from "node:child_process";
import { existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { afterAll, describe, expect, it } from "vitest";

const root = fileURLToPath(new URL("../../..", import.meta.url));
const fixtures = "tests/engine/scenario/fixtures";
/** This file's own bundle cache: the bundle is built from the sources as they are now. */
const cache = mkdtempSync(path.join(tmpdir(), "equilibra-solve-cache-"));
afterAll(() => rmSync(cache, { recursive: true, force: true }));

/** Runs `node app/engine/cli-launcher.mjs …` exactly as `npm run solve --` does, called directly because npm's own start-up costs time per case. */
function solve(...args: string[]): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return solveWith({}, ...args);
}

function solveWith(env: Record<string, string>, ...args: string[]): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ["app/engine/cli-launcher.mjs", ...args], {
      cwd: root,
      env: { ...process.env, EQUILIBRA_SOLVE_CACHE: cache, ...env },
    });
    let stdout = "";
    let stderr = "";
    child.stdout.setEncoding("utf8").on("data", (chunk: string) => (stdout += chunk));
    child.stderr.setEncoding("utf8").on("data", (chunk: string) => (stderr += chunk));
    child.on("error", reject);
    child.on("close", (code) => resolve({ code, stdout, stderr }));
  });
}

describe("the solve command line", () => {
  it("prints the result JSON and exits 0", async () => {
    const { code, stdout, stderr } = await solve(`${fixtures}/two-practices-two-sites.json`);
    expect(stderr).toBe("");
    expect(code).toBe(0);
    const result = JSON.parse(stdout);
    expect(result.schema).toBe("equilibra/result@1");
    // CHECKS.md, two practices and two sites [derived]: price of anarchy 1.168866462325.
    expect(result.priceOfAnarchy).toBeCloseTo(1.168866462325, 9);
    expect(Object.keys(result.lines.ortho.rules)).toEqual(["choice", "choiceLogit", "optimum", "nearest", "capacityShare"]);
  });

  it("gives the same result when half the rules run on a second thread (as for large files)", async () => {
    // Forced on a small file: the threaded path must not change a single figure or warning.
    const file = "seed/demo-scenario.json";
    const [single, threaded] = await Promise.all([
      solveWith({ EQUILIBRA_SOLVE_PARALLEL_PAIRS: "1e12" }, file, "--compact"),
      solveWith({ EQUILIBRA_SOLVE_PARALLEL_PAIRS: "1" }, file, "--compact"),
    ]);
    expect(single.code).toBe(0);
    expect(threaded.code).toBe(0);
    expect(threaded.stderr).toBe("");
    // Byte for byte: the threaded path writes its reports as text in parts (result-json.ts).
    expect(threaded.stdout).toBe(single.stdout);
  });

  it("prints one line with --compact", async () => {
    const { code, stdout } = await solve(`${fixtures}/single-site-balking.json`, "--compact");
    expect(code).toBe(0);
    expect(stdout.trimEnd().split("\n")).toHaveLength(1);
  });

  it("exits 2 naming each offending field path and value", async () => {
    const { code, stdout, stderr } = await solve(`${fixtures}/invalid-fields.json`);
    expect(code).toBe(2);
    expect(stdout).toBe("");
    expect(stderr).toBe(
      `Invalid scenario in "${fixtures}/invalid-fields.json" (2 issues):\n` +
        "  sources[0].demand.ortho: must be a number ≥ 0 (referrals/week); got -3\n" +
        "  providers[0].lines.ortho.teams: must be a whole number of teams from 1 to 10000; got 2.5\n",
    );
  });

  it("exits 2 naming a file that cannot be read", async () => {
    const { code, stdout, stderr } = await solve(`${fixtures}/missing.json`);
    expect(code).toBe(2);
    expect(stdout).toBe("");
    expect(stderr).toBe(`Cannot read scenario file "${fixtures}/missing.json": no such file.\n`);
  });

  it("exits 2 naming a file that is not JSON", async () => {
    const { code, stderr } = await solve(`${fixtures}/not-json.json`);
    expect(code).toBe(2);
    expect(stderr.startsWith(`Scenario file "${fixtures}/not-json.json" could not be parsed as JSON: `)).toBe(true);
  });

  it("exits 2 with the usage when no file is given", async () => {
    const { code, stderr } = await solve();
    expect(code).toBe(2);
    expect(stderr).toBe("No scenario file given.\nUsage: npm run solve -- FILE.json [--compact]\n");
  });

  it.each([
    ["one thread", "1e12"],
    ["two threads", "1"],
  ])("exits 3 naming the line, the sites and the shortfall when there is no steady state (%s)", async (_, pairs) => {
    const { code, stdout, stderr } = await solveWith({ EQUILIBRA_SOLVE_PARALLEL_PAIRS: pairs }, `${fixtures}/no-steady-state.json`);
    expect(code).toBe(3);
    expect(stdout).toBe("");
    expect(stderr).toBe(
      `Scenario file "${fixtures}/no-steady-state.json" has no steady state:\n` +
        'No steady state for service line "ortho": demand without an outside option 7.50 referrals/week exceeds the capacity of sites ZZS1, ZZS2 (7.00/week) by 0.50 referrals/week.\n',
    );
  });

  it("exits 3 but still prints the result when only a period has no steady state", async () => {
    const { code, stdout, stderr } = await solve(`${fixtures}/winter-without-steady-state.json`);
    expect(code).toBe(3);
    const result = JSON.parse(stdout);
    expect(result.periods.map((period: { id: string }) => period.id)).toEqual(["summer", "winter"]);
    expect(result.periods[1].lines.ortho.noSteadyState[0].shortfall).toBeCloseTo(0.5, 12);
    expect(stderr).toBe(
      `Scenario file "${fixtures}/winter-without-steady-state.json" solved, but some periods have no steady state:\n` +
        'No steady state for service line "ortho" in period "winter": demand without an outside option 3.30 referrals/week exceeds the capacity of sites ZZS1, ZZS2 (2.80/week) by 0.50 referrals/week.\n',
    );
  });
});

describe("the command line's launcher", () => {
  const current = () => JSON.parse(readFileSync(path.join(cache, "current.json"), "utf8")) as { key: string; inputs: string[] };
  const builds = () => readdirSync(cache).filter((name) => name !== "current.json").sort();

  it("builds the bundle once and reuses it while its inputs are unchanged", async () => {
    expect((await solve(`${fixtures}/single-site-balking.json`, "--compact")).code).toBe(0);
    const first = current();
    expect(first.inputs).toContain("app/engine/cli.ts");
    expect(first.inputs.some((input) => input.includes("zod"))).toBe(true);
    expect(existsSync(path.join(cache, first.key, "rule-thread-entry.mjs"))).toBe(true);
    const before = builds();
    expect((await solve(`${fixtures}/single-site-balking.json`, "--compact")).code).toBe(0);
    expect(current().key).toBe(first.key);
    expect(builds()).toEqual(before);
  });

  it("rebuilds when the recorded inputs no longer match the files or the bundle is gone", async () => {
    expect((await solve(`${fixtures}/single-site-balking.json`, "--compact")).code).toBe(0);
    const { key, inputs } = current();
    // As if a source had changed since the build: the recorded key no longer matches.
    writeFileSync(path.join(cache, "current.json"), JSON.stringify({ key: "0000000000000000", esbuild: "0", inputs }));
    const again = await solve(`${fixtures}/single-site-balking.json`, "--compact");
    expect(again.code).toBe(0);
    expect(again.stderr).toBe("");
    expect(current().key).toBe(key);
    rmSync(path.join(cache, key), { recursive: true });
    expect((await solve(`${fixtures}/single-site-balking.json`, "--compact")).code).toBe(0);
    expect(existsSync(path.join(cache, key, "cli.mjs"))).toBe(true);
  });
});
