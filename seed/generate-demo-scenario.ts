/**
 * Regenerates seed/demo-scenario.json from seed/layout.ts: `npx tsx seed/generate-demo-scenario.ts`.
 * The committed file is what the app loads; a test checks it matches this generator.
 */
import { writeFileSync } from "node:fs";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { buildDemoScenario } from "./build-demo-scenario";

const here = path.dirname(fileURLToPath(import.meta.url));
const target = path.join(here, "demo-scenario.json");
writeFileSync(target, `${JSON.stringify(buildDemoScenario(), null, 2)}\n`);
console.log(`Wrote ${path.relative(process.cwd(), target)}`);
