/**
 * Building per-line problems from the exchange format: distances, travel costs, urgent
 * referrals at the nearest site, period factors and the no-steady-state check.
 */
import { describe, expect, it } from "vitest";
import { EARTH_RADIUS_KM, buildLineProblem, buildLineProblems, greatCircleKm, pairKm, scaleTeams } from "~/engine/build-problem";
import { parseScenario } from "~/engine/scenario";
import { siteMetrics } from "~/engine/site-wait";

describe("greatCircleKm (haversine)", () => {
  // Williams, E., "Aviation Formulary" (great-circle distance worked example) [mem]: LAX
  // (33°57′N, 118°24′W) to JFK (40°38′N, 73°47′W) is d = 0.623585 rad (2144 nautical miles).
  // The example prints six decimals, so the central angle is checked to 5e-7 rad.
  it("reproduces the published LAX–JFK central angle", () => {
    const km = greatCircleKm(33 + 57 / 60, -(118 + 24 / 60), 40 + 38 / 60, -(73 + 47 / 60));
    expect(Math.abs(km / EARTH_RADIUS_KM - 0.623585)).toBeLessThan(5e-7);
    // 1 nautical mile = 1 arc minute: 0.623585 rad × (180·60/π) = 2143.7 → "2144 nm".
    expect(Math.round(((km / EARTH_RADIUS_KM) * 180 * 60) / Math.PI)).toBe(2144);
  });

  // Exact identities of the sphere (Sinnott 1984, "Virtues of the haversine", Sky & Telescope
  // 68(2):159): along a meridian the distance is R·Δφ; a quarter of the equator is πR/2;
  // antipodes are πR apart. Tolerance 1e-9 km: only rounding separates the two sides — except at
  // antipodes, where the haversine is known to lose digits (h → 1), so 1e-3 km there.
  it("matches arc lengths along a meridian, the equator and between antipodes", () => {
    expect(greatCircleKm(54, 2, 55, 2)).toBeCloseTo((Math.PI / 180) * EARTH_RADIUS_KM, 9);
    expect(greatCircleKm(0, 0, 0, 90)).toBeCloseTo((Math.PI / 2) * EARTH_RADIUS_KM, 9);
    expect(greatCircleKm(10, 20, -10, -160)).toBeCloseTo(Math.PI * EARTH_RADIUS_KM, 3);
    expect(greatCircleKm(54.7, 2.1, 54.7, 2.1)).toBe(0);
  });
});

function scenarioJson() {
  return {
    schema: "equilibra/scenario@1",
    kmPerWeek: 10,
    circuity: 1.4,
    serviceLines: [{ id: "ortho", standardWeeks: 18 }, { id: "derm", standardWeeks: 6 }],
    sources: [
      { id: "S1", lat: 54.0, lon: 2.0, demand: { ortho: 1.5, derm: 1 }, outsideCost: { ortho: 20 }, outsideSpread: 0.25, urgentShare: { ortho: 1 / 3 } },
      { id: "S2", lat: 54.5, lon: 2.0, demand: { ortho: 2 }, outsideCost: 30 },
      { id: "S3", lat: 54.2, lon: 2.0, demand: { derm: 0.5 } },
    ],
    providers: [
      { id: "P1", lat: 54.1, lon: 2.0, lines: { ortho: { teams: 2, ratePerTeam: 1 } } },
      { id: "P2", lat: 54.6, lon: 2.0, lines: { ortho: { teams: 3, ratePerTeam: 1, minWeekly: 0.5, maxWeekly: 2 }, derm: { teams: 2, ratePerTeam: 2 } } },
    ],
    travelKm: { S2: { P1: 50 } },
  };
}

describe("buildLineProblem", () => {
  it("uses great-circle km × circuity, or the uploaded km, and km / kmPerWeek as travel cost", () => {
    const { problem } = buildLineProblem(parseScenario(scenarioJson()), "ortho");
    expect(problem.sourceIds).toEqual(["S1", "S2"]);
    expect(problem.siteIds).toEqual(["P1", "P2"]);
    const oneTenthDegree = (0.1 * Math.PI * EARTH_RADIUS_KM) / 180;
    expect(problem.km[0]).toBeCloseTo(oneTenthDegree * 1.4, 9); // S1→P1, 0.1° of latitude
    expect(problem.km[1]).toBeCloseTo(6 * oneTenthDegree * 1.4, 9); // S1→P2, 0.6°
    expect(problem.km[2]).toBe(50); // S2→P1 from travelKm, not 4 × 0.1° × 1.4
    expect(problem.km[3]).toBeCloseTo(oneTenthDegree * 1.4, 9);
    for (let pair = 0; pair < 4; pair++) expect(problem.travelCost[pair]).toBeCloseTo(problem.km[pair] / 10, 12);
  });

  it("sends urgent referrals to the nearest site as a fixed inflow and leaves the rest to the rules", () => {
    const build = buildLineProblem(parseScenario(scenarioJson()), "ortho");
    expect(build.urgentSite[0]).toBe(0);
    expect(build.urgentDemand[0]).toBeCloseTo(0.5, 12);
    expect(build.urgentSite[1]).toBe(-1);
    expect(Array.from(build.urgentInflow)).toEqual([0.5, 0]);
    expect(build.problem.demand[0]).toBeCloseTo(1.0, 12);
    expect(build.problem.demand[1]).toBe(2);
  });

  // Cobham (1954) "Priority assignment in waiting line problems", JORSA 2(1):70–76: M/M/2, μ=1,
  // urgent 0.5 and routine 1.0 per week → routine wait 12/7, urgent 3/7 (CHECKS.md). Here the
  // urgent half-referral of S1 lands on P1 (its nearest site) and the routine class queues behind it.
  it("gives the routine class the priority wait behind the urgent inflow", () => {
    const build = buildLineProblem(parseScenario(scenarioJson()), "ortho");
    const site = build.problem.sites[0];
    expect(site.capacity).toBeCloseTo(1.5, 12);
    expect(site.wait(1)).toBeCloseTo(12 / 7, 10);
    const metrics = siteMetrics(build.siteSpecs[0], build.urgentInflow[0], 1, 18);
    expect(metrics.urgentWait).toBeCloseTo(3 / 7, 10);
    expect(metrics.meanWait).toBeCloseTo(9 / 7, 10); // conservation law: FCFS M/M/2 at λ=1.5
  });

  it("carries outside options, spreads and contract volumes", () => {
    const { problem } = buildLineProblem(parseScenario(scenarioJson()), "ortho");
    expect(Array.from(problem.outsideCost)).toEqual([20, 30]);
    expect(Array.from(problem.outsideSpread)).toEqual([0.25, 0]);
    expect(Array.from(problem.minWeekly)).toEqual([Number.NaN, 0.5]);
    expect(Array.from(problem.maxWeekly)).toEqual([Number.NaN, 2]);
    const derm = buildLineProblem(parseScenario(scenarioJson()), "derm").problem;
    // S1 names an outside cost only for ortho; S3 none at all: neither balks in dermatology.
    expect(Array.from(derm.outsideCost)).toEqual([Infinity, Infinity]);
    expect(derm.sourceIds).toEqual(["S1", "S3"]);
    expect(derm.siteIds).toEqual(["P2"]);
  });

  it("builds one problem per line in the scenario's order", () => {
    expect(buildLineProblems(parseScenario(scenarioJson())).map((build) => build.lineId)).toEqual(["ortho", "derm"]);
  });
});

describe("periods", () => {
  it("scales capacity exactly by the teams factor while keeping whole teams", () => {
    expect(scaleTeams(2, 1, 0.85)).toEqual({ teams: 2, ratePerTeam: 0.85 });
    expect(scaleTeams(10, 2, 0.6)).toEqual({ teams: 6, ratePerTeam: 2 });
    const small = scaleTeams(1, 3, 0.4);
    expect(small.teams).toBe(1);
    expect(small.ratePerTeam).toBeCloseTo(1.2, 12);
    expect(scaleTeams(3, 5, 1)).toEqual({ teams: 3, ratePerTeam: 5 });
  });

  it("applies demand and per-line team factors", () => {
    const json = { ...scenarioJson(), periods: [{ id: "aug", weeks: 4, demandFactor: 0.5, teamsFactor: { ortho: 0.5 } }] };
    const scenario = parseScenario(json);
    const build = buildLineProblem(scenario, "ortho", scenario.periods?.[0]);
    expect(build.problem.demand[1]).toBe(1);
    expect(build.urgentInflow[0]).toBeCloseTo(0.25, 12);
    expect(build.fullCapacity[0]).toBeCloseTo(1, 12); // 2 teams × 1 × 0.5
    expect(build.fullCapacity[1]).toBeCloseTo(1.5, 12);
    const derm = buildLineProblem(scenario, "derm", scenario.periods?.[0]);
    expect(derm.fullCapacity[0]).toBe(4); // derm not named in teamsFactor: unchanged
  });
});

describe("no steady state", () => {
  it("names the line, the sites and the shortfall when captive demand exceeds capacity", () => {
    const json = scenarioJson();
    json.sources[2].demand = { derm: 3.5 }; // derm: 1 + 3.5 captive vs 4/week at P2
    const build = buildLineProblem(parseScenario(json), "derm");
    expect(build.shortfalls).toHaveLength(1);
    expect(build.shortfalls[0].siteIds).toEqual(["P2"]);
    expect(build.shortfalls[0].demand).toBeCloseTo(4.5, 12);
    expect(build.shortfalls[0].capacity).toBeCloseTo(4, 12);
    expect(build.shortfalls[0].shortfall).toBeCloseTo(0.5, 12);
  });

  it("reports a site whose urgent inflow alone reaches its capacity", () => {
    const json = scenarioJson();
    json.sources[0].demand.ortho = 6; // urgent 2 at P1, whose capacity is 2
    const [shortfall] = buildLineProblem(parseScenario(json), "ortho").shortfalls;
    expect(shortfall.siteIds).toEqual(["P1"]);
    expect(shortfall.demand).toBeCloseTo(2, 12);
    expect(shortfall.shortfall).toBeCloseTo(0, 12);
  });

  it("finds none when every source has an outside option", () => {
    const json = scenarioJson();
    json.sources[1].demand.ortho = 50;
    expect(buildLineProblem(parseScenario(json), "ortho").shortfalls).toEqual([]);
  });
});

describe("pairKm", () => {
  it("agrees with greatCircleKm × circuity on every pair and takes uploaded km where given", () => {
    const sources = [
      { id: "A", lat: 54.1, lon: -2.3 },
      { id: "B", lat: -33.9, lon: 151.2 },
      { id: "C", lat: 0, lon: 179.9 },
    ];
    const sites = [
      { id: "X", lat: 54.2, lon: -2.1 },
      { id: "Y", lat: 51.5, lon: -0.1 },
      { id: "Z", lat: 0, lon: -179.9 },
    ];
    const km = pairKm(sources, sites, 1.3, { B: { Y: 7 } });
    for (let i = 0; i < 3; i++) {
      for (let j = 0; j < 3; j++) {
        const expected = i === 1 && j === 1 ? 7 : greatCircleKm(sources[i].lat, sources[i].lon, sites[j].lat, sites[j].lon) * 1.3;
        expect(km[i * 3 + j]).toBeCloseTo(expected, 6);
      }
    }
  });
});
