/** The Web Worker entry's message handler: results and each kind of failure as messages. */
import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { handleWorkerRequest } from "~/engine/worker";

const fixture = (name: string) => JSON.parse(readFileSync(new URL(`./fixtures/${name}`, import.meta.url), "utf8"));

describe("handleWorkerRequest", () => {
  it("answers a scenario with its result and echoes the id", () => {
    const response = handleWorkerRequest({ id: 7, scenario: fixture("single-site-balking.json"), rules: ["choice", "optimum"] });
    expect(response.ok).toBe(true);
    if (!response.ok) return;
    expect(response.id).toBe(7);
    expect(Object.keys(response.result.lines.derm.rules)).toEqual(["choice", "optimum"]);
    // Edelson & Hildebrand (1975), adapted (CHECKS.md) [derived]: price of anarchy 5/3.
    expect(response.result.priceOfAnarchy).toBeCloseTo(5 / 3, 9);
  });

  it("answers invalid input with one issue per field", () => {
    const response = handleWorkerRequest({ id: "a", scenario: fixture("invalid-fields.json") });
    expect(response).toEqual({
      id: "a",
      ok: false,
      kind: "invalidInput",
      message: expect.any(String),
      issues: [
        { path: "sources[0].demand.ortho", message: "must be a number ≥ 0 (referrals/week); got -3" },
        { path: "providers[0].lines.ortho.teams", message: "must be a whole number of teams from 1 to 10000; got 2.5" },
      ],
    });
  });

  it("answers a scenario without a steady state with the shortfalls", () => {
    const response = handleWorkerRequest({ id: 2, scenario: fixture("no-steady-state.json") });
    expect(response.ok).toBe(false);
    if (response.ok || response.kind !== "noSteadyState") throw new Error("expected noSteadyState");
    expect(response.shortfalls.map((shortfall) => [shortfall.lineId, shortfall.siteIds, shortfall.shortfall])).toEqual([["ortho", ["ZZS1", "ZZS2"], 0.5]]);
  });
});
