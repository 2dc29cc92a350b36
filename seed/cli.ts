/**
 * `npm run seed` loads the demo into the configured database (DATABASE_URL, else PGlite in
 * DATA_DIR) unless it is already there; `npm run seed -- --reset` deletes the demo organisations
 * and people and loads them again. Organisations created by real users are never touched.
 */
import { parseConfig } from "../app/config.server";
import { DatabaseLockedError, openDatabase, type OpenDatabase } from "../app/db/client.server";
import { demoPresent, resetDemo, seedDemo, type SeedSummary } from "./load";
import { DEMO_PEOPLE } from "./people";

const USAGE = "Usage: npm run seed [-- --reset]";

function report(summary: SeedSummary): void {
  console.log(`Loaded the demo: organisations ${Object.entries(summary.organisations).map(([slug, id]) => `${slug} (#${id})`).join(", ")}.`);
  console.log(`Scenarios: demo #${summary.demoScenarioId}, saved what-ifs ${Object.entries(summary.variantIds).map(([key, id]) => `${key} #${id}`).join(", ")}.`);
  console.log("Sign in through the local identity provider as:");
  for (const person of DEMO_PEOPLE) console.log(`  ${person.login.padEnd(20)} ${person.role}${person.siteCodes ? ` (${person.siteCodes.join(", ")})` : ""} — ${person.organisation}`);
}

async function main(argv: string[]): Promise<number> {
  const unknown = argv.filter((argument) => argument !== "--reset");
  if (unknown.length > 0) {
    console.error(`Unknown argument ${unknown.join(" ")}. ${USAGE}`);
    return 2;
  }
  const reset = argv.includes("--reset");
  const config = parseConfig();

  let open: OpenDatabase;
  try {
    open = await openDatabase({ url: config.DATABASE_URL, dataDir: config.DATA_DIR });
  } catch (error) {
    if (error instanceof DatabaseLockedError) {
      console.error(`Cannot seed: the embedded database is in use by a running Equilibra server.\n${error.message}`);
      return 1;
    }
    throw error;
  }
  try {
    if (reset) {
      report(await resetDemo(open.db));
    } else if (await demoPresent(open.db)) {
      console.log("The demo is already loaded; nothing changed. To load it afresh: npm run seed -- --reset");
    } else {
      report(await seedDemo(open.db));
    }
    return 0;
  } finally {
    await open.close();
  }
}

main(process.argv.slice(2)).then(
  (code) => process.exit(code),
  (error: unknown) => {
    console.error(error instanceof Error ? error.message : error);
    process.exit(1);
  },
);
