/**
 * The demo region's committed data files: invented, on open sea, and with the structure and
 * figures the demo is specified with (DEMO.md; figures there are rounded national statistics).
 * Distances use the haversine formula (R = 6,371 km, the IUGG mean Earth radius), independent of
 * the flat grid the generator draws on.
 */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { parseScenario, type Scenario } from "../../app/engine/scenario";
import { ROLES } from "../../app/db/schema";
import { buildDemoScenario } from "../../seed/build-demo-scenario";
import { buildRegion, formatRegion } from "../../seed/build-region";
import { pointInPolygon } from "../../seed/geometry";
import { DEMO_PEOPLE } from "../../seed/people";
import { VARIANT_FILES, applyPatch, resolveVariant } from "../../seed/variants";

const regionText = readFileSync("seed/region.geojson", "utf8");
const region = JSON.parse(regionText) as {
  type: string;
  features: { properties: Record<string, unknown> & { kind: string; name: string }; geometry: { type: string; coordinates: unknown } }[];
};
const demoJson = JSON.parse(readFileSync("seed/demo-scenario.json", "utf8")) as Record<string, unknown>;
const demo = parseScenario(demoJson);

type LonLat = [number, number];

function haversineKm([lon1, lat1]: LonLat, [lon2, lat2]: LonLat): number {
  const rad = Math.PI / 180;
  const a = Math.sin(((lat2 - lat1) * rad) / 2) ** 2 + Math.cos(lat1 * rad) * Math.cos(lat2 * rad) * Math.sin(((lon2 - lon1) * rad) / 2) ** 2;
  return 2 * 6371 * Math.asin(Math.sqrt(a));
}

const polygonsOf = (kind: string) => region.features.filter((f) => f.properties.kind === kind && f.geometry.type === "Polygon");
const pointsOf = (kind: string) => region.features.filter((f) => f.properties.kind === kind && f.geometry.type === "Point");
const outerRing = (feature: (typeof region.features)[number]) => (feature.geometry.coordinates as LonLat[][])[0];
const land = outerRing(polygonsOf("land")[0]);
const boundary = outerRing(polygonsOf("boundary")[0]);
const at = (place: { lon: number; lat: number }): LonLat => [place.lon, place.lat];
const capacity = (scenario: Scenario, site: string, line: string) => {
  const siteLine = scenario.providers.find((p) => p.id === site)?.lines[line];
  return siteLine ? (siteLine.teams ?? 0) * (siteLine.ratePerTeam ?? 0) : 0;
};
const townLabel = (name: string) => pointsOf("town").find((f) => f.properties.name === name)?.geometry.coordinates as LonLat;

describe("the committed files", () => {
  it("are exactly what the generators produce (nobody edited one without the other)", () => {
    expect(regionText).toBe(formatRegion(buildRegion()));
    expect(demoJson).toEqual(buildDemoScenario());
  });

  it("are valid: the region map has the four kinds, the scenario passes the engine's parser", () => {
    expect(region.type).toBe("FeatureCollection");
    for (const feature of region.features) {
      expect(["land", "boundary", "town", "village"]).toContain(feature.properties.kind);
      expect(feature.properties.name).toMatch(/\S/);
    }
    expect(polygonsOf("land")).toHaveLength(1);
    expect(polygonsOf("boundary")).toHaveLength(1);
    expect(demo.schema).toBe("equilibra/scenario@1");
  });
});

describe("the region's geography", () => {
  it("lies on open sea, more than 1,000 km from any real coast", () => {
    // Nearest real land in each direction; coordinates from memory (atlas values, rounded to 0.01°).
    const realCoasts: [string, LonLat][] = [
      ["Flores, Azores", [-31.2, 39.45]],
      ["Corvo, Azores", [-31.1, 39.7]],
      ["Mizen Head, Ireland", [-9.82, 51.45]],
      ["Rockall", [-13.69, 57.6]],
      ["Cape Race, Newfoundland", [-53.07, 46.66]],
      ["Cape Farewell, Greenland", [-43.92, 59.78]],
    ];
    for (const position of land) {
      for (const [, coast] of realCoasts) expect(haversineKm(position, coast)).toBeGreaterThan(1000);
    }
  });

  it("puts every practice, site, town and village on the island, practices and the five local sites inside the commissioning area", () => {
    for (const source of demo.sources) {
      expect(pointInPolygon(at(source), land), source.id).toBe(true);
      expect(pointInPolygon(at(source), boundary), source.id).toBe(true);
    }
    for (const provider of demo.providers) expect(pointInPolygon(at(provider), land), provider.id).toBe(true);
    for (const id of ["ZZS1", "ZZS2", "ZZS3", "ZZS4", "ZZS5"]) {
      expect(pointInPolygon(at(demo.providers.find((p) => p.id === id) as Scenario["providers"][number]), boundary), id).toBe(true);
    }
    for (const id of ["ZZS6", "ZZS7"]) {
      expect(pointInPolygon(at(demo.providers.find((p) => p.id === id) as Scenario["providers"][number]), boundary), id).toBe(false);
    }
    for (const feature of [...pointsOf("town"), ...pointsOf("village")]) {
      expect(pointInPolygon(feature.geometry.coordinates as LonLat, land), feature.properties.name).toBe(true);
    }
    for (const town of polygonsOf("town")) {
      for (const vertex of outerRing(town)) expect(pointInPolygon(vertex, land), town.properties.name).toBe(true);
    }
  });

  it("has about 45 km × 50 km of land in the commissioning area and six towns of the specified sizes", () => {
    const lons = boundary.map(([lon]) => lon);
    const lats = boundary.map(([, lat]) => lat);
    const midLat = (Math.min(...lats) + Math.max(...lats)) / 2;
    const eastWest = haversineKm([Math.min(...lons), midLat], [Math.max(...lons), midLat]);
    const northSouth = haversineKm([lons[0], Math.min(...lats)], [lons[0], Math.max(...lats)]);
    expect(eastWest).toBeGreaterThan(40);
    expect(eastWest).toBeLessThan(60);
    expect(northSouth).toBeGreaterThan(45);
    expect(northSouth).toBeLessThan(60);

    const towns = polygonsOf("town").filter((f) => f.properties.inRegion === true);
    expect(towns.map((f) => [f.properties.character, f.properties.population])).toEqual([
      ["city", 165_000],
      ["industrial", 80_000],
      ["commuter", 60_000],
      ["coastal", 55_000],
      ["affluent-market", 40_000],
      ["rural-market", 22_000],
    ]);
    expect(pointsOf("village").length).toBeGreaterThanOrEqual(5);
  });

  it("places the cross-border hospital ~26 km beyond the rural market town and the regional centre 60–75 km from the city", () => {
    const site = (id: string) => at(demo.providers.find((p) => p.id === id) as Scenario["providers"][number]);
    expect(haversineKm(site("ZZS6"), townLabel("Tollbarrow"))).toBeGreaterThan(23);
    expect(haversineKm(site("ZZS6"), townLabel("Tollbarrow"))).toBeLessThan(29);
    expect(haversineKm(site("ZZS7"), townLabel("Halvercombe"))).toBeGreaterThan(60);
    expect(haversineKm(site("ZZS7"), townLabel("Halvercombe"))).toBeLessThan(75);
  });
});

describe("the demo scenario's figures", () => {
  it("has 40 practices and 7 sites with visibly synthetic codes, and ~480,000 people", () => {
    expect(demo.sources).toHaveLength(40);
    for (const source of demo.sources) expect(source.id).toMatch(/^ZZP\d{3}$/);
    expect(demo.providers.map((p) => p.id)).toEqual(["ZZS1", "ZZS2", "ZZS3", "ZZS4", "ZZS5", "ZZS6", "ZZS7"]);
    expect(demo.sources.reduce((sum, s) => sum + (s.population ?? 0), 0)).toBe(480_000);
  });

  it("has ~810 referrals a week: rate per 1,000 per year × 480,000 / 52 for each line", () => {
    const perLine = (line: string) => demo.sources.reduce((sum, s) => sum + (s.demand[line] ?? 0), 0);
    // DEMO.md: 28, 22, 20, 18 per 1,000 a year; rounding each practice to 0.01/week moves totals by < 0.2.
    expect(perLine("ortho")).toBeCloseTo((480 * 28) / 52, 0);
    expect(perLine("ophth")).toBeCloseTo((480 * 22) / 52, 0);
    expect(perLine("gensurg")).toBeCloseTo((480 * 20) / 52, 0);
    expect(perLine("derm")).toBeCloseTo((480 * 18) / 52, 0);
    const total = ["ortho", "ophth", "gensurg", "derm"].reduce((sum, line) => sum + perLine(line), 0);
    expect(Math.abs(total - 810)).toBeLessThan(5);
  });

  it("applies the town factors: older towns × 1.3 and the commuter town × 0.8 for orthopaedics and ophthalmology, relative to the city", () => {
    const perHead = (code: string, line: string) => {
      const source = demo.sources.find((s) => s.id === code) as Scenario["sources"][number];
      return (source.demand[line] ?? 0) / (source.population ?? 1);
    };
    for (const line of ["ortho", "ophth"]) {
      expect(perHead("ZZP026", line) / perHead("ZZP006", line)).toBeCloseTo(1.3, 2); // coastal town vs city
      expect(perHead("ZZP021", line) / perHead("ZZP006", line)).toBeCloseTo(0.8, 2); // commuter town vs city
    }
    expect(perHead("ZZP026", "gensurg") / perHead("ZZP006", "gensurg")).toBeCloseTo(1, 2);
  });

  it("clusters deprivation: two city estates and the coastal town in deciles 1–3, the affluent market town in 8–10", () => {
    const deciles = (codes: string[]) => codes.map((code) => demo.sources.find((s) => s.id === code)?.deprivationDecile as number);
    for (const decile of deciles(["ZZP001", "ZZP002", "ZZP003", "ZZP004", "ZZP005", "ZZP025", "ZZP026", "ZZP027", "ZZP028", "ZZP029"])) {
      expect(decile).toBeLessThanOrEqual(3);
    }
    for (const decile of deciles(["ZZP030", "ZZP031", "ZZP032", "ZZP033"])) expect(decile).toBeGreaterThanOrEqual(8);
  });

  it("sets urgent shares per line and an outside option of 18–27 weeks, lower for affluent practices, spread 0.3–0.5", () => {
    for (const source of demo.sources) {
      expect(source.urgentShare).toEqual({ ortho: 0.15, ophth: 0.2, gensurg: 0.15, derm: 0.1 });
      const costs = Object.values(source.outsideCost as Record<string, number>);
      expect(costs).toHaveLength(4);
      for (const cost of costs) {
        expect(cost).toBeGreaterThanOrEqual(18);
        expect(cost).toBeLessThanOrEqual(27);
      }
      expect(source.outsideSpread).toBeGreaterThanOrEqual(0.3);
      expect(source.outsideSpread).toBeLessThanOrEqual(0.5);
    }
    const byDecile = [...demo.sources].sort((a, b) => (a.deprivationDecile ?? 0) - (b.deprivationDecile ?? 0));
    for (let k = 1; k < byDecile.length; k++) {
      const previous = (byDecile[k - 1].outsideCost as Record<string, number>).ortho;
      expect((byDecile[k].outsideCost as Record<string, number>).ortho).toBeLessThanOrEqual(previous);
    }
  });

  it("has the capacities of DEMO.md as teams × rate, sites 1–7", () => {
    const expected: Record<string, number[]> = {
      ortho: [90, 60, 0, 30, 40, 15, 5],
      ophth: [70, 40, 30, 20, 35, 10, 0],
      gensurg: [80, 55, 10, 0, 25, 15, 0],
      derm: [60, 35, 40, 0, 0, 10, 0],
    };
    for (const [line, capacities] of Object.entries(expected)) {
      expect(demo.providers.map((p) => capacity(demo, p.id, line)), line).toEqual(capacities);
    }
    expect(demo.providers.find((p) => p.id === "ZZS5")?.sector).toBe("independent");
    expect(demo.providers.find((p) => p.id === "ZZS5")?.lines.ortho.maxWeekly).toBe(40);
  });

  it("gives the teaching hospital's orthopaedics a pathway whose entry stage matches the line's capacity and whose later stages keep up", () => {
    const ortho = demo.providers[0].lines.ortho;
    const stages = ortho.stages ?? [];
    expect(stages.map((stage) => stage.id)).toEqual(["clinic", "imaging", "theatre"]);
    expect(stages[0].teams * stages[0].ratePerTeam).toBe(90);
    // Traffic equations of the open Jackson network (Jackson 1957): visits v = e + v R.
    // Clinic 1 visit per referral; imaging 0.6; theatre 0.25 + 0.6 × 0.5 = 0.55.
    expect(ortho.routing).toEqual([[0, 0.6, 0.25], [0, 0, 0.5], [0, 0, 0]]);
    expect(0.6 * 90).toBeLessThan(stages[1].teams * stages[1].ratePerTeam);
    expect(0.55 * 90).toBeLessThan(stages[2].teams * stages[2].ratePerTeam);
  });

  it("has monthly periods with DEMO.md's demand and team factors", () => {
    const periods = demo.periods ?? [];
    expect(periods.map((p) => p.demandFactor)).toEqual([1.05, 1.0, 1.08, 0.95, 1.0, 1.02, 1.0, 0.88, 1.02, 1.05, 1.04, 0.82]);
    expect(periods.reduce((sum, p) => sum + p.weeks, 0)).toBeCloseTo(365 / 7, 3);
    expect(periods.find((p) => p.id === "aug")?.teamsFactor).toBe(0.9);
    expect(periods.find((p) => p.id === "dec")?.teamsFactor).toBe(0.6);
    expect(periods.find((p) => p.id === "jan")?.teamsFactor).toEqual({ ortho: 0.85, ophth: 1, gensurg: 0.85, derm: 1 });
    expect(demo.kmPerWeek).toBe(15);
    expect(demo.circuity).toBe(1.3);
  });
});

describe("the saved what-ifs", () => {
  const variant = (key: string) => parseScenario(resolveVariant(demoJson, key));

  it("are valid scenarios with their own names", () => {
    const names = VARIANT_FILES.map((key) => variant(key).name);
    expect(new Set(names).size).toBe(VARIANT_FILES.length);
  });

  it("(a) free choice keeps the demo's inputs", () => {
    const free = variant("free-choice");
    expect(free.choiceModel).toEqual({ kind: "wardrop" });
    expect({ ...free, name: demo.name }).toEqual(demo);
  });

  it("(b) central allocation limits journeys to 35 km; (c) adds 25 orthopaedic patients a week at the independent site", () => {
    const central = variant("central-allocation");
    expect(central.plan).toEqual({ maxUtilisation: 0.9, maxKm: 35 });
    const block = variant("independent-block");
    expect(block.plan).toEqual(central.plan);
    expect(capacity(block, "ZZS5", "ortho") - capacity(demo, "ZZS5", "ortho")).toBe(25);
    expect(block.providers.find((p) => p.id === "ZZS5")?.lines.ortho.maxWeekly).toBe(65);
    for (const site of ["ZZS1", "ZZS2", "ZZS4", "ZZS6", "ZZS7"]) expect(capacity(block, site, "ortho")).toBe(capacity(demo, site, "ortho"));
  });

  it("(d) winter puts the teaching hospital's surgical lines at 80% over December to February", () => {
    const winter = variant("winter-pressure");
    for (const line of ["ortho", "gensurg"]) expect(capacity(winter, "ZZS1", line)).toBeCloseTo(0.8 * capacity(demo, "ZZS1", line), 10);
    const stages = winter.providers[0].lines.ortho.stages ?? [];
    expect(stages[0].teams * stages[0].ratePerTeam).toBeCloseTo(0.8 * 90, 10);
    expect(capacity(winter, "ZZS1", "ophth")).toBe(capacity(demo, "ZZS1", "ophth"));
    expect(winter.periods?.map((p) => p.id)).toEqual(["jan", "feb", "dec"]);
  });

  it("patches arrays of identified elements by id and refuses an unknown id", () => {
    const base = { items: [{ id: "a", x: 1 }, { id: "b", x: 2 }] };
    expect(applyPatch(base, { items: { b: { x: 3 } } })).toEqual({ items: [{ id: "a", x: 1 }, { id: "b", x: 3 }] });
    expect(applyPatch(base, { items: { a: null } })).toEqual({ items: [{ id: "b", x: 2 }] });
    expect(applyPatch(base, { items: [{ id: "c" }] })).toEqual({ items: [{ id: "c" }] });
    expect(() => applyPatch(base, { items: { z: { x: 1 } } })).toThrow('patch.items.z: no element with id "z" to patch');
  });
});

describe("the demo people", () => {
  it("cover every role in the demo body, plus one person in a second body, with ids no GitHub account can have", () => {
    const home = DEMO_PEOPLE.filter((person) => person.organisation === "caldervey");
    expect(home.map((person) => person.role).sort()).toEqual([...ROLES].sort());
    expect(home.find((person) => person.role === "provider_manager")?.siteCodes).toEqual(["ZZS2"]);
    expect(DEMO_PEOPLE.filter((person) => person.organisation !== "caldervey")).toHaveLength(1);
    for (const person of DEMO_PEOPLE) {
      expect(person.githubId).not.toMatch(/^\d+$/);
      expect(person.email).toMatch(/@example\.org$/);
    }
  });
});
