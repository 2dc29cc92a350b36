/**
 * Pruning of sites that cannot be near a source's cheapest option.
 *
 * For each source we keep its K cheapest-to-reach sites (by travel cost plus toll) and the
 * K-th cost, `bound`. A site outside the list costs at least (lowest site cost anywhere) + bound,
 * so when that exceeds the source's cheapest listed option by more than the width that matters
 * (the logit cutoff), no other site can be cheapest or carry a share — and the solver looks at
 * K sites instead of m. Otherwise it scans the full row (exact either way).
 *
 * Lists are cached per pair-cost array, so the rules solved on one line share them.
 */
const cache = new WeakMap<Float64Array, NearestSites>();

export interface NearestSites {
  /** Sites per source (n·K), the K lowest pair costs, in increasing order of pair cost. */
  sites: Int32Array;
  /** The pair cost of each listed site (n·K), beside it, so a scan reads memory in order. */
  costs: Float64Array;
  count: Int32Array;
  /** Largest pair cost in each source's list; Infinity when the list holds every allowed site. */
  bound: Float64Array;
  perSource: number;
}

export const NEAREST_LIST_SIZE = 48;

export function nearestSites(pairCost: Float64Array, n: number, m: number): NearestSites {
  const cached = cache.get(pairCost);
  if (cached) return cached;
  const perSource = Math.min(m, NEAREST_LIST_SIZE);
  const sites = new Int32Array(n * perSource);
  const costs = new Float64Array(n * perSource);
  const count = new Int32Array(n);
  const bound = new Float64Array(n);
  const scratch = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const row = i * m;
    let allowed = 0;
    for (let j = 0; j < m; j++) if (pairCost[row + j] < Infinity) scratch[allowed++] = pairCost[row + j];
    const base = i * perSource;
    if (allowed <= perSource) {
      let k = 0;
      for (let j = 0; j < m; j++) if (pairCost[row + j] < Infinity) sites[base + k++] = j;
      count[i] = k;
      bound[i] = Infinity;
      sortList(sites, costs, pairCost, row, base, k);
      continue;
    }
    const threshold = kthSmallest(scratch, allowed, perSource - 1);
    let k = 0;
    for (let j = 0; j < m && k < perSource; j++) if (pairCost[row + j] < threshold) sites[base + k++] = j;
    for (let j = 0; j < m && k < perSource; j++) if (pairCost[row + j] === threshold) sites[base + k++] = j;
    count[i] = k;
    bound[i] = threshold;
    sortList(sites, costs, pairCost, row, base, k);
  }
  const result = { sites, costs, count, bound, perSource };
  cache.set(pairCost, result);
  return result;
}

/** Orders one source's list by pair cost (insertion sort: lists are short) and fills its costs. */
function sortList(sites: Int32Array, costs: Float64Array, pairCost: Float64Array, row: number, base: number, length: number): void {
  for (let a = 0; a < length; a++) {
    const site = sites[base + a];
    const cost = pairCost[row + site];
    let b = a - 1;
    while (b >= 0 && costs[base + b] > cost) {
      sites[base + b + 1] = sites[base + b];
      costs[base + b + 1] = costs[base + b];
      b--;
    }
    sites[base + b + 1] = site;
    costs[base + b + 1] = cost;
  }
}

/** Hoare's selection (quickselect) on values[0..length): the k-th smallest (0-based). Reorders values. */
function kthSmallest(values: Float64Array, length: number, k: number): number {
  let lo = 0;
  let hi = length - 1;
  while (lo < hi) {
    const pivot = values[(lo + hi) >>> 1];
    let a = lo;
    let b = hi;
    while (a <= b) {
      while (values[a] < pivot) a++;
      while (values[b] > pivot) b--;
      if (a <= b) {
        const t = values[a];
        values[a] = values[b];
        values[b] = t;
        a++;
        b--;
      }
    }
    if (k <= b) hi = b;
    else if (k >= a) lo = a;
    else return values[k];
  }
  return values[k];
}

/** min_j w_j over the sites (the bound that lets a list scan stop early). */
export function lowestCost(w: Float64Array): number {
  let lowest = Infinity;
  for (let j = 0; j < w.length; j++) if (w[j] < lowest) lowest = w[j];
  return lowest;
}

/**
 * The site with the lowest cost w_j + pairCost(i, j) for source i, the lowest index among exact
 * ties (−1 when no site is allowed). Reads the sorted list until `lowest` + pair cost exceeds the
 * best so far, and the whole row only when a site off the list could still be cheaper —
 * the same answer as a scan of the row.
 */
export function cheapestSite(lists: NearestSites, pairCost: Float64Array, m: number, w: Float64Array, lowest: number, i: number): number {
  const base = i * lists.perSource;
  let best = Infinity;
  let bestSite = -1;
  for (let k = 0; k < lists.count[i]; k++) {
    const c = lists.costs[base + k];
    if (lowest + c > best) break;
    const j = lists.sites[base + k];
    const g = w[j] + c;
    if (g < best || (g === best && j < bestSite)) {
      best = g;
      bestSite = j;
    }
  }
  if (lowest + lists.bound[i] <= best) {
    const row = i * m;
    for (let j = 0; j < m; j++) {
      const g = w[j] + pairCost[row + j];
      if (g < best || (g === best && j < bestSite)) {
        best = g;
        bestSite = j;
      }
    }
  }
  return bestSite;
}

/** The sites j with w_j + pairCost(i, j) ≤ limit, in increasing index order (same reading rule as `cheapestSite`). */
export function sitesWithin(lists: NearestSites, pairCost: Float64Array, m: number, w: Float64Array, lowest: number, i: number, limit: number): number[] {
  const base = i * lists.perSource;
  const found: number[] = [];
  if (lowest + lists.bound[i] <= limit) {
    const row = i * m;
    for (let j = 0; j < m; j++) if (w[j] + pairCost[row + j] <= limit) found.push(j);
    return found;
  }
  for (let k = 0; k < lists.count[i]; k++) {
    const c = lists.costs[base + k];
    if (lowest + c > limit) break;
    const j = lists.sites[base + k];
    if (w[j] + c <= limit) found.push(j);
  }
  return found.sort((a, b) => a - b);
}
