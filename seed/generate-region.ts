/**
 * Regenerates seed/region.geojson from seed/layout.ts: `npx tsx seed/generate-region.ts`.
 * The committed file is what the app loads; a test checks it matches this generator.
 */
import { writeFileSync } from "node:fs";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { buildRegion, formatRegion } from "./build-region";

const here = path.dirname(fileURLToPath(import.meta.url));
const target = path.join(here, "region.geojson");
writeFileSync(target, formatRegion(buildRegion()));
console.log(`Wrote ${path.relative(process.cwd(), target)}`);
