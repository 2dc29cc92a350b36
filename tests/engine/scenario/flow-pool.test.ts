/**
 * The flow arrays handed back by the command line's JSON writer (`flow-pool.ts`): an array given
 * out again must be all zeros whatever it held, never be given to two rules at once, and small
 * arrays are not kept. Properties of the code's contract (no published source applies).
 */
import { describe, expect, it } from "vitest";
import { flowArray, recycleFlowArray } from "~/engine/flow-pool";

describe("recycled flow arrays", () => {
  it("come back zeroed, once each, and only at the length asked for", () => {
    const length = 1 << 17;
    const first = flowArray(length);
    first.fill(3.5);
    recycleFlowArray(first);
    recycleFlowArray(first); // handing the same array back twice keeps it once
    expect(flowArray(length / 2)).not.toBe(first);
    const again = flowArray(length);
    expect(again).toBe(first);
    expect(again.every((value) => value === 0)).toBe(true);
    // Given out: not given out a second time.
    expect(flowArray(length)).not.toBe(first);
  });

  it("are not kept when small or in shared memory", () => {
    const small = new Float64Array(100);
    recycleFlowArray(small);
    expect(flowArray(100)).not.toBe(small);
    const shared = new Float64Array(new SharedArrayBuffer(8 * (1 << 17)));
    recycleFlowArray(shared);
    expect(flowArray(1 << 17)).not.toBe(shared);
  });

  it("leave the command line's result byte for byte what the reports as objects give", async () => {
    const { parseScenario } = await import("~/engine/scenario");
    const { solveScenarioAsJson, resultJsonChunks } = await import("~/engine/result-json");
    const { solveScenario } = await import("~/engine/solve-scenario");
    const { generateScenarioDocument, LARGE } = await import("../../bench/generate");
    // 600 × 120 pairs: flow arrays large enough to be kept, so each rule after the first reuses one.
    const scenario = parseScenario(generateScenarioDocument({ ...LARGE, sources: 600, sites: 120, towns: 10, seed: 4 }));
    const chunks = resultJsonChunks(solveScenarioAsJson(scenario, {}, ""), "");
    const text = chunks.map((chunk) => (typeof chunk === "string" ? chunk : new TextDecoder().decode(chunk))).join("");
    expect(text).toBe(JSON.stringify(solveScenario(scenario)));
  });
});
