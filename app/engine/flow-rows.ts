/**
 * Practice→site flows read source by source ("rows") rather than as a dense n·m array. At a
 * Wardrop equilibrium or optimum nearly every source uses one or two sites: a national solve has
 * ~7,500 non-zero flows among 2.8 million pairs, and writing, zeroing and scanning the dense
 * array (22 MB of memory touched for the first time, then read three times over) cost ~0.2 s per
 * rule — more than the exact finish's own arithmetic. The fixed rules' flows follow from a few
 * numbers per site and per source, so their rows are worked out when read and never stored.
 *
 * An allocation with rows still has `flow`: the dense array is made from the rows the first time
 * anything reads it (tests, the plan rule's volume bounds), so readers that do not know rows work
 * unchanged. Readers over all pairs (`allocationLoads`, `relativeGap`, `allocationTotalCost`,
 * the reports) read rows — a dense allocation's through `rowsOf` — in the same order as a dense
 * scan (sources, then sites ascending), so their sums are the same to the last bit (a row may
 * leave out zeros: adding +0 changes no sum).
 */
import type { Allocation } from "./problem";

export interface FlowRows {
  /**
   * Writes source i's flows and their sites, sites ascending, into `flows` and `sites` (room for
   * m each) and returns how many there are. Every non-zero flow is there; zeros may be too.
   */
  read(i: number, sites: Int32Array, flows: Float64Array): number;
}

/** Rows stored as compressed sparse rows: source i's flows are entries start[i] … start[i + 1] − 1. */
export function storedRows(start: Int32Array, sites: Int32Array, flows: Float64Array): FlowRows {
  return {
    read(i, sitesOut, flowsOut) {
      const from = start[i];
      const count = start[i + 1] - from;
      for (let k = 0; k < count; k++) {
        sitesOut[k] = sites[from + k];
        flowsOut[k] = flows[from + k];
      }
      return count;
    },
  };
}

/** The rows of a dense n·m flow array: every site of every source. */
export function denseRows(flow: Float64Array, m: number): FlowRows {
  return {
    read(i, sites, flows) {
      const row = i * m;
      for (let j = 0; j < m; j++) {
        sites[j] = j;
        flows[j] = flow[row + j];
      }
      return m;
    },
  };
}

/** An allocation's rows: its own, or its dense flows read row by row. */
export function rowsOf(allocation: Allocation, m: number): FlowRows {
  return allocation.rows ?? denseRows(allocation.flow, m);
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
  const sites = new Int32Array(m);
  const flows = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const count = rows.read(i, sites, flows);
    for (let k = 0; k < count; k++) flow[i * m + sites[k]] = flows[k];
  }
  return flow;
}

/** Site loads of an allocation: Σ_i flow_ij for every site j, summed in source order. */
export function allocationLoads(allocation: Allocation, n: number, m: number): Float64Array {
  const rows = rowsOf(allocation, m);
  const load = new Float64Array(m);
  const sites = new Int32Array(m);
  const flows = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const count = rows.read(i, sites, flows);
    for (let k = 0; k < count; k++) load[sites[k]] += flows[k];
  }
  return load;
}
