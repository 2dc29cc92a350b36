import { describe, expect, it } from "vitest";
import {
  capacityShares,
  denseRuleShares,
  nearestShares,
  sharesArray,
  solveCapacityShare,
  solveFixedShares,
  solveNearest,
} from "~/engine/fixed-rules";
import { seededRandom } from "../../support/random";
import { lineProblem, mmcSite, mmcWait, randomProblem } from "./rules-support";

describe("nearest with balking: one M/M/1 site", () => {
  // Edelson & Hildebrand (1975) "Congestion tolls for Poisson queuing processes", Econometrica
  // 43(1):81–92, adapted to our units (CHECKS.md): μ = 8/wk, demand 10/wk, sharp outside cost
  // o = 1 wk, 0 km. With one site the nearest rule leaves patients the same choice as free choice:
  // join iff Wq(λ) = λ/(μ(μ − λ)) ≤ o, so λ = oμ²/(1 + oμ) = 64/9, 26/9 balk, total cost 10.
  const problem = lineProblem({ demand: [10], outsideCost: [1], km: [[0]], kmPerWeek: 15, sites: [mmcSite(1, 8)] });
  const result = solveNearest(problem);

  it("reproduces the equilibrium inflow 64/9 and 26/9 balking (tolerance 1e-9: bisection to 1e-13 of capacity)", () => {
    expect(result.diagnostics.converged).toBe(true);
    expect(result.siteInflow[0]).toBeCloseTo(64 / 9, 9);
    expect(result.allocation.balked[0]).toBeCloseTo(26 / 9, 9);
    expect(result.siteWait[0]).toBeCloseTo(1, 9);
  });

  it("has total cost 10 and a relative gap near zero", () => {
    expect(result.totalCost).toBeCloseTo(10, 8);
    expect(result.diagnostics.relativeGap).toBeLessThan(1e-9);
  });
});

describe("nearest with a spread outside option: one M/M/1 site", () => {
  // [derived] from PRODUCT.md's model: μ = 8, demand 10, reservation costs uniform on [0.5, 1.5]
  // (o = 1, s = 0.5). At wait w ∈ [0.5, 1.5] a share 1.5 − w stays: x = 10(1.5 − w) with
  // w = x/(8(8 − x)) gives 8x² − 194x + 960 = 0, x = (97 − √1729)/8 = 6.927336…, and the balkers
  // (lowest reservation costs) cost 0.5·b + 0.05·b² with b = 10 − x.
  const problem = lineProblem({
    demand: [10],
    outsideCost: [1],
    outsideSpread: [0.5],
    km: [[0]],
    kmPerWeek: 15,
    sites: [mmcSite(1, 8)],
  });
  const result = solveNearest(problem);
  const inflow = (97 - Math.sqrt(1729)) / 8;
  const wait = inflow / (8 * (8 - inflow));
  const balked = 10 - inflow;

  it("reproduces the closed-form inflow (tolerance 1e-9)", () => {
    expect(result.diagnostics.converged).toBe(true);
    expect(result.siteInflow[0]).toBeCloseTo(inflow, 9);
    expect(result.siteWait[0]).toBeCloseTo(wait, 9);
  });

  it("costs served × wait + balkers' reservation costs (tolerance 1e-8)", () => {
    expect(result.totalCost).toBeCloseTo(inflow * wait + 0.5 * balked + 0.05 * balked * balked, 8);
    expect(result.diagnostics.relativeGap).toBeLessThan(1e-9);
  });
});

describe("two practices, two sites (CHECKS.md instance)", () => {
  // The CHECKS.md two-practice instance ([derived] from PRODUCT.md): demand (2.0, 1.5)/wk; sites
  // M/M/2 and M/M/3 with μ = 1/wk per team; km [[1,5],[6,2]] with κ = 10; sharp outside cost 2.
  const spec = {
    demand: [2.0, 1.5],
    outsideCost: [2, 2],
    km: [
      [1, 5],
      [6, 2],
    ],
    kmPerWeek: 10,
    sites: [mmcSite(2, 1), mmcSite(3, 1)],
  };

  it("nearest: site 1 is pushed to the outside cost, so W₁ = 2 − 0.1 and λ₁ = √(7.6/2.9)", () => {
    // [derived]: M/M/2, μ = 1: Wq = λ²/(4 − λ²) (C = 2ρ²/(1 + ρ); Kleinrock 1975, from memory).
    // λ²/(4 − λ²) = 1.9 ⇒ λ₁ = √(7.6/2.9) = 1.618893…; site 2 gets 1.5 with Wq = 3/19 (Erlang C,
    // P0 = 1/4.75), whose cost 3/19 + 0.2 < 2, so nobody there balks.
    // Total cost = 2·2 (served at cost 2 and balkers at 2) + 1.5·(3/19 + 0.2).
    const result = solveNearest(lineProblem(spec));
    const lambda1 = Math.sqrt(7.6 / 2.9);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.siteInflow[0]).toBeCloseTo(lambda1, 9);
    expect(result.allocation.balked[0]).toBeCloseTo(2 - lambda1, 9);
    expect(result.siteInflow[1]).toBeCloseTo(1.5, 12);
    expect(result.siteWait[1]).toBeCloseTo(3 / 19, 12);
    expect(result.totalCost).toBeCloseTo(4 + 1.5 * (3 / 19 + 0.2), 8);
  });

  it("capacityShare: every practice splits 2 : 3 over the sites", () => {
    // Capacities cμ = 2 and 3, so each practice sends 2/5 and 3/5: inflows 1.4 and 2.1; costs
    // stay below 2 so nobody balks. Waits by Erlang C (M/M/2 at ρ = 0.7: C = 2ρ²/(1+ρ) = 0.98/1.7,
    // Wq = C/0.6; M/M/3 at ρ = 0.7 from Erlang's sum), costs = Σ flow × (wait + km/10).
    const problem = lineProblem(spec);
    const shares = capacityShares(problem);
    expect(Array.from(shares)).toEqual([0.4, 0.6, 0.4, 0.6]);
    const result = solveCapacityShare(problem);
    const wait1 = 0.98 / 1.7 / 0.6;
    const wait2 = mmcWait(3, 1, 2.1);
    expect(result.siteInflow[0]).toBeCloseTo(1.4, 12);
    expect(result.siteInflow[1]).toBeCloseTo(2.1, 12);
    expect(result.siteWait[0]).toBeCloseTo(wait1, 12);
    expect(result.allocation.flow[2]).toBeCloseTo(0.6, 12);
    const expected = 0.8 * (wait1 + 0.1) + 1.2 * (wait2 + 0.5) + 0.6 * (wait1 + 0.6) + 0.9 * (wait2 + 0.2);
    expect(result.totalCost).toBeCloseTo(expected, 10);
  });
});

describe("a fixed rule can have no steady state while another does", () => {
  // Nearest sends both practices (no outside option) to site 1: 4/wk against a capacity of 3/wk.
  // Capacity share sends 3/7 of 4 = 1.714 to site 1 and 2.286 to site 2 (capacity 4): both fine.
  const problem = lineProblem({
    demand: [2.5, 1.5],
    outsideCost: [Infinity, Infinity],
    km: [
      [1, 9],
      [2, 8],
    ],
    kmPerWeek: 15,
    sites: [mmcSite(3, 1), mmcSite(2, 2)],
  });

  it("nearest reports the overloaded site and the shortfall instead of throwing", () => {
    const result = solveNearest(problem);
    expect(result.diagnostics.converged).toBe(false);
    expect(result.overloads).toEqual([{ siteId: "P1", demand: 4, capacity: 3, shortfall: 1 }]);
    expect(result.diagnostics.warnings).toEqual([
      'No steady state under nearest at site "P1": 4.00 referrals/week with no outside option are sent to a routine ' +
        "capacity of 3.00/week (short by 1.00 referrals/week).",
    ]);
    expect(result.siteWait[0]).toBe(Infinity);
    expect(result.totalCost).toBe(Infinity);
  });

  it("capacityShare has a steady state with no balking", () => {
    const result = solveCapacityShare(problem);
    expect(result.diagnostics.converged).toBe(true);
    expect(result.siteInflow[0]).toBeCloseTo((4 * 3) / 7, 12);
    expect(Array.from(result.allocation.balked)).toEqual([0, 0]);
  });

  it("a source with no allowed site and no outside option is named", () => {
    const isolated = lineProblem({
      demand: [1, 1],
      outsideCost: [Infinity, Infinity],
      km: [
        [1, 2],
        [NaN, NaN],
      ],
      kmPerWeek: 15,
      sites: [mmcSite(3, 1), mmcSite(2, 2)],
    });
    const result = solveNearest(isolated);
    expect(result.diagnostics.converged).toBe(false);
    expect(result.diagnostics.warnings).toContain(
      'No steady state under nearest for source "S2": it has no allowed site and no outside option (1.00 referrals/week unserved).',
    );
  });
});

describe("nearest picks the fewest km among allowed pairs", () => {
  it("skips disallowed pairs and breaks ties by site order", () => {
    const problem = lineProblem({
      demand: [1, 1, 1],
      outsideCost: [5, 5, 5],
      km: [
        [3, 2, 2],
        [NaN, 7, 6],
        [4, 4, 9],
      ],
      kmPerWeek: 15,
      sites: [mmcSite(1, 4), mmcSite(1, 4), mmcSite(1, 4)],
    });
    expect(Array.from(nearestShares(problem))).toEqual([0, 1, 0, 0, 0, 1, 1, 0, 0]);
  });

  // The rule reads the sites tied at the lowest travel cost from each source's nearest-site list;
  // the reference is the rule's definition, a scan of every site (fewest km, ties to the site
  // listed first, disallowed pairs skipped). Km on a coarse grid make ties common; with 60 sites
  // (lists hold 48) and, for some sources, more than 48 sites at the least distance, the tie can
  // run past a list's end.
  it("picks the same site as a scan of every site, with ties, disallowed pairs and long lists", () => {
    const random = seededRandom(17);
    for (let trial = 0; trial < 20; trial++) {
      const n = 12;
      const m = 60;
      const km = Array.from({ length: n }, (_, i) =>
        Array.from({ length: m }, () => (random() < 0.1 ? NaN : i % 4 === 0 && random() < 0.9 ? 5 : Math.round(random() * 12) / 2)),
      );
      const problem = lineProblem({ demand: new Array(n).fill(1), outsideCost: new Array(n).fill(5), km, kmPerWeek: 15, sites: Array.from({ length: m }, () => mmcSite(1, 4)) });
      const expected = new Array<number>(n * m).fill(0);
      for (let i = 0; i < n; i++) {
        let best = -1;
        for (let j = 0; j < m; j++) if (Number.isFinite(km[i][j]) && (best < 0 || km[i][j] < km[i][best])) best = j;
        if (best >= 0) expected[i * m + best] = 1;
      }
      expect(Array.from(nearestShares(problem))).toEqual(expected);
    }
  });
});

describe("many streams meeting at one sharp threshold (one M/M/1 site)", () => {
  // [derived] from PRODUCT.md's model, extending the Edelson & Hildebrand (1975) instance above
  // (Econometrica 43(1):81–92; μ = 8/wk, sharp outside cost o = 1 wk): 20 practices of 1/wk each.
  // Group A (10 practices, 0 km) would stay while the wait is below 1; group B (10 practices,
  // 7.5 km at κ = 15, i.e. 0.5 wk of travel) while it is below 0.5. At a wait just above 0.5
  // group A alone (10/wk) still exceeds W⁻¹(0.5) = 6.4 (x/(8(8 − x)) = 0.5), so the wait rises
  // to A's threshold: x = W⁻¹(1) = 64/9, split evenly over A, and all of B balks. Total cost:
  // served at 1 + A's balkers at 1 + B's at 1 = 20. The root search must find the threshold
  // from many streams (the two sides' exact models meet there), not just from one.
  const km = [...Array.from({ length: 10 }, () => [0]), ...Array.from({ length: 10 }, () => [7.5])];
  const problem = lineProblem({ demand: Array(20).fill(1), outsideCost: Array(20).fill(1), km, kmPerWeek: 15, sites: [mmcSite(1, 8)] });
  for (const [name, solve] of [["nearest", solveNearest], ["capacityShare", solveCapacityShare]] as const) {
    it(`${name}: inflow 64/9 shared by group A, group B balks, total cost 20 (tolerance 1e-9)`, () => {
      const result = solve(problem);
      expect(result.diagnostics.converged).toBe(true);
      expect(result.siteInflow[0]).toBeCloseTo(64 / 9, 9);
      expect(result.siteWait[0]).toBeCloseTo(1, 9);
      for (let i = 0; i < 10; i++) expect(result.allocation.flow[i]).toBeCloseTo(64 / 90, 9);
      for (let i = 10; i < 20; i++) expect(result.allocation.balked[i]).toBeCloseTo(1, 12);
      expect(result.totalCost).toBeCloseTo(20, 8);
    });
  }
});

describe("properties of the fixed rules on random instances", () => {
  // Balking equilibrium (Wardrop 1952, Proc. Inst. Civil Engineers 1(3):325–378, from memory,
  // applied to the stay-or-leave decision): a stream with patients staying costs no more than
  // the upper end of the reservation range, a stream with patients leaving no less than the lower end;
  // with a sharp threshold, all-stay below o and all-leave above o.
  for (const seed of [1, 2, 3, 4, 5, 6]) {
    for (const spread of [false, true]) {
      it(`seed ${seed}, ${spread ? "spread" : "sharp"} outside options: balking decisions are in equilibrium`, () => {
        const problem = randomProblem(seed, 12, 4, { spread });
        for (const result of [solveNearest(problem), solveCapacityShare(problem)]) {
          expect(result.diagnostics.converged).toBe(true);
          expect(result.diagnostics.relativeGap).toBeLessThan(1e-8);
          const { n, m } = problem;
          const shares = sharesArray(n, m, result.shares);
          for (let i = 0; i < n; i++) {
            const o = problem.outsideCost[i];
            const s = problem.outsideSpread[i];
            for (let j = 0; j < m; j++) {
              const stream = problem.demand[i] * shares[i * m + j];
              if (stream === 0) continue;
              const staying = result.allocation.flow[i * m + j];
              const cost = result.siteWait[j] + problem.travelCost[i * m + j];
              const slack = 1e-7;
              if (staying > 1e-9 * stream) expect(cost).toBeLessThanOrEqual(o * (1 + s) + slack);
              if (staying < stream * (1 - 1e-9)) expect(cost).toBeGreaterThanOrEqual(o * (1 - s) - slack);
              if (s > 0 && cost > o * (1 - s) + slack && cost < o * (1 + s) - slack) {
                expect(staying / stream).toBeCloseTo(1 - (cost - o * (1 - s)) / (2 * o * s), 6);
              }
            }
          }
          // Inflows are the sums of flows; flows + balking = demand.
          for (let j = 0; j < m; j++) {
            let inflow = 0;
            for (let i = 0; i < n; i++) inflow += result.allocation.flow[i * m + j];
            expect(result.siteInflow[j]).toBeCloseTo(inflow, 12);
          }
          for (let i = 0; i < n; i++) {
            let served = 0;
            for (let j = 0; j < m; j++) served += result.allocation.flow[i * m + j];
            expect(served + result.allocation.balked[i]).toBeCloseTo(problem.demand[i], 10);
          }
        }
      });
    }
  }

  // Many streams per site (as on a national instance, where each site receives thousands):
  // the same equilibrium conditions, with sharp and spread outside options mixed.
  for (const seed of [31, 32, 33]) {
    it(`seed ${seed}, 300 practices × 5 sites, mixed outside options: capacity share's balking is in equilibrium`, () => {
      const base = randomProblem(seed, 300, 5, { spread: true, captiveShare: 0.1 });
      const problem = { ...base, outsideSpread: base.outsideSpread.map((s, i) => (i % 3 === 0 ? 0 : s)) };
      const result = solveCapacityShare(problem);
      expect(result.diagnostics.converged).toBe(true);
      expect(result.diagnostics.relativeGap).toBeLessThan(1e-8);
      const { n, m } = problem;
      const shares = sharesArray(n, m, result.shares);
      for (let j = 0; j < m; j++) {
        let inflow = 0;
        for (let i = 0; i < n; i++) {
          const stream = problem.demand[i] * shares[i * m + j];
          const staying = result.allocation.flow[i * m + j];
          const cost = result.siteWait[j] + problem.travelCost[i * m + j];
          const o = problem.outsideCost[i];
          const s = problem.outsideSpread[i];
          if (staying > 1e-9 * stream) expect(cost).toBeLessThanOrEqual(o * (1 + s) + 1e-7);
          if (staying < stream * (1 - 1e-9)) expect(cost).toBeGreaterThanOrEqual(o * (1 - s) - 1e-7);
          inflow += staying;
        }
        // Wardrop's condition at the site's own wait: the inflow is what its patients' choices give.
        expect(result.siteInflow[j]).toBeCloseTo(inflow, 10);
        expect(result.siteWait[j]).toBeCloseTo(problem.sites[j].wait(inflow), 10);
      }
    });
  }

  it("waits rise with demand under a fixed rule (Lee & Cohen 1983, Wq increasing in λ, from memory)", () => {
    const base = randomProblem(11, 10, 3, { captiveShare: 0.5 });
    const heavier = { ...base, demand: base.demand.map((d) => d * 1.1) };
    const light = solveNearest(base);
    const heavy = solveNearest(heavier);
    for (let j = 0; j < base.m; j++) {
      if (light.siteInflow[j] > 0 && Number.isFinite(heavy.siteWait[j])) {
        expect(heavy.siteWait[j]).toBeGreaterThanOrEqual(light.siteWait[j]);
      }
    }
  });

  // The solver reads a rule's shares row by row; an n·m array of the same shares (a what-if's
  // form) must give the very same solution. Some pairs are not allowed, and one practice has no
  // allowed site at all: its patients balk (no steady state when it has no outside option).
  for (const seed of [41, 42]) {
    it(`seed ${seed}: shares given as an n·m array solve exactly as the rule's own rows`, () => {
      const base = randomProblem(seed, 40, 6, { spread: seed === 42, captiveShare: 0.2 });
      const travelCost = base.travelCost.map((cost, pair) => (pair % 7 === 3 || Math.floor(pair / base.m) === 5 ? Infinity : cost));
      const problem = { ...base, travelCost, outsideCost: base.outsideCost.map((o, i) => (i === 5 ? 2 : o)) };
      for (const [rule, solve, dense] of [
        ["nearest", solveNearest, nearestShares],
        ["capacityShare", solveCapacityShare, capacityShares],
      ] as const) {
        const own = solve(problem);
        const fromArray = solveFixedShares(problem, denseRuleShares(problem.m, dense(problem)), rule);
        expect(Array.from(fromArray.allocation.flow)).toEqual(Array.from(own.allocation.flow));
        expect(Array.from(fromArray.allocation.balked)).toEqual(Array.from(own.allocation.balked));
        expect(Array.from(fromArray.siteWait)).toEqual(Array.from(own.siteWait));
        expect(fromArray.totalCost).toBe(own.totalCost);
        expect(sharesArray(problem.n, problem.m, own.shares)).toEqual(dense(problem));
        // The practice with no allowed site is sent nowhere: all its patients balk.
        expect(own.allocation.balked[5]).toBeCloseTo(problem.demand[5], 12);
      }
    });
  }
});
