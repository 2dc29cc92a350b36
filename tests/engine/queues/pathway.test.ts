import { describe, expect, it } from "vitest";
import { mmcMetrics } from "../../../app/engine/erlang";
import { assertRoutingMatrix, jacksonNetwork, solveTrafficEquations, visitRatios } from "../../../app/engine/pathway";

const routing = [
  [0, 0.5, 0.2],
  [0.4, 0, 0.3],
  [0.1, 0, 0],
];
const stations = [
  { servers: 4, ratePerServer: 2 },
  { servers: 3, ratePerServer: 3 },
  { servers: 2, ratePerServer: 1.5 },
];

describe("open Jackson network", () => {
  it("CHECKS row: γ = (4, 0, 0) → λ = (800/153, 400/153, 280/153), ΣL = 6.133786, sojourn 1.533446 — Jackson (1957) Operations Research 5(4); Jackson (1963) Management Science 10(1) (from memory); values derived", () => {
    // Derivation: λ1 = 4 + 0.4λ2 + 0.1λ3, λ2 = 0.5λ1, λ3 = 0.2λ1 + 0.3λ2 = 0.35λ1
    // → λ1(1 − 0.2 − 0.035) = 4 → λ1 = 4/0.765 = 800/153. ΣL sums the M/M/c L of each station,
    // sojourn = ΣL/Σγ (Little). Printed to 6 decimals → tolerance 5e-7.
    const result = jacksonNetwork(stations, [4, 0, 0], routing);
    expect(result.arrivalRates[0]).toBeCloseTo(800 / 153, 12);
    expect(result.arrivalRates[1]).toBeCloseTo(400 / 153, 12);
    expect(result.arrivalRates[2]).toBeCloseTo(280 / 153, 12);
    expect(Math.abs(result.totalNumberInSystem - 6.133786)).toBeLessThan(5e-7);
    expect(Math.abs(result.meanSojourn - 1.533446)).toBeLessThan(5e-7);
    expect(result.stable).toBe(true);
  });

  it("each station's measures are the M/M/c measures at its traffic rate, and the mean queue wait is visit-weighted", () => {
    const result = jacksonNetwork(stations, [4, 0, 0], routing);
    let queueTime = 0;
    stations.forEach((station, j) => {
      const metrics = mmcMetrics(station.servers, station.ratePerServer, result.arrivalRates[j]);
      expect(result.numberInSystem[j]).toBeCloseTo(metrics.numberInSystem, 12);
      expect(result.queueWait[j]).toBeCloseTo(metrics.queueWait, 12);
      queueTime += result.arrivalRates[j] * metrics.queueWait;
    });
    expect(result.meanQueueWait).toBeCloseTo(queueTime / 4, 12);
  });

  it("visit ratios are the traffic rates per entering patient", () => {
    const visits = visitRatios(["first", "diagnostics", "treatment"], routing, "first");
    expect(Array.from(visits).map((v) => v * 153)).toEqual([
      expect.closeTo(200, 10),
      expect.closeTo(100, 10),
      expect.closeTo(70, 10),
    ]);
    // A stage no route reaches is never visited.
    const unreachable = visitRatios(["a", "b"], [[0, 0], [0.5, 0]], "a");
    expect(Array.from(unreachable)).toEqual([1, 0]);
    // A return loop: a → b always, b → a with probability 1/4 → 4/3 visits each.
    const loop = visitRatios(["a", "b"], [[0, 1], [0.25, 0]], "a");
    expect(loop[0]).toBeCloseTo(4 / 3, 14);
    expect(loop[1]).toBeCloseTo(4 / 3, 14);
  });

  it("reports an overloaded station as unstable with infinite measures", () => {
    const result = jacksonNetwork(stations, [7, 0, 0], routing);
    expect(result.stable).toBe(false);
    expect(result.totalNumberInSystem).toBe(Infinity);
  });

  it("solves larger random networks: the solution satisfies λ = γ + Rᵀλ", () => {
    let seed = 11;
    const random = () => ((seed = (seed * 16807) % 2147483647) / 2147483647);
    const size = 25;
    const matrix = Array.from({ length: size }, () => {
      const row = Array.from({ length: size }, () => (random() < 0.3 ? random() : 0));
      const sum = row.reduce((a, b) => a + b, 0);
      const keep = 0.9 * random();
      return row.map((p) => (sum > 0 ? (p / sum) * keep : 0));
    });
    const external = Array.from({ length: size }, () => random() * 3);
    const rates = solveTrafficEquations(external, matrix);
    for (let j = 0; j < size; j++) {
      let inflow = external[j];
      for (let i = 0; i < size; i++) inflow += rates[i] * matrix[i][j];
      expect(rates[j]).toBeCloseTo(inflow, 10);
    }
  });
});

describe("routing matrices patients can never leave, and other bad routing, are rejected precisely", () => {
  const cases: [label: string, call: () => unknown, message: string][] = [
    ["not one row per stage", () => assertRoutingMatrix([[0]], 2), "routing must have one row per stage (2), got 1 rows"],
    ["short row", () => assertRoutingMatrix([[0, 0], [0]], 2), "routing[1] must have one entry per stage (2), got 1"],
    ["negative entry", () => assertRoutingMatrix([[0, -0.1], [0, 0]], 2), "routing[0][1] must be a probability in [0, 1], got -0.1"],
    ["NaN entry", () => assertRoutingMatrix([[0, 0], [Number.NaN, 0]], 2), "routing[1][0] must be a probability in [0, 1], got NaN"],
    [
      "row above 1",
      () => assertRoutingMatrix([[0.7, 0.5], [0, 0]], 2, ["first", "scan"]),
      'routing[0] sums to 1.2: the probabilities of moving on from stage "first" (row 0) must add up to at most 1',
    ],
    [
      "closed loop (spectral radius 1, I − R singular)",
      () => solveTrafficEquations([1, 0, 0], [[0, 0.5, 0.5], [0, 0, 1], [0, 1, 0]]),
      "routing never lets patients leave the pathway from stage 0, stage 1, stage 2: every route from there loops back without an exit, so the traffic equations have no solution",
    ],
    [
      "a stage that only returns to itself",
      () => visitRatios(["clinic", "ward"], [[0, 0.2], [0, 1]], "clinic"),
      'routing never lets patients leave the pathway from stage "ward" (row 1): every route from there loops back without an exit, so the traffic equations have no solution',
    ],
    ["unknown entry", () => visitRatios(["a"], [[0]], "b"), 'entry must be one of the stage ids (a), got "b"'],
    ["negative external arrivals", () => solveTrafficEquations([1, -2], [[0, 0], [0, 0]]), "externalArrivals[1] must be a finite number of at least 0, got -2"],
    ["mismatched stations", () => jacksonNetwork(stations, [1, 0], routing), "externalArrivals must have one entry per station (3), got 2"],
    ["station servers", () => jacksonNetwork([{ servers: 1.5, ratePerServer: 1 }], [1], [[0]]), "stations[0].servers must be a positive integer, got 1.5"],
  ];
  it.each(cases)("%s", (_label, call, message) => {
    expect(call).toThrow(RangeError);
    expect(call).toThrow(message);
  });

  it("accepts a row that sums to 1 up to rounding from a file (0.333 + 0.333 + 0.334)", () => {
    expect(() => assertRoutingMatrix([[0.333, 0.333, 0.334], [0, 0, 0], [0, 0, 0]], 3)).not.toThrow();
  });
});
