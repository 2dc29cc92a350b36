/**
 * Pruning of sites that cannot be near a source's cheapest option.
 *
 * For each source we keep its K cheapest-to-reach sites (by travel cost plus toll) and the
 * K-th cost, `bound`. A site outside the list costs at least (lowest site cost anywhere) + bound,
 * so when that exceeds the source's cheapest listed option by more than the width that matters
 * (the logit cutoff), no other site can be cheapest or carry a share — and the solver looks at
 * K sites instead of m. Otherwise the source's whole row is read, sorted by pair cost once and
 * kept (`sortedRow`), so that the same early stop applies to it (exact either way). The lowest
 * site cost is often near zero (a many-team site has almost no wait below high load), which makes
 * that bound weak: on a national instance ~1,000 of 7,000 sources needed their rows at every
 * evaluation, three quarters of the work of building the candidate lists when rows were scanned whole.
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
  /** Whole rows sorted on demand (`sortedRow`): each source's start in rowSites/rowCosts, −1 until sorted. */
  rowStart: Int32Array;
  /** Allowed sites in each sorted row. */
  rowCount: Int32Array;
  rowSites: Int32Array;
  rowCosts: Float64Array;
  /** Entries of rowSites/rowCosts in use. */
  rowsUsed: number;
}

export const NEAREST_LIST_SIZE = 48;

export function nearestSites(pairCost: Float64Array, n: number, m: number): NearestSites {
  const cached = cache.get(pairCost);
  if (cached) return cached;
  const lists = allocateLists(n, m, (length) => new ArrayBuffer(length));
  fillLists(lists, pairCost, m, 0, n);
  return rememberLists(pairCost, lists);
}

/** The parts of the lists that `fillLists` writes, row by row. */
export type ListRows = Pick<NearestSites, "sites" | "costs" | "count" | "bound" | "perSource">;

/** Empty lists for n sources, in memory from `allocate` (shared between threads, say). */
export function allocateLists(n: number, m: number, allocate: (bytes: number) => ArrayBufferLike): ListRows {
  const perSource = Math.min(m, NEAREST_LIST_SIZE);
  return {
    sites: new Int32Array(allocate(Math.max(1, n * perSource) * 4)),
    costs: new Float64Array(allocate(Math.max(1, n * perSource) * 8)),
    count: new Int32Array(allocate(Math.max(1, n) * 4)),
    bound: new Float64Array(allocate(Math.max(1, n) * 8)),
    perSource,
  };
}

/** Writes the lists of sources from..to−1 (each row is independent of the others). */
export function fillLists(lists: ListRows, pairCost: Float64Array, m: number, from: number, to: number): void {
  const { sites, costs, count, bound, perSource } = lists;
  const scratch = new Float64Array(m);
  for (let i = from; i < to; i++) {
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
}

/** Makes `lists` (all rows written) the cached lists of `pairCost` in this thread. */
export function rememberLists(pairCost: Float64Array, lists: ListRows): NearestSites {
  const n = lists.count.length;
  const result: NearestSites = {
    ...lists,
    rowStart: new Int32Array(n).fill(-1),
    rowCount: new Int32Array(n),
    rowSites: new Int32Array(0),
    rowCosts: new Float64Array(0),
    rowsUsed: 0,
  };
  cache.set(pairCost, result);
  return result;
}

/**
 * Source i's whole row — its allowed sites in increasing pair cost — sorted on the first call and
 * kept; returns its start in `lists.rowSites`/`rowCosts` (which a later call may replace by larger
 * arrays: read them after calling), `lists.rowCount[i]` entries long.
 *
 * Sorted natively: each cost goes into a double whose lowest mantissa bits are overwritten by its
 * site's index, so one typed-array sort orders sites by cost and carries the index along. The
 * keys differ from the costs by less than 2^(bits − 52) relatively, so only nearly equal costs can
 * come out of order, and one insertion pass on the exact costs puts those right.
 */
export function sortedRow(lists: NearestSites, pairCost: Float64Array, m: number, i: number): number {
  const known = lists.rowStart[i];
  if (known >= 0) return known;
  const row = i * m;
  const start = lists.rowsUsed;
  // Room for every row at once: memory is only touched where rows are written (the operating
  // system maps pages on first use), and growing by copies cost ~60 ms on a national instance.
  if (start + m > lists.rowSites.length) [lists.rowSites, lists.rowCosts] = grownPair(lists.rowSites, lists.rowCosts, Math.max(start + m, lists.count.length * m));
  const keys = rowKeys(m);
  const words = new Uint32Array(keys.buffer, 0, 2 * m);
  const mask = indexMask(m);
  let allowed = 0;
  for (let j = 0; j < m; j++) {
    const cost = pairCost[row + j];
    if (!(cost < Infinity)) continue;
    keys[allowed] = cost;
    const word = 2 * allowed + LOW_WORD;
    words[word] = (words[word] & ~mask) | j;
    allowed++;
  }
  keys.subarray(0, allowed).sort();
  const sites = lists.rowSites;
  const costs = lists.rowCosts;
  for (let k = 0; k < allowed; k++) {
    const site = words[2 * k + LOW_WORD] & mask;
    const cost = pairCost[row + site];
    let b = start + k - 1;
    while (b >= start && costs[b] > cost) {
      sites[b + 1] = sites[b];
      costs[b + 1] = costs[b];
      b--;
    }
    sites[b + 1] = site;
    costs[b + 1] = cost;
  }
  lists.rowStart[i] = start;
  lists.rowCount[i] = allowed;
  lists.rowsUsed = start + allowed;
  return start;
}

/**
 * Indices 0..count−1 ordered by keys[index], ties by index: the order of
 * `indices.sort((a, b) => keys[a] - keys[b] || a - b)` for keys that are not NaN, without a
 * comparator called from native code (slow while the code is still cold). Negative keys (rare:
 * pairs forced first) are ordered with that comparator; the others by the packed-key native sort
 * and insertion pass of `sortedRow`.
 */
export function keyOrder(keys: Float64Array, count: number): Int32Array {
  const order = new Int32Array(count);
  const negative: number[] = [];
  const packed = new Float64Array(count);
  const words = new Uint32Array(packed.buffer);
  const mask = indexMask(count);
  let used = 0;
  for (let index = 0; index < count; index++) {
    if (!(keys[index] >= 0)) {
      negative.push(index);
      continue;
    }
    packed[used] = keys[index];
    const word = 2 * used + LOW_WORD;
    words[word] = (words[word] & ~mask) | index;
    used++;
  }
  negative.sort((a, b) => keys[a] - keys[b] || a - b);
  for (let k = 0; k < negative.length; k++) order[k] = negative[k];
  packed.subarray(0, used).sort();
  const start = negative.length;
  for (let k = 0; k < used; k++) {
    const index = words[2 * k + LOW_WORD] & mask;
    const key = keys[index];
    let b = start + k - 1;
    while (b >= start && (keys[order[b]] > key || (keys[order[b]] === key && order[b] > index))) {
      order[b + 1] = order[b];
      b--;
    }
    order[b + 1] = index;
  }
  return order;
}

/** Index of a double's low 32-bit word in a Uint32Array view (0 on little-endian machines). */
const LOW_WORD = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1 ? 0 : 1;

let keyScratch = new Float64Array(0);

function rowKeys(m: number): Float64Array {
  if (keyScratch.length < m) keyScratch = new Float64Array(m);
  return keyScratch;
}

/** The lowest bits of a key that hold a site index below m. */
function indexMask(m: number): number {
  let bits = 1;
  while (2 ** bits < m) bits++;
  return 2 ** bits - 1;
}

/** Parallel index and value arrays grown together (at least doubled) to hold `needed` entries. */
export function grownPair(indices: Int32Array, values: Float64Array, needed: number): [Int32Array, Float64Array] {
  const size = Math.max(needed, 2 * indices.length, 1024);
  const grownIndices = new Int32Array(size);
  grownIndices.set(indices);
  const grownValues = new Float64Array(size);
  grownValues.set(values);
  return [grownIndices, grownValues];
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
 * best so far, and the sorted whole row the same way only when a site off the list could still
 * be cheaper — the same answer as a scan of the row.
 */
export function cheapestSite(lists: NearestSites, pairCost: Float64Array, m: number, w: Float64Array, lowest: number, i: number): number {
  let best = Infinity;
  let bestSite = -1;
  const read = (sites: Int32Array, costs: Float64Array, from: number, to: number) => {
    for (let k = from; k < to; k++) {
      const c = costs[k];
      if (lowest + c > best) break;
      const j = sites[k];
      const g = w[j] + c;
      if (g < best || (g === best && j < bestSite)) {
        best = g;
        bestSite = j;
      }
    }
  };
  const base = i * lists.perSource;
  read(lists.sites, lists.costs, base, base + lists.count[i]);
  if (lowest + lists.bound[i] <= best) {
    const start = sortedRow(lists, pairCost, m, i);
    read(lists.rowSites, lists.rowCosts, start, start + lists.rowCount[i]);
  }
  return bestSite;
}

/** The sites j with w_j + pairCost(i, j) ≤ limit, in increasing index order (same reading rule as `cheapestSite`). */
export function sitesWithin(lists: NearestSites, pairCost: Float64Array, m: number, w: Float64Array, lowest: number, i: number, limit: number): number[] {
  let sites = lists.sites;
  let costs = lists.costs;
  let from = i * lists.perSource;
  let to = from + lists.count[i];
  if (lowest + lists.bound[i] <= limit) {
    from = sortedRow(lists, pairCost, m, i);
    to = from + lists.rowCount[i];
    sites = lists.rowSites;
    costs = lists.rowCosts;
  }
  const found: number[] = [];
  for (let k = from; k < to; k++) {
    const c = costs[k];
    if (lowest + c > limit) break;
    const j = sites[k];
    if (w[j] + c <= limit) found.push(j);
  }
  return found.sort((a, b) => a - b);
}
