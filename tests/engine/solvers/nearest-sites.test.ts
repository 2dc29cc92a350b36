/**
 * The pruning lists of `nearest-sites.ts` against plain scans of whole rows: the cheapest site
 * (lowest index among exact ties) and the sites within a limit must be exactly what reading every
 * pair gives, whether a source's short list suffices or its whole row has to be read (sorted on
 * demand). Rows are built to be awkward: exact ties, costs one unit in the last place apart
 * (the sort key's index bits must not misorder them), negative costs (tolls), pairs not allowed,
 * and site costs near zero (which force the whole-row reading).
 */
import { describe, expect, it } from "vitest";
import { NEAREST_LIST_SIZE, cheapestSite, keyOrder, lowestCost, nearestSites, sitesWithin, sortedRow } from "../../../app/engine/nearest-sites";
import { seeded } from "./support/line-problem";

function awkwardPairCosts(seed: number, n: number, m: number): Float64Array {
  const random = seeded(seed);
  const pairCost = new Float64Array(n * m);
  const shared = [0.5, 1.25, 3];
  for (let k = 0; k < n * m; k++) {
    const kind = random();
    if (kind < 0.1) pairCost[k] = Infinity;
    else if (kind < 0.25) pairCost[k] = shared[Math.floor(random() * shared.length)];
    else if (kind < 0.35) pairCost[k] = shared[Math.floor(random() * shared.length)] * (1 + Number.EPSILON * (1 + Math.floor(random() * 4)));
    else if (kind < 0.4) pairCost[k] = -random();
    else pairCost[k] = 5 * random();
  }
  return pairCost;
}

function bruteCheapest(pairCost: Float64Array, m: number, w: Float64Array, i: number): number {
  let best = Infinity;
  let bestSite = -1;
  for (let j = 0; j < m; j++) {
    const g = w[j] + pairCost[i * m + j];
    if (g < best) {
      best = g;
      bestSite = j;
    }
  }
  return bestSite;
}

describe("nearest-site lists", () => {
  it("sort a whole row exactly by pair cost, ties and nearly equal costs included", () => {
    for (const m of [3, 60, 400, 1025]) {
      const n = 6;
      const pairCost = awkwardPairCosts(m, n, m);
      const lists = nearestSites(pairCost, n, m);
      for (let i = 0; i < n; i++) {
        const start = sortedRow(lists, pairCost, m, i);
        const count = lists.rowCount[i];
        const expected = Array.from({ length: m }, (_, j) => j).filter((j) => pairCost[i * m + j] < Infinity);
        expect(count).toBe(expected.length);
        const sites = Array.from(lists.rowSites.subarray(start, start + count));
        expect([...sites].sort((a, b) => a - b)).toEqual(expected);
        for (let k = 0; k < count; k++) expect(lists.rowCosts[start + k]).toBe(pairCost[i * m + sites[k]]);
        for (let k = 1; k < count; k++) expect(lists.rowCosts[start + k]).toBeGreaterThanOrEqual(lists.rowCosts[start + k - 1]);
        // A second call returns the row already sorted.
        expect(sortedRow(lists, pairCost, m, i)).toBe(start);
      }
    }
  });

  it("give the cheapest site and the sites within a limit exactly as a scan of every pair does", () => {
    const n = 40;
    const m = 3 * NEAREST_LIST_SIZE;
    const pairCost = awkwardPairCosts(7, n, m);
    // Two copies of the same costs, so each reading below has lists of its own (they are cached per array).
    const tight = pairCost.slice();
    const loose = pairCost.slice();
    const random = seeded(11);
    for (let trial = 0; trial < 30; trial++) {
      // Tight: site costs from 0 to 4, a few nearly empty (cost ≈ 0), read with their lowest cost.
      // Loose: costs from 3 to 7 read with the lower bound 0 — as when a nearly empty site far
      // away costs nothing — which makes the short lists' bound weak, so rows are read whole.
      const isTight = trial % 2 === 1;
      const costs = isTight ? tight : loose;
      const lists = nearestSites(costs, n, m);
      const w = Float64Array.from({ length: m }, () => (isTight ? (random() < 0.1 ? 1e-9 * random() : 4 * random()) : 3 + 4 * random()));
      const lowest = isTight ? lowestCost(w) : 0;
      for (let i = 0; i < n; i++) {
        const best = cheapestSite(lists, costs, m, w, lowest, i);
        expect(best).toBe(bruteCheapest(pairCost, m, w, i));
        const limit = w[best] + pairCost[i * m + best] + 0.5 * random();
        const within = Array.from({ length: m }, (_, j) => j).filter((j) => w[j] + pairCost[i * m + j] <= limit);
        expect(sitesWithin(lists, costs, m, w, lowest, i, limit)).toEqual(within);
      }
    }
    // Both readings were exercised: rows never read whole with tight bounds, rows read whole with loose ones.
    expect(Array.from(nearestSites(tight, n, m).rowStart).filter((start) => start < 0).length).toBeGreaterThan(0);
    expect(Array.from(nearestSites(loose, n, m).rowStart).filter((start) => start >= 0).length).toBeGreaterThan(0);
  });
});

/**
 * `keyOrder`: indices ordered by key, ties by index, as Array.prototype.sort with the comparator
 * (a, b) => keys[a] − keys[b] || a − b orders them (ECMA-262 §23.1.3.30: the comparator defines
 * the order; ours is a total order on non-NaN keys, so the result is unique). Keys with exact
 * ties, −1s, zeros, subnormals and differences of one ulp, where the packed native sort alone
 * would misorder.
 */
describe("keyOrder", () => {
  const reference = (keys: Float64Array) => Array.from({ length: keys.length }, (_, k) => k).sort((a, b) => keys[a] - keys[b] || a - b);
  it("matches the comparator sort on keys with ties, negatives, zeros, subnormals and one-ulp steps", () => {
    const random = seeded(99);
    for (const count of [0, 1, 2, 17, 300, 5000]) {
      const keys = Float64Array.from({ length: count }, () => {
        const r = random();
        if (r < 0.1) return -1;
        if (r < 0.3) return 0;
        if (r < 0.35) return 5e-324 * Math.floor(random() * 4);
        const base = Math.round(random() * 20) / 4;
        // One ulp above a grid value, or the grid value itself.
        return random() < 0.3 ? base + base * Number.EPSILON : base;
      });
      expect(Array.from(keyOrder(keys, count))).toEqual(reference(keys));
    }
  });
});
