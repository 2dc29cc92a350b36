/**
 * Node only (the command line's two threads): what both threads need of every line before they
 * solve — its road km (`lineDistances`), travel costs (`travelCostOf`) and nearest-site lists
 * (`nearestSites`) — computed by both together, in shared memory. The rows (sources) of each line
 * are cut into chunks; each thread takes the next chunk nobody has taken (an atomic counter)
 * until none is left, then waits until every chunk is written. A thread that never comes (or
 * stops) costs nothing but time: after a while the other one writes any chunk still missing
 * itself (the same values). Each thread then registers the travel costs and lists as its own,
 * so neither computes them again (each did ~0.2 s of it on a national instance).
 */
import { type LineDistances, lineMembers, rememberTravelCost, writePairKm } from "./build-problem";
import { type ListRows, allocateLists, fillLists, rememberLists } from "./nearest-sites";
import type { Scenario } from "./scenario";

/** Rows per chunk: small enough for both threads to share even a regional instance's rows. */
const CHUNK_ROWS = 250;
/** How long a thread waits for the other's chunks before writing them itself (ms). */
const PATIENCE_MS = 10_000;

export interface DistanceWork {
  /** The lines' km arrays (shared memory), filled as the chunks are written. */
  distances: LineDistances;
  /** Per line, the travel cost of every pair and the nearest-site lists (shared memory). */
  travel: Map<string, { travelCost: Float64Array; lists: ListRows }>;
  /** Chunks taken so far (shared counter). */
  next: Int32Array;
  /** 1 for each chunk written (shared). */
  written: Int32Array;
}

interface Chunk {
  lineId: string;
  /** The line's sources and sites (indices in the scenario's lists). */
  members: { sources: number[]; sites: number[] };
  from: number;
  to: number;
}

/** The chunks of every line, the same on both threads (derived from the scenario alone). */
function chunksOf(scenario: Scenario): Chunk[] {
  const chunks: Chunk[] = [];
  for (const line of scenario.serviceLines) {
    const members = lineMembers(scenario, line.id);
    const rows = members.sources.length;
    for (let from = 0; from < rows; from += CHUNK_ROWS) chunks.push({ lineId: line.id, members, from, to: Math.min(rows, from + CHUNK_ROWS) });
  }
  return chunks;
}

/** Zeroed shared memory for `length` elements of `bytes` each (at least one byte: no empty buffers). */
function shared(length: number, bytes: number): SharedArrayBuffer {
  return new SharedArrayBuffer(Math.max(1, length * bytes));
}

/** Shared arrays for every line's km and the counters, before any is computed. */
export function distanceWork(scenario: Scenario): DistanceWork {
  const distances: LineDistances = new Map();
  const travel: DistanceWork["travel"] = new Map();
  for (const line of scenario.serviceLines) {
    const { sources, sites } = lineMembers(scenario, line.id);
    const length = sources.length * sites.length;
    distances.set(line.id, length > 0 ? new Float64Array(shared(length, 8)) : new Float64Array(0));
    travel.set(line.id, {
      travelCost: length > 0 ? new Float64Array(shared(length, 8)) : new Float64Array(0),
      lists: allocateLists(sources.length, sites.length, (bytes) => new SharedArrayBuffer(bytes)),
    });
  }
  return { distances, travel, next: new Int32Array(shared(1, 4)), written: new Int32Array(shared(chunksOf(scenario).length, 4)) };
}

function writeChunk(scenario: Scenario, work: DistanceWork, chunk: Chunk): void {
  const { sources, sites } = chunk.members;
  const m = sites.length;
  // Straight into the shared arrays: a chunk's own km array was fresh memory (page faults) and a copy more.
  const km = work.distances.get(chunk.lineId) as Float64Array;
  writePairKm(
    km,
    chunk.from * m,
    sources.slice(chunk.from, chunk.to).map((index) => scenario.sources[index]),
    sites.map((index) => scenario.providers[index]),
    scenario.circuity,
    scenario.travelKm ?? undefined,
  );
  const { travelCost, lists } = work.travel.get(chunk.lineId) as { travelCost: Float64Array; lists: ListRows };
  for (let pair = chunk.from * m; pair < chunk.to * m; pair++) travelCost[pair] = km[pair] / scenario.kmPerWeek;
  fillLists(lists, travelCost, m, chunk.from, chunk.to);
}

/**
 * Takes and writes chunks until none is left, then waits for the other thread's (at most
 * `patienceMs`, then writes what is still missing itself); registers the travel costs and lists
 * for this thread and returns the km.
 */
export function computeSharedDistances(scenario: Scenario, work: DistanceWork, patienceMs = PATIENCE_MS): LineDistances {
  const chunks = chunksOf(scenario);
  for (let index = Atomics.add(work.next, 0, 1); index < chunks.length; index = Atomics.add(work.next, 0, 1)) {
    writeChunk(scenario, work, chunks[index]);
    Atomics.store(work.written, index, 1);
    Atomics.notify(work.written, index);
  }
  const deadline = Date.now() + patienceMs;
  for (let index = 0; index < chunks.length; index++) {
    while (Atomics.load(work.written, index) === 0) {
      if (Date.now() >= deadline) {
        writeChunk(scenario, work, chunks[index]);
        Atomics.store(work.written, index, 1);
        break;
      }
      Atomics.wait(work.written, index, 0, 100);
    }
  }
  for (const [lineId, { travelCost, lists }] of work.travel) {
    const km = work.distances.get(lineId) as Float64Array;
    if (km.length === 0) continue;
    rememberTravelCost(km, scenario.kmPerWeek, travelCost);
    rememberLists(travelCost, lists);
  }
  return work.distances;
}
