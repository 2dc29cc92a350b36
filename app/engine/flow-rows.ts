/**
 * Practice→site flows kept as rows of their non-zero entries (compressed sparse rows) rather than
 * as a dense n·m array. At a Wardrop equilibrium or optimum nearly every source uses one or two
 * sites: a national solve has ~7,500 non-zero flows among 2.8 million pairs, and writing,
 * zeroing and scanning the dense array (22 MB of memory touched for the first time, then read
 * three times over) cost ~0.2 s per rule — more than the exact finish's own arithmetic.
 *
 * An allocation with rows still has `flow`: the dense array is made from the rows the first time
 * anything reads it (tests, the plan rule's volume bounds), so readers that do not know rows work
 * unchanged. Readers over all pairs (`allocationLoads`, `relativeGap`, `allocationTotalCost`, the
 * reports) visit the rows instead, in the same order as a dense scan (sources, then sites
 * ascending), skipping only zeros — so sums are the same to the last bit.
 */
import type { Allocation } from "./problem";

/** Source i's non-zero flows are entries start[i] … start[i + 1] − 1, sites ascending. */
export interface FlowRows {
  start: Int32Array;
  sites: Int32Array;
  flows: Float64Array;
}

/** An allocation from rows, whose dense `flow` (n·m, n = balked.length) is made on first read. */
export function allocationFromRows(m: number, rows: FlowRows, balked: Float64Array): Allocation {
  let dense: Float64Array | null = null;
  return {
    get flow(): Float64Array {
      if (!dense) dense = denseFlows(rows, balked.length, m);
      return dense;
    },
    balked,
    rows,
  };
}

/** The dense n·m array of the rows' flows. */
export function denseFlows(rows: FlowRows, n: number, m: number): Float64Array {
  const flow = new Float64Array(n * m);
  for (let i = 0; i < n; i++) for (let k = rows.start[i]; k < rows.start[i + 1]; k++) flow[i * m + rows.sites[k]] = rows.flows[k];
  return flow;
}

/** Σ_i flow_ij for every site j, summed in source order (as a dense column sum). */
export function rowColumnSums(rows: FlowRows, n: number, m: number): Float64Array {
  const sums = new Float64Array(m);
  const end = rows.start[n];
  for (let k = 0; k < end; k++) sums[rows.sites[k]] += rows.flows[k];
  return sums;
}

/** Site loads of an allocation: column sums of its rows when it has them, else of the dense flows. */
export function allocationLoads(allocation: Allocation, n: number, m: number): Float64Array {
  if (allocation.rows) return rowColumnSums(allocation.rows, n, m);
  const flow = allocation.flow;
  const load = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const row = i * m;
    for (let j = 0; j < m; j++) load[j] += flow[row + j];
  }
  return load;
}
