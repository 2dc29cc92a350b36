/**
 * The workspace's pure helpers: edits and what-ifs on a scenario document, and the rule comparison
 * read from a result. Expected values are worked by hand in the comments beside each check.
 */
import { describe, expect, it } from "vitest";
import { parseScenario } from "~/engine/scenario";
import { summariseRules, siteRows, type ResultDocument, type RuleResult } from "~/models/result-document";
import { addSite, applyWhatIf, moveSite, nextSiteId, setSiteLine, setSourceOutsideCost, type ScenarioDoc } from "~/models/scenario-document";
import { smallScenario } from "./support/fixtures";

const doc = parseScenario(smallScenario()) as ScenarioDoc;

describe("scenario document edits", () => {
  it("leaves the original untouched and changes only what was asked", () => {
    const moved = moveSite(doc, "ZZS2", 49.7, -30.05);
    expect(moved.providers[1]).toMatchObject({ lat: 49.7, lon: -30.05 });
    expect(doc.providers[1]).toMatchObject({ lat: 49.78, lon: -30.1 });
    expect(moved.sources).toEqual(doc.sources);
  });

  it("adds a site under the next free code of the scenario's own style", () => {
    expect(nextSiteId(doc)).toBe("ZZS3");
    const { doc: next, id } = addSite(doc, { lat: 49.9, lon: -30.0 });
    expect(id).toBe("ZZS3");
    expect(next.providers).toHaveLength(3);
    expect(next.providers[2]).toMatchObject({ id: "ZZS3", sector: "public", lines: {} });
    // Still a valid scenario: a site may offer nothing yet.
    expect(() => parseScenario(next)).not.toThrow();
  });

  it("turns an all-lines outside cost into a per-line map when one line changes", () => {
    const single = { ...doc, sources: doc.sources.map((source, i) => (i === 0 ? { ...source, outsideCost: 20 } : source)) };
    const next = setSourceOutsideCost(single, "ZZP001", "derm", null);
    expect(next.sources[0].outsideCost).toEqual({ ortho: 20 });
  });

  it("opens a line at a site with the figures given", () => {
    const next = setSiteLine(doc, "ZZS2", "derm", "teams", 4);
    expect(next.providers[1].lines.derm).toMatchObject({ teams: 4, ratePerTeam: 3 });
  });
});

describe("what-ifs", () => {
  it("scales every outside cost, sets κ and adds teams at one site", () => {
    const next = applyWhatIf(doc, { kmPerWeek: 30, outsideCostFactor: 1.5, extraTeams: { siteId: "ZZS1", lineId: "ortho", teams: 2 } });
    expect(next.kmPerWeek).toBe(30);
    // 24 × 1.5 = 36 and 20 × 1.5 = 30 for the first practice.
    expect(next.sources[0].outsideCost).toEqual({ ortho: 36, derm: 30 });
    // 3 teams + 2.
    expect(next.providers[0].lines.ortho.teams).toBe(5);
    expect(doc.providers[0].lines.ortho.teams).toBe(3);
  });

  it("opens a line a site lacks at the mean rate per team of the sites that offer it", () => {
    const withoutDerm = { ...doc, providers: doc.providers.map((provider) => (provider.id === "ZZS2" ? { ...provider, lines: { ortho: provider.lines.ortho } } : provider)) };
    const next = applyWhatIf(withoutDerm, { kmPerWeek: 15, outsideCostFactor: 1, extraTeams: { siteId: "ZZS2", lineId: "derm", teams: 1 } });
    // Only ZZS1 offers derm, at 2.5 per team.
    expect(next.providers[1].lines.derm).toEqual({ teams: 1, ratePerTeam: 2.5, serviceCv: 1 });
  });
});

function rule(partial: Partial<RuleResult>): RuleResult {
  return { converged: true, iterations: 1, relativeGap: 0, totalCost: 0, servedPerWeek: 0, balkedPerWeek: 0, meanWaitWeeks: 0, meanKm: 0, shareWithinStandard: 1, providers: [], sources: [], ...partial };
}

describe("the rule comparison", () => {
  const result: ResultDocument = {
    schema: "equilibra/result@1",
    priceOfAnarchy: null,
    lines: {
      ortho: {
        priceOfAnarchy: 1.25,
        rules: {
          choice: rule({
            totalCost: 50,
            servedPerWeek: 10,
            balkedPerWeek: 1,
            meanWaitWeeks: 4,
            meanKm: 10,
            shareWithinStandard: 0.9,
            providers: [{ id: "ZZS1", inflow: 10, utilisation: 0.9, meanWaitWeeks: 4, shareWithinStandard: 0.9 }],
            sources: [
              { id: "A", demand: 6, balked: 1, meanWaitWeeks: 4, meanKm: 8, meanCost: 5, flows: { ZZS1: 5 } },
              { id: "B", demand: 5, balked: 0, meanWaitWeeks: 4, meanKm: 12, meanCost: 6, flows: { ZZS1: 5 } },
            ],
          }),
          optimum: rule({ totalCost: 40, servedPerWeek: 10, balkedPerWeek: 1, meanWaitWeeks: 2, meanKm: 12, shareWithinStandard: 1, providers: [{ id: "ZZS1", inflow: 10, utilisation: 0.7, meanWaitWeeks: 2, shareWithinStandard: 1 }] }),
        },
      },
      derm: {
        priceOfAnarchy: 1.5,
        rules: {
          choice: rule({
            totalCost: 30,
            servedPerWeek: 5,
            balkedPerWeek: 0,
            meanWaitWeeks: 1,
            meanKm: 4,
            shareWithinStandard: 0.6,
            providers: [{ id: "ZZS2", inflow: 5, utilisation: null, meanWaitWeeks: null, shareWithinStandard: 0 }],
            sources: [{ id: "A", demand: 5, balked: 0, meanWaitWeeks: 1, meanKm: 4, meanCost: 2, flows: { ZZS2: 5 } }],
          }),
          optimum: rule({ totalCost: 20, servedPerWeek: 5, meanWaitWeeks: 1, meanKm: 4 }),
        },
      },
    },
  };

  it("sums costs over lines and takes the price of anarchy as the ratio of the sums", () => {
    const [choice, optimum] = summariseRules(result, { sources: [{ id: "A", deprivationDecile: 2 }, { id: "B", deprivationDecile: 9 }] });
    expect(choice.rule).toBe("choice");
    expect(choice.totalCost).toBe(80);
    // (50 + 30) / (40 + 20)
    expect(choice.priceOfAnarchy).toBeCloseTo(80 / 60, 12);
    expect(optimum.priceOfAnarchy).toBe(1);
    // Served-weighted: (4 × 10 + 1 × 5) / 15 = 3; km (10 × 10 + 4 × 5) / 15 = 8; within (0.9 × 10 + 0.6 × 5) / 15 = 0.8.
    expect(choice.meanWaitWeeks).toBeCloseTo(3, 12);
    expect(choice.meanKm).toBeCloseTo(8, 12);
    expect(choice.shareWithinStandard).toBeCloseTo(0.8, 12);
    expect(choice.balkedPerWeek).toBe(1);
  });

  it("reads equity across practices and deprivation deciles from each practice's demand-weighted mean cost", () => {
    const [choice] = summariseRules(result, { sources: [{ id: "A", deprivationDecile: 2 }, { id: "B", deprivationDecile: 9 }] });
    // Practice A: (5 × 6 + 2 × 5) / 11 = 40/11; B: 6. Spread 6 − 40/11.
    expect(choice.costSpread).toBeCloseTo(6 - 40 / 11, 12);
    expect(choice.costByDecile).toEqual([
      { decile: 2, meanCost: expect.closeTo(40 / 11, 12), demand: 11 },
      { decile: 9, meanCost: 6, demand: 5 },
    ]);
  });

  it("flags sites at or above 85% utilisation and overloaded ones", () => {
    const [choice, optimum] = summariseRules(result);
    expect(choice.busySites).toEqual([
      { line: "ortho", id: "ZZS1", utilisation: 0.9 },
      { line: "derm", id: "ZZS2", utilisation: Infinity },
    ]);
    expect(optimum.busySites).toEqual([]);
  });

  it("restricts to the chosen lines and lays out each site under each rule", () => {
    const [choice] = summariseRules(result, { lines: ["derm"] });
    expect(choice.totalCost).toBe(30);
    expect(choice.priceOfAnarchy).toBe(1.5);
    expect(siteRows(result, ["ortho"])).toEqual([
      { line: "ortho", site: "ZZS1", byRule: { choice: { inflow: 10, utilisation: 0.9, meanWaitWeeks: 4, shareWithinStandard: 0.9 }, optimum: { inflow: 10, utilisation: 0.7, meanWaitWeeks: 2, shareWithinStandard: 1 } } },
    ]);
  });
});
