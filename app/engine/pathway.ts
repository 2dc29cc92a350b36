/**
 * A site's care pathway as an open Jackson network: stages (first appointment → diagnostics →
 * treatment …), each an M/M/c queue, with routing probabilities between them.
 *
 * Traffic equations: the total arrival rate at each stage is its external arrivals plus what
 * other stages send on,
 *
 *   λ_j = γ_j + Σ_i λ_i R_ij,   i.e.  (I − Rᵀ) λ = γ,
 *
 * where R_ij is the probability that a patient finishing stage i goes next to stage j and
 * 1 − Σ_j R_ij the probability of leaving the pathway. Jackson's theorem: in steady state each
 * stage behaves as an independent M/M/c queue with Poisson input at rate λ_j, so the network's
 * measures are sums of per-stage Erlang C measures.
 *
 * Sources: Jackson (1957) "Networks of waiting lines", Operations Research 5(4):518–521;
 * Jackson (1963) "Jobshop-like queueing systems", Management Science 10(1):131–142 (from memory).
 * Worked example: γ = (4, 0, 0), R = [[0, .5, .2], [.4, 0, .3], [.1, 0, 0]], stations
 * (c, μ) = (4, 2), (3, 3), (2, 1.5) → λ = (800/153, 400/153, 280/153), ΣL = 6.133786,
 * mean sojourn ΣL/Σγ = 1.533446.
 *
 * Service-time variability (`serviceCv` ≠ 1) is handled per stage by the Allen–Cunneen factor.
 * The network is then no longer a product-form Jackson network (departures of a non-exponential
 * stage are not Poisson); keeping the per-stage correction and ignoring that effect is an
 * approximation, reasonable when stages are moderately loaded.
 */
import { allenCunneenFactor } from "./allen-cunneen";
import { assertNonNegative, assertPositiveRate, assertServers, mmcMetrics } from "./erlang";

/** How far a routing row may sum above 1 (rounding in uploaded files) before it is rejected. */
const ROW_SUM_TOLERANCE = 1e-9;
/** A row whose exit probability is below this is treated as having no exit. */
const EXIT_THRESHOLD = 1e-12;

type Routing = readonly (readonly number[])[];

function stageLabel(index: number, stageIds?: readonly string[]): string {
  return stageIds ? `stage "${stageIds[index]}" (row ${index})` : `stage ${index}`;
}

/**
 * Checks a routing matrix and throws a RangeError naming the exact problem:
 * not square / wrong size, an entry outside [0, 1] or not a number, a row summing above 1,
 * or stages from which patients can never leave (then I − R is singular: its spectral radius
 * is 1, and the traffic equations have no solution).
 *
 * A sub-stochastic matrix has spectral radius < 1 exactly when every stage can reach a stage
 * with a positive exit probability, so that reachability test is what we check.
 * Source: Kemeny & Snell (1960) *Finite Markov Chains*, §3 on absorbing chains (from memory).
 */
export function assertRoutingMatrix(routing: Routing, stageCount: number, stageIds?: readonly string[]): void {
  if (routing.length !== stageCount) {
    throw new RangeError(`routing must have one row per stage (${stageCount}), got ${routing.length} rows`);
  }
  const exits: number[] = [];
  routing.forEach((row, i) => {
    if (row.length !== stageCount) {
      throw new RangeError(`routing[${i}] must have one entry per stage (${stageCount}), got ${row.length}`);
    }
    let sum = 0;
    row.forEach((probability, j) => {
      if (!Number.isFinite(probability) || probability < 0 || probability > 1) {
        throw new RangeError(`routing[${i}][${j}] must be a probability in [0, 1], got ${String(probability)}`);
      }
      sum += probability;
    });
    if (sum > 1 + ROW_SUM_TOLERANCE) {
      throw new RangeError(
        `routing[${i}] sums to ${sum}: the probabilities of moving on from ${stageLabel(i, stageIds)} must add up to at most 1`,
      );
    }
    exits.push(1 - sum);
  });
  // Walk backwards from the stages with an exit: whatever is reached can leave eventually.
  const canLeave = exits.map((exit) => exit > EXIT_THRESHOLD);
  const pending = canLeave.flatMap((leaves, index) => (leaves ? [index] : []));
  while (pending.length > 0) {
    const target = pending.pop() as number;
    for (let source = 0; source < stageCount; source++) {
      if (!canLeave[source] && routing[source][target] > 0) {
        canLeave[source] = true;
        pending.push(source);
      }
    }
  }
  const trapped = canLeave.flatMap((leaves, index) => (leaves ? [] : [stageLabel(index, stageIds)]));
  if (trapped.length > 0) {
    throw new RangeError(
      `routing never lets patients leave the pathway from ${trapped.join(", ")}: ` +
        `every route from there loops back without an exit, so the traffic equations have no solution`,
    );
  }
}

/**
 * Solves the traffic equations (I − Rᵀ)λ = γ by Gaussian elimination with partial pivoting.
 * Validates R first (see `assertRoutingMatrix`) and each γ_j ≥ 0.
 * Worked example: γ = (4, 0, 0) and R as in the file comment → (800/153, 400/153, 280/153).
 */
export function solveTrafficEquations(
  externalArrivals: readonly number[],
  routing: Routing,
  stageIds?: readonly string[],
): Float64Array {
  const size = externalArrivals.length;
  externalArrivals.forEach((rate, index) => assertNonNegative(rate, `externalArrivals[${index}]`));
  assertRoutingMatrix(routing, size, stageIds);
  // Augmented matrix [I − Rᵀ | γ], row-major.
  const width = size + 1;
  const matrix = new Float64Array(size * width);
  for (let j = 0; j < size; j++) {
    for (let i = 0; i < size; i++) matrix[j * width + i] = (i === j ? 1 : 0) - routing[i][j];
    matrix[j * width + size] = externalArrivals[j];
  }
  for (let column = 0; column < size; column++) {
    let pivotRow = column;
    for (let row = column + 1; row < size; row++) {
      if (Math.abs(matrix[row * width + column]) > Math.abs(matrix[pivotRow * width + column])) pivotRow = row;
    }
    if (pivotRow !== column) {
      for (let k = 0; k < width; k++) {
        const held = matrix[column * width + k];
        matrix[column * width + k] = matrix[pivotRow * width + k];
        matrix[pivotRow * width + k] = held;
      }
    }
    const pivot = matrix[column * width + column];
    for (let row = column + 1; row < size; row++) {
      const factor = matrix[row * width + column] / pivot;
      if (factor === 0) continue;
      for (let k = column; k < width; k++) matrix[row * width + k] -= factor * matrix[column * width + k];
    }
  }
  const rates = new Float64Array(size);
  for (let row = size - 1; row >= 0; row--) {
    let value = matrix[row * width + size];
    for (let k = row + 1; k < size; k++) value -= matrix[row * width + k] * rates[k];
    // Rounding can leave −1e-17 where the exact answer is 0 (an unreachable stage).
    rates[row] = Math.max(0, value / matrix[row * width + row]);
  }
  return rates;
}

/**
 * Visit ratios: the mean number of visits to each stage per patient entering at `entry`
 * (the traffic equations with γ = 1 at the entry stage, 0 elsewhere).
 * Worked example: stages a → b with R = [[0, 1], [0.25, 0]], entry a → v = (4/3, 4/3).
 */
export function visitRatios(stageIds: readonly string[], routing: Routing, entry: string): Float64Array {
  const entryIndex = stageIds.indexOf(entry);
  if (entryIndex < 0) {
    throw new RangeError(`entry must be one of the stage ids (${stageIds.join(", ")}), got "${entry}"`);
  }
  const external = stageIds.map((_, index) => (index === entryIndex ? 1 : 0));
  return solveTrafficEquations(external, routing, stageIds);
}

/** One station of a Jackson network: c servers each serving at rate μ. */
export interface JacksonStation {
  servers: number;
  ratePerServer: number;
  /** Coefficient of variation of service time; 1 (exponential) by default. */
  serviceCv?: number;
}

export interface JacksonNetworkResult {
  /** λ_j from the traffic equations. */
  arrivalRates: Float64Array;
  /** ρ_j = λ_j/(c_j μ_j). */
  utilisation: Float64Array;
  /** Mean queue wait per visit at each station (Allen–Cunneen scaled when serviceCv ≠ 1). */
  queueWait: Float64Array;
  /** Mean number present (waiting + in service) at each station. */
  numberInSystem: Float64Array;
  /** Σ_j L_j. */
  totalNumberInSystem: number;
  /** Mean time from entering to leaving the network, ΣL / Σγ (Little's law). */
  meanSojourn: number;
  /** Mean total queue wait per patient, Σ_j λ_j Wq_j / Σγ: the visit-weighted sum of stage waits. */
  meanQueueWait: number;
  /** Whether every station has λ_j < c_j μ_j; otherwise waits are Infinity. */
  stable: boolean;
}

/**
 * Steady-state measures of an open Jackson network (product form: each station is M/M/c at its
 * traffic-equation rate). With serviceCv ≠ 1 at a station its queue wait and queue length are
 * scaled by the Allen–Cunneen factor — an approximation, see the file comment.
 */
export function jacksonNetwork(
  stations: readonly JacksonStation[],
  externalArrivals: readonly number[],
  routing: Routing,
): JacksonNetworkResult {
  if (stations.length !== externalArrivals.length) {
    throw new RangeError(
      `externalArrivals must have one entry per station (${stations.length}), got ${externalArrivals.length}`,
    );
  }
  stations.forEach((station, index) => {
    assertServers(station.servers, `stations[${index}].servers`);
    assertPositiveRate(station.ratePerServer, `stations[${index}].ratePerServer`);
  });
  const arrivalRates = solveTrafficEquations(externalArrivals, routing);
  const size = stations.length;
  const utilisation = new Float64Array(size);
  const queueWait = new Float64Array(size);
  const numberInSystem = new Float64Array(size);
  let totalNumberInSystem = 0;
  let totalQueueTime = 0;
  let stable = true;
  stations.forEach((station, j) => {
    const factor = allenCunneenFactor(station.serviceCv ?? 1);
    const metrics = mmcMetrics(station.servers, station.ratePerServer, arrivalRates[j]);
    utilisation[j] = metrics.utilisation;
    if (metrics.utilisation >= 1) stable = false;
    queueWait[j] = metrics.queueWait * factor;
    numberInSystem[j] = metrics.queueLength * factor + metrics.offeredLoad;
    totalNumberInSystem += numberInSystem[j];
    totalQueueTime += arrivalRates[j] * queueWait[j];
  });
  const externalTotal = externalArrivals.reduce((sum, rate) => sum + rate, 0);
  return {
    arrivalRates,
    utilisation,
    queueWait,
    numberInSystem,
    totalNumberInSystem,
    meanSojourn: externalTotal > 0 ? totalNumberInSystem / externalTotal : 0,
    meanQueueWait: externalTotal > 0 ? totalQueueTime / externalTotal : 0,
    stable,
  };
}
