/**
 * Road km computed in chunks that the command line's two threads share (`shared-distances.ts`)
 * must be exactly `lineDistances` — the haversine of `pairKm` (Sinnott 1984, "Virtues of the
 * haversine", Sky & Telescope 68(2):159) × circuity, or the uploaded km — whoever writes which
 * chunk, and even when a chunk taken by the other thread is never written. The travel costs and
 * nearest-site lists written beside them must be what each thread would have computed alone.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { buildLineProblems, lineDistances } from "~/engine/build-problem";
import { nearestSites } from "~/engine/nearest-sites";
import { parseScenario } from "~/engine/scenario";
import { computeSharedDistances, distanceWork } from "~/engine/shared-distances";
import { generateScenarioDocument, LARGE } from "../../bench/generate";

const demo = parseScenario(JSON.parse(readFileSync(new URL("../../../seed/demo-scenario.json", import.meta.url), "utf8")));
// 600 practices: three chunks of rows; the two-practice fixture's uploaded km stand in for travelKm.
const region = parseScenario(generateScenarioDocument({ ...LARGE, sources: 600, sites: 20, towns: 10, seed: 9 }));
const withMatrix = parseScenario(JSON.parse(readFileSync(new URL("./fixtures/two-practices-two-sites.json", import.meta.url), "utf8")));

describe("road km computed in shared chunks", () => {
  for (const [name, scenario] of [["the demo region (4 lines)", demo], ["600 × 20", region], ["an uploaded km matrix", withMatrix]] as const) {
    it(`${name}: one thread alone writes every chunk, equal to lineDistances`, () => {
      const shared = computeSharedDistances(scenario, distanceWork(scenario));
      const expected = lineDistances(scenario);
      for (const [lineId, km] of expected) expect(Array.from(shared.get(lineId) as Float64Array)).toEqual(Array.from(km));
    });
  }

  it("the problems built on the shared km use the shared travel costs and nearest-site lists, equal to their own", () => {
    for (const scenario of [demo, region]) {
      const work = distanceWork(scenario);
      const shared = computeSharedDistances(scenario, work);
      for (const { lineId, problem } of buildLineProblems(scenario, undefined, shared)) {
        const { travelCost, lists } = work.travel.get(lineId) as NonNullable<ReturnType<typeof work.travel.get>>;
        expect(problem.travelCost).toBe(travelCost);
        expect(Array.from(problem.travelCost)).toEqual(Array.from(problem.km, (km) => km / scenario.kmPerWeek));
        const own = nearestSites(problem.travelCost.slice(), problem.n, problem.m);
        const used = nearestSites(problem.travelCost, problem.n, problem.m);
        expect(used.sites).toBe(lists.sites);
        for (const key of ["sites", "costs", "count", "bound"] as const) expect(Array.from(used[key])).toEqual(Array.from(own[key]));
      }
    }
  });

  it("a thread arriving after every chunk is written takes none and gets the same km", () => {
    const work = distanceWork(region);
    const first = computeSharedDistances(region, work);
    const taken = Atomics.load(work.next, 0);
    const second = computeSharedDistances(region, work);
    expect(second).toBe(first);
    expect(Atomics.load(work.written, 0)).toBe(1);
    expect(Atomics.load(work.next, 0)).toBe(taken + 1);
  });

  it("a chunk the other thread took but never wrote is written after the wait", () => {
    const work = distanceWork(region);
    Atomics.add(work.next, 0, 1); // the other thread takes chunk 0 and stops
    const km = computeSharedDistances(region, work, 50);
    expect(Array.from(km.get("line1") as Float64Array)).toEqual(Array.from(lineDistances(region).get("line1") as Float64Array));
  });
});
