import { describe, expect, it } from "vitest";
import { erlangC, mmcQueueWait, mmcQueueWaitSlope, mmcShareWaitingWithin } from "../../../app/engine/erlang";
import { lowPriorityQueueWait, lowPriorityQueueWaitSlope } from "../../../app/engine/priority";
import { createSiteWaitModel, siteMetrics, type SiteQueueSpec } from "../../../app/engine/site-wait";

/** A three-stage pathway: first appointment → diagnostics → treatment, with some returning. */
const pathwaySite: SiteQueueSpec = {
  teams: 4,
  ratePerTeam: 2,
  pathway: {
    stages: [
      { id: "first", teams: 4, ratePerTeam: 2 },
      { id: "diagnostics", teams: 3, ratePerTeam: 3, serviceCv: 0.5 },
      { id: "treatment", teams: 2, ratePerTeam: 1.5 },
    ],
    routing: [
      [0, 0.5, 0.2],
      [0.4, 0, 0.3],
      [0.1, 0, 0],
    ],
    entry: "first",
  },
};

const variants: [label: string, spec: SiteQueueSpec, urgent: number][] = [
  ["M/M/3", { teams: 3, ratePerTeam: 2 }, 0],
  ["M/M/1", { teams: 1, ratePerTeam: 5 }, 0],
  ["M/G/4 (cv 0.4)", { teams: 4, ratePerTeam: 1.5, serviceCv: 0.4 }, 0],
  ["M/M/2 behind urgent 0.5", { teams: 2, ratePerTeam: 1 }, 0.5],
  ["M/G/6 (cv 1.6) behind urgent 2", { teams: 6, ratePerTeam: 1.2, serviceCv: 1.6 }, 2],
  ["pathway", pathwaySite, 0],
  ["pathway behind urgent 0.8", pathwaySite, 0.8],
];

describe("createSiteWaitModel", () => {
  it("without urgent inflow and with cv = 1 is exactly M/M/c (Erlang C)", () => {
    const model = createSiteWaitModel({ teams: 3, ratePerTeam: 2 });
    expect(model.capacity).toBe(6);
    for (const x of [0, 1, 3.3, 5.9]) {
      // Same formula by a different arrangement (Cobham with u = 0): equal up to rounding.
      expect(model.wait(x)).toBeCloseTo(mmcQueueWait(3, 2, x), 14);
      expect(model.waitSlope(x)).toBeCloseTo(mmcQueueWaitSlope(3, 2, x), 12);
    }
    expect(model.wait(6)).toBe(Infinity);
    expect(model.waitSlope(7)).toBe(Infinity);
  });

  it("its closed-form curvature agrees with differences of its slope (one queue, urgent, cv, pathways)", () => {
    // Cobham's (1954) routine wait differentiated twice in closed form (site-wait.ts); the check is
    // a fourth-order central difference of the exact slope, accurate to ~1e-8 relative here.
    const specs: Array<[SiteQueueSpec, number]> = [
      [{ teams: 1, ratePerTeam: 3 }, 0],
      [{ teams: 2, ratePerTeam: 1 }, 0.5],
      [{ teams: 3, ratePerTeam: 2, serviceCv: 0.6 }, 0],
      [{ teams: 12, ratePerTeam: 0.8 }, 1.5],
      [{ teams: 40, ratePerTeam: 2 }, 10],
      [pathwaySite, 0],
      [pathwaySite, 0.8],
    ];
    for (const [spec, urgent] of specs) {
      const model = createSiteWaitModel(spec, urgent);
      for (const share of [0.05, 0.3, 0.7, 0.95]) {
        const x = share * model.capacity;
        const h = 1e-3 * Math.min(x, model.capacity - x);
        const difference =
          (-model.waitSlope(x + 2 * h) + 8 * model.waitSlope(x + h) - 8 * model.waitSlope(x - h) + model.waitSlope(x - 2 * h)) / (12 * h);
        const curvature = model.waitCurvature(x);
        expect(Math.abs(curvature - difference)).toBeLessThanOrEqual(1e-7 * Math.abs(difference) + 1e-12);
      }
      // At no load: the limits (B ≈ a^c/c!), compared with a one-sided difference from x = 0.
      const h = 1e-6 * model.capacity;
      const oneSided = (-3 * model.waitSlope(0) + 4 * model.waitSlope(h) - model.waitSlope(2 * h)) / (2 * h);
      expect(Math.abs(model.waitCurvature(0) - oneSided)).toBeLessThanOrEqual(1e-4 * Math.abs(oneSided) + 1e-9);
    }
    expect(createSiteWaitModel({ teams: 2, ratePerTeam: 1 }).waitCurvature(2)).toBe(Infinity);
  });

  it("behind urgent referrals gives the Cobham (1954) routine wait: c = 2, μ = 1, u = 0.5, x = 1 → 12/7", () => {
    // Cobham (1954) "Priority assignment in waiting line problems", JORSA 2(1):70–76.
    const model = createSiteWaitModel({ teams: 2, ratePerTeam: 1 }, 0.5);
    expect(model.capacity).toBe(1.5);
    expect(model.wait(1)).toBeCloseTo(12 / 7, 12);
  });

  it("its inlined hot path agrees with priority.ts to 1e-14 relative", () => {
    for (const [teams, rate, urgent] of [[1, 3, 0], [1, 3, 1], [4, 0.5, 0.6], [30, 2, 11], [200, 1, 50]] as const) {
      const model = createSiteWaitModel({ teams, ratePerTeam: rate }, urgent);
      for (const share of [0, 0.3, 0.9, 0.999]) {
        const x = share * model.capacity;
        const wait = lowPriorityQueueWait(teams, rate, urgent, x);
        const slope = lowPriorityQueueWaitSlope(teams, rate, urgent, x);
        expect(Math.abs(model.wait(x) - wait)).toBeLessThanOrEqual(1e-14 * wait);
        expect(Math.abs(model.waitSlope(x) - slope)).toBeLessThanOrEqual(1e-14 * slope);
      }
    }
  });

  it("applies the Allen–Cunneen factor (1 + cv²)/2 to the M/M/c wait", () => {
    const model = createSiteWaitModel({ teams: 2, ratePerTeam: 1, serviceCv: 0 });
    expect(model.wait(1.5)).toBeCloseTo(mmcQueueWait(2, 1, 1.5) / 2, 12);
  });

  it("a pathway's capacity is the largest entry rate every stage sustains given visit ratios", () => {
    // Visit ratios per entering patient (traffic equations with γ = e_first): 200/153, 100/153, 70/153.
    // Stage limits c·μ/v: 8·153/200 = 6.12, 9·153/100 = 13.77, 3·153/70 = 6.557 → 6.12.
    const model = createSiteWaitModel(pathwaySite);
    expect(model.capacity).toBeCloseTo((8 * 153) / 200, 12);
    const behindUrgent = createSiteWaitModel(pathwaySite, 1);
    expect(behindUrgent.capacity).toBeCloseTo((8 * 153) / 200 - 1, 12);
  });

  it("a pathway's wait is the visit-weighted sum of its stages' waits (ΣλWq/γ in Jackson's network)", () => {
    // With γ = 4 the stage rates are (800/153, 400/153, 280/153), i.e. 4 × visit ratios.
    const visits = [200 / 153, 100 / 153, 70 / 153];
    const expected =
      visits[0] * mmcQueueWait(4, 2, 4 * visits[0]) +
      visits[1] * mmcQueueWait(3, 3, 4 * visits[1]) * ((1 + 0.25) / 2) +
      visits[2] * mmcQueueWait(2, 1.5, 4 * visits[2]);
    expect(createSiteWaitModel(pathwaySite).wait(4)).toBeCloseTo(expected, 12);
  });

  it("capacity is 0 when urgent demand alone fills the site", () => {
    const model = createSiteWaitModel({ teams: 2, ratePerTeam: 1 }, 2.5);
    expect(model.capacity).toBe(0);
    expect(model.wait(0)).toBe(Infinity);
  });

  it.each(variants)("%s: waitSlope matches central differences of wait to 1e-6 relative", (_label, spec, urgent) => {
    const model = createSiteWaitModel(spec, urgent);
    for (const share of [0.02, 0.25, 0.5, 0.8, 0.95]) {
      const x = share * model.capacity;
      const h = 1e-5 * model.capacity * (1 - share);
      const numeric = (model.wait(x + h) - model.wait(x - h)) / (2 * h);
      expect(Math.abs(model.waitSlope(x) - numeric)).toBeLessThan(1e-6 * Math.abs(numeric) + 1e-12);
    }
  });

  it.each(variants)("%s: wait and x·wait(x) are increasing and convex on [0, capacity) (Lee & Cohen 1983; Grassmann 1983, from memory)", (_label, spec, urgent) => {
    // The optimum's marginal cost d(x·W)/dx = W + x·W' must be increasing: check W' ≥ 0 and
    // that both W' and W + x·W' rise along a fine grid (convexity via monotone derivatives).
    const model = createSiteWaitModel(spec, urgent);
    let previousSlope = -Infinity;
    let previousMarginal = -Infinity;
    for (let k = 0; k < 400; k++) {
      const x = (k / 400) * model.capacity;
      const slope = model.waitSlope(x);
      const marginal = model.wait(x) + x * slope;
      expect(slope).toBeGreaterThanOrEqual(0);
      expect(slope).toBeGreaterThanOrEqual(previousSlope * (1 - 1e-12));
      expect(marginal).toBeGreaterThanOrEqual(previousMarginal * (1 - 1e-12));
      previousSlope = slope;
      previousMarginal = marginal;
    }
  });

  it("treats a tiny negative inflow from rounding as 0 and rejects NaN", () => {
    const model = createSiteWaitModel({ teams: 2, ratePerTeam: 1 });
    expect(model.wait(-1e-15)).toBe(0);
    expect(() => model.wait(Number.NaN)).toThrow("routine inflow must be a number, got NaN");
  });
});

describe("siteMetrics", () => {
  it("M/M/c FCFS: exact share within the standard, 1 − C·exp(−(cμ − λ)t)", () => {
    const metrics = siteMetrics({ teams: 3, ratePerTeam: 2 }, 0, 5, 1.5);
    expect(metrics.shareWithinStandardExact).toBe(true);
    expect(metrics.shareWithinStandard).toBeCloseTo(mmcShareWaitingWithin(3, 2, 5, 1.5), 14);
    expect(metrics.utilisation).toBeCloseTo(5 / 6, 14);
    expect(metrics.routineWait).toBeCloseTo(mmcQueueWait(3, 2, 5), 14);
    expect(metrics.meanWait).toBeCloseTo(metrics.routineWait, 14);
  });

  it("priority: Cobham's class waits and the conservation law (mean = FCFS 9/7) — Cobham (1954)", () => {
    const metrics = siteMetrics({ teams: 2, ratePerTeam: 1 }, 0.5, 1, 1);
    expect(metrics.utilisation).toBeCloseTo(0.75, 14);
    expect(metrics.urgentWait).toBeCloseTo(3 / 7, 12);
    expect(metrics.routineWait).toBeCloseTo(12 / 7, 12);
    expect(metrics.meanWait).toBeCloseTo(9 / 7, 12);
    expect(metrics.shareWithinStandardExact).toBe(false);
    // Approximation: p = C(2, 1.5) = 9/14 (exact probability of waiting), mean 12/7.
    const p = erlangC(2, 1.5);
    expect(p).toBeCloseTo(9 / 14, 12);
    expect(metrics.shareWithinStandard).toBeCloseTo(1 - p * Math.exp((-p * 1) / (12 / 7)), 12);
  });

  it("urgent patients keep a finite wait when routine demand overloads the site", () => {
    const metrics = siteMetrics({ teams: 2, ratePerTeam: 1 }, 0.5, 2, 1);
    expect(metrics.routineWait).toBe(Infinity);
    // All teams always busy: W0 = 1/(cμ) = 0.5, urgent wait 0.5/(1 − 0.25) = 2/3.
    expect(metrics.urgentWait).toBeCloseTo(2 / 3, 12);
    expect(metrics.shareWithinStandard).toBe(0);
  });

  it("an idle site has no wait and everyone is within the standard", () => {
    const metrics = siteMetrics(pathwaySite, 0, 0, 18);
    expect(metrics.meanWait).toBe(0);
    expect(metrics.shareWithinStandard).toBe(1);
  });

  it("a pathway's utilisation is its busiest stage's", () => {
    // Entry rate 4: stage utilisations (800/153)/8, (400/153)/9, (280/153)/3 → max 0.6536 (first).
    const metrics = siteMetrics(pathwaySite, 0, 4, 18);
    expect(metrics.utilisation).toBeCloseTo(800 / 153 / 8, 12);
  });
});

describe("site input errors name the field and value", () => {
  const cases: [label: string, call: () => unknown, message: string][] = [
    ["fractional teams", () => createSiteWaitModel({ teams: 1.5, ratePerTeam: 1 }), "teams must be a positive integer, got 1.5"],
    ["zero rate", () => createSiteWaitModel({ teams: 2, ratePerTeam: 0 }), "ratePerTeam must be a finite number greater than 0, got 0"],
    ["negative cv", () => createSiteWaitModel({ teams: 2, ratePerTeam: 1, serviceCv: -1 }), "serviceCv must be a finite number of at least 0, got -1"],
    ["negative urgent", () => createSiteWaitModel({ teams: 2, ratePerTeam: 1 }, -1), "urgentInflow must be a finite number of at least 0, got -1"],
    ["negative routine", () => siteMetrics({ teams: 2, ratePerTeam: 1 }, 0, -1, 18), "routineInflow must be a finite number of at least 0, got -1"],
    ["NaN standard", () => siteMetrics({ teams: 2, ratePerTeam: 1 }, 0, 1, Number.NaN), "standardWeeks must be a finite number of at least 0, got NaN"],
    [
      "stage teams",
      () => createSiteWaitModel({ ...pathwaySite, pathway: { ...pathwaySite.pathway!, stages: [{ id: "a", teams: 0, ratePerTeam: 1 }], routing: [[0]], entry: "a" } }),
      "pathway.stages[0].teams must be a positive integer, got 0",
    ],
    [
      "unknown entry",
      () => createSiteWaitModel({ ...pathwaySite, pathway: { ...pathwaySite.pathway!, entry: "triage" } }),
      'pathway.entry must be one of the stage ids (first, diagnostics, treatment), got "triage"',
    ],
    [
      "duplicate stage id",
      () =>
        createSiteWaitModel({
          teams: 1,
          ratePerTeam: 1,
          pathway: { stages: [{ id: "a", teams: 1, ratePerTeam: 1 }, { id: "a", teams: 1, ratePerTeam: 1 }], routing: [[0, 0], [0, 0]], entry: "a" },
        }),
      'pathway.stages has the id "a" more than once',
    ],
    [
      "trapped stages",
      () =>
        createSiteWaitModel({
          teams: 1,
          ratePerTeam: 1,
          pathway: {
            stages: [{ id: "a", teams: 1, ratePerTeam: 1 }, { id: "b", teams: 1, ratePerTeam: 1 }],
            routing: [[0, 1], [1, 0]],
            entry: "a",
          },
        }),
      'pathway.routing never lets patients leave the pathway from stage "a" (row 0), stage "b" (row 1): every route from there loops back without an exit, so the traffic equations have no solution',
    ],
  ];
  it.each(cases)("%s", (_label, call, message) => {
    expect(call).toThrow(RangeError);
    expect(call).toThrow(message);
  });
});
