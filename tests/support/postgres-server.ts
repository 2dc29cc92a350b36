/**
 * A throwaway PostgreSQL 15 server on loopback for the data-layer tests, started once per test run
 * from Debian's binaries (run as the postgres system user when we are root). Skipped when
 * TEST_DATABASE_URL already names a server.
 */
import { execFileSync, spawnSync } from "node:child_process";
import { chownSync, existsSync, mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";

const PG_BIN = "/usr/lib/postgresql/15/bin";

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = net.createServer();
    server.once("error", reject);
    server.listen(0, "127.0.0.1", () => {
      const { port } = server.address() as net.AddressInfo;
      server.close(() => resolve(port));
    });
  });
}

function runAsPostgres(command: string, args: string[]) {
  const asRoot = process.getuid?.() === 0;
  const result = asRoot
    ? spawnSync("su", ["postgres", "-s", "/bin/sh", "-c", [command, ...args].map((part) => `'${part}'`).join(" ")], { encoding: "utf8" })
    : spawnSync(command, args, { encoding: "utf8" });
  if (result.status !== 0) throw new Error(`${path.basename(command)} failed: ${result.stderr || result.stdout}`);
}

export async function startPostgresServer(): Promise<{ url: string; stop(): void } | undefined> {
  if (!existsSync(path.join(PG_BIN, "initdb"))) return undefined;
  const dataDir = mkdtempSync(path.join(os.tmpdir(), "equilibra-pg-"));
  if (process.getuid?.() === 0) {
    const uid = Number(execFileSync("id", ["-u", "postgres"], { encoding: "utf8" }).trim());
    const gid = Number(execFileSync("id", ["-g", "postgres"], { encoding: "utf8" }).trim());
    chownSync(dataDir, uid, gid);
  }
  const port = await freePort();
  runAsPostgres(path.join(PG_BIN, "initdb"), ["-D", dataDir, "-A", "trust", "-U", "postgres"]);
  runAsPostgres(path.join(PG_BIN, "pg_ctl"), [
    "-D",
    dataDir,
    "-o",
    `-p ${port} -k ${dataDir} -c listen_addresses=127.0.0.1 -c fsync=off`,
    "-l",
    path.join(dataDir, "server.log"),
    "-w",
    "start",
  ]);
  return {
    url: `postgres://postgres@127.0.0.1:${port}/postgres`,
    stop() {
      try {
        runAsPostgres(path.join(PG_BIN, "pg_ctl"), ["-D", dataDir, "-m", "immediate", "-w", "stop"]);
      } finally {
        rmSync(dataDir, { recursive: true, force: true });
      }
    },
  };
}
