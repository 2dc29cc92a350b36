/**
 * The routine-class wait at one site as a function of the routine inflow routed to it: the
 * `SiteWaitModel` every rule solves with.
 *
 * A site is one queue (teams c, rate per team μ) or a pathway of stages (a Jackson network, see
 * `pathway.ts`). Urgent referrals arrive at a fixed rate u (they go to the nearest site offering
 * the line) and are served ahead of routine patients without interrupting anyone in service.
 * For a routine inflow x, each stage s visited v_s times per patient (v = 1 for a single queue)
 * sees urgent inflow u·v_s and routine inflow x·v_s, and the routine wait is
 *
 *   W(x) = Σ_s v_s · f_s · Wlow(c_s, μ_s, u·v_s, x·v_s),   f_s = (1 + cv_s²)/2,
 *   Wlow(c, μ, u, x) = C(c, (u + x)/μ) / (cμ) / ((1 − u/(cμ))(1 − (u + x)/(cμ)))   (Cobham 1954).
 *
 * Special cases: u = 0 and one stage gives the M/M/c wait C/(cμ − x) (Erlang C); cv ≠ 1 gives
 * the Allen–Cunneen wait. What is exact and what is approximate:
 *  - M/M/c FCFS (u = 0, cv = 1, one stage): exact.
 *  - Priority with cv = 1 on one stage: exact (Cobham's mean, equal μ for both classes).
 *  - cv ≠ 1: Allen–Cunneen factor applied to the priority wait — exact for one team (M/G/1
 *    priority: W0 = Σλ E[S²]/2 carries exactly that factor), an approximation for c > 1.
 *  - Pathways: exact for exponential stages (Jackson, with the urgent/routine split at every
 *    stage), approximate otherwise.
 *
 * The slope dW/dx is exact for this W (chain rule through Erlang C's analytic derivative),
 * because the optimum's marginal cost x·W'(x) + W(x) must match the function it minimises.
 * W(x) is Wlow at total load u + x scaled by the constant 1/(1 − u/(cμ)); Wlow at total load is
 * the FCFS M/M/c wait, increasing and convex in the load (Lee & Cohen 1983; Grassmann 1983), so
 * W and x·W(x) are increasing and convex in x — the property the optimum relies on.
 */
import type { SiteWaitModel } from "./problem";
import { allenCunneenFactor } from "./allen-cunneen";
import { assertNonNegative, assertPositiveRate, assertServers, erlangC } from "./erlang";
import { visitRatios } from "./pathway";
import { priorityQueueWaits } from "./priority";

export interface PathwayStageSpec {
  id: string;
  teams: number;
  ratePerTeam: number;
  /** Coefficient of variation of appointment length; 1 (exponential) by default. */
  serviceCv?: number;
}

export interface PathwaySpec {
  stages: PathwayStageSpec[];
  /** routing[i][j]: probability a patient finishing stage i goes next to stage j. */
  routing: number[][];
  /** Id of the stage where referrals arrive. */
  entry: string;
}

/** One site's capacity for one service line (the exchange format's per-site line entry). */
export interface SiteQueueSpec {
  teams: number;
  /** Patients per team per week. */
  ratePerTeam: number;
  /** Coefficient of variation of service time; 1 (exponential) by default. */
  serviceCv?: number;
  /** When present the stages define the site's queues; `teams`/`ratePerTeam` are then not used for waits. */
  pathway?: PathwaySpec;
}

/** A queue the site's patients pass through, with how often each patient visits it. */
interface StageQueue {
  id: string;
  servers: number;
  ratePerServer: number;
  variabilityFactor: number;
  visits: number;
}

function buildStageQueues(spec: SiteQueueSpec): StageQueue[] {
  assertServers(spec.teams, "teams");
  assertPositiveRate(spec.ratePerTeam, "ratePerTeam");
  const siteFactor = allenCunneenFactor(spec.serviceCv ?? 1);
  if (!spec.pathway) {
    return [{ id: "site", servers: spec.teams, ratePerServer: spec.ratePerTeam, variabilityFactor: siteFactor, visits: 1 }];
  }
  const { stages, routing, entry } = spec.pathway;
  if (stages.length === 0) throw new RangeError("pathway.stages must list at least one stage, got none");
  const ids = stages.map((stage) => stage.id);
  const duplicate = ids.find((id, index) => ids.indexOf(id) !== index);
  if (duplicate !== undefined) throw new RangeError(`pathway.stages has the id "${duplicate}" more than once`);
  stages.forEach((stage, index) => {
    assertServers(stage.teams, `pathway.stages[${index}].teams`);
    assertPositiveRate(stage.ratePerTeam, `pathway.stages[${index}].ratePerTeam`);
    assertNonNegative(stage.serviceCv ?? 1, `pathway.stages[${index}].serviceCv`);
  });
  let visits: Float64Array;
  try {
    visits = visitRatios(ids, routing, entry);
  } catch (error) {
    if (error instanceof RangeError) throw new RangeError(`pathway.${error.message}`);
    throw error;
  }
  return stages
    .map((stage, index) => ({
      id: stage.id,
      servers: stage.teams,
      ratePerServer: stage.ratePerTeam,
      variabilityFactor: allenCunneenFactor(stage.serviceCv ?? 1),
      visits: visits[index],
    }))
    .filter((queue) => queue.visits > 0);
}

/** Largest total (urgent + routine) entry rate every visited stage can sustain: min_s c_s μ_s / v_s. */
function totalCapacity(queues: readonly StageQueue[]): number {
  return Math.min(...queues.map((queue) => (queue.servers * queue.ratePerServer) / queue.visits));
}

function checkInflow(value: number, name: string): number {
  if (Number.isNaN(value)) throw new RangeError(`${name} must be a number, got NaN`);
  // Solvers may overshoot zero by rounding; a negative inflow has no other meaning.
  return value > 0 ? value : 0;
}

/**
 * The routine-class wait model of a site behind a fixed urgent inflow.
 *
 * `capacity` = (largest total entry rate every stage sustains) − urgentInflow, never below 0:
 * for one queue cμ − u; for a pathway min_s c_s μ_s / v_s − u. `wait(x)` and `waitSlope(x)` are
 * Infinity for x ≥ capacity; negative x is treated as 0.
 *
 * Worked example: teams 2, ratePerTeam 1, urgent 0.5 → capacity 1.5, wait(1) = 12/7 (Cobham).
 * Throws a RangeError naming the field (teams, ratePerTeam, serviceCv, pathway.…, urgentInflow).
 */
export function createSiteWaitModel(spec: SiteQueueSpec, urgentInflow = 0): SiteWaitModel {
  assertNonNegative(urgentInflow, "urgentInflow");
  const queues = buildStageQueues(spec);
  const capacity = Math.max(0, totalCapacity(queues) - urgentInflow);
  // d^order wait / dx^order: stage s sees v_s·x, so its term carries v_s^(order+1).
  const derivative = (x: number, order: 1 | 2): number => {
    const routine = checkInflow(x, "routine inflow");
    if (routine >= capacity) return Infinity;
    let total = 0;
    for (const queue of queues) {
      const v = queue.visits;
      const stage = routineStageWaitDerivative(queue, urgentInflow * v, routine * v, order);
      total += (order === 1 ? v * v : v * v * v) * queue.variabilityFactor * stage;
    }
    return total;
  };
  return {
    capacity,
    wait(x: number): number {
      const routine = checkInflow(x, "routine inflow");
      if (routine >= capacity) return Infinity;
      let total = 0;
      for (const queue of queues) {
        total += queue.visits * queue.variabilityFactor * routineStageWait(queue, urgentInflow * queue.visits, routine * queue.visits);
      }
      return total;
    },
    waitSlope: (x: number): number => derivative(x, 1),
    waitCurvature: (x: number): number => derivative(x, 2),
  };
}

/*
 * The two functions below are the hot path of every solver (called for each site at each
 * iteration), so they repeat Cobham's two-class formula and its derivative inline — inputs were
 * validated when the model was built, and nothing is allocated. They agree with
 * `lowPriorityQueueWait` / `lowPriorityQueueWaitSlope` in priority.ts (tested to 1e-14).
 */

/** Erlang B by the stable recursion, without argument checks. */
function blockingOf(servers: number, load: number): number {
  let blocking = 1;
  for (let k = 1; k <= servers; k++) {
    const numerator = load * blocking;
    blocking = numerator / (k + numerator);
  }
  return blocking;
}

/** Cobham's low-class wait C(c, a)/(cμ) / ((1 − σ_u)(1 − σ)) at one stage. */
function routineStageWait(queue: StageQueue, urgent: number, routine: number): number {
  const stageCapacity = queue.servers * queue.ratePerServer;
  const total = urgent + routine;
  if (total >= stageCapacity) return Infinity;
  const utilisation = total / stageCapacity;
  const blocking = blockingOf(queue.servers, total / queue.ratePerServer);
  const waitProbability = blocking / (1 - utilisation * (1 - blocking));
  return waitProbability / (stageCapacity * (1 - urgent / stageCapacity) * (1 - utilisation));
}

/**
 * d/d(routine) of `routineStageWait` (order 1), by dB/da = B(c/a − 1 + B) and the chain rule (see
 * priority.ts), or d²/d(routine)² (order 2). With a = λ/μ, ρ = a/c, B Erlang B, D = 1 − ρ + ρB and
 * P = B/D (Erlang C), W = s·P/(1 − ρ) for s = 1/(cμ − u):
 *   B' = B(c/a − 1 + B), B'' = B'(c/a − 1 + B) + B(B' − c/a²),
 *   D' = (B − 1)/c + ρB',  D'' = 2B'/c + ρB'',  P' = (B'D − BD')/D²,  P'' = (B''D − BD'')/D² − 2D'P'/D,
 *   W' = s·[P'/(μ(1 − ρ)) + P/(cμ(1 − ρ)²)],
 *   W'' = s·[P''/(μ²(1 − ρ)) + 2P'/(μ·cμ·(1 − ρ)²) + 2P/((cμ)²(1 − ρ)³)]   (derivatives in λ).
 * At a = 0, B' and B'' take their limits (B ≈ a^c/c!): B' = 1 for c = 1, else 0; B'' = −2 for
 * c = 1, 1 for c = 2, else 0. The second derivative is checked against differences of the first.
 */
function routineStageWaitDerivative(queue: StageQueue, urgent: number, routine: number, order: 1 | 2): number {
  const { servers, ratePerServer } = queue;
  const stageCapacity = servers * ratePerServer;
  const total = urgent + routine;
  if (total >= stageCapacity) return Infinity;
  const load = total / ratePerServer;
  const utilisation = total / stageCapacity;
  const spareShare = 1 - utilisation;
  const blocking = blockingOf(servers, load);
  const factor = servers / load - 1 + blocking;
  const blockingSlope = load === 0 ? (servers === 1 ? 1 : 0) : blocking * factor;
  const denominator = spareShare + utilisation * blocking;
  const denominatorSlope = (blocking - 1) / servers + utilisation * blockingSlope;
  const waitProbability = blocking / denominator;
  const waitProbabilitySlope = (blockingSlope * denominator - blocking * denominatorSlope) / (denominator * denominator);
  const scale = 1 / (stageCapacity * (1 - urgent / stageCapacity));
  if (order === 1) {
    return scale * (waitProbabilitySlope / (ratePerServer * spareShare) + waitProbability / (stageCapacity * spareShare * spareShare));
  }
  const blockingCurvature =
    load === 0 ? (servers === 1 ? -2 : servers === 2 ? 1 : 0) : blockingSlope * factor + blocking * (blockingSlope - servers / (load * load));
  const denominatorCurvature = (2 * blockingSlope) / servers + utilisation * blockingCurvature;
  const waitProbabilityCurvature =
    (blockingCurvature * denominator - blocking * denominatorCurvature) / (denominator * denominator) -
    (2 * denominatorSlope * waitProbabilitySlope) / denominator;
  return (
    scale *
    (waitProbabilityCurvature / (ratePerServer * ratePerServer * spareShare) +
      (2 * waitProbabilitySlope) / (ratePerServer * stageCapacity * spareShare * spareShare) +
      (2 * waitProbability) / (stageCapacity * stageCapacity * spareShare * spareShare * spareShare))
  );
}

export interface SiteMetrics {
  /** Highest stage utilisation (u + x)·v_s/(c_s μ_s); for one queue (u + x)/(cμ). */
  utilisation: number;
  /** Mean total queue wait of a routine patient (weeks); Infinity without a steady state. */
  routineWait: number;
  /** Mean total queue wait of an urgent patient (weeks); finite while urgent demand alone fits. */
  urgentWait: number;
  /** Inflow-weighted mean of the two (the routine wait when there is no inflow at all). */
  meanWait: number;
  /** Share of routine patients whose total queue wait is at most `standardWeeks`. */
  shareWithinStandard: number;
  /** True when `shareWithinStandard` is exact (M/M/c FCFS: no urgent inflow, cv = 1, one stage). */
  shareWithinStandardExact: boolean;
}

/**
 * A site's reported measures at given urgent and routine inflows.
 *
 * Share within the standard, routine class:
 *  - M/M/c FCFS: exact, P(Wq ≤ t) = 1 − C·exp(−(cμ − λ)t).
 *  - Otherwise an approximation: P(Wq ≤ t) ≈ 1 − p·exp(−p·t/W), i.e. a patient waits at all with
 *    probability p and then an exponential time whose mean makes the overall mean exactly W (the
 *    model's routine wait). For one queue p = C(c, (u + x)/μ), which is exactly the probability
 *    of finding all teams busy under priority too (with equal μ the number present does not depend
 *    on the service order); for a pathway p = min(1, Σ_s v_s C_s), the expected number of visits
 *    that wait, capped at 1. The form reproduces the exact M/M/c FCFS answer as a special case.
 *
 * Worked example: teams 2, ratePerTeam 1, urgent 0.5, routine 1, standard 1 week →
 * utilisation 0.75, routine 12/7, urgent 3/7, mean 9/7.
 */
export function siteMetrics(spec: SiteQueueSpec, urgentInflow: number, routineInflow: number, standardWeeks: number): SiteMetrics {
  assertNonNegative(urgentInflow, "urgentInflow");
  assertNonNegative(routineInflow, "routineInflow");
  assertNonNegative(standardWeeks, "standardWeeks");
  const queues = buildStageQueues(spec);
  let utilisation = 0;
  let routineWait = 0;
  let urgentWait = 0;
  let expectedWaitingVisits = 0;
  for (const queue of queues) {
    const stageUrgent = urgentInflow * queue.visits;
    const stageRoutine = routineInflow * queue.visits;
    const stageCapacity = queue.servers * queue.ratePerServer;
    utilisation = Math.max(utilisation, (stageUrgent + stageRoutine) / stageCapacity);
    const [urgent, routine] = priorityQueueWaits(queue.servers, queue.ratePerServer, [stageUrgent, stageRoutine]);
    urgentWait += queue.visits * queue.variabilityFactor * urgent;
    routineWait += queue.visits * queue.variabilityFactor * routine;
    expectedWaitingVisits += queue.visits * erlangC(queue.servers, (stageUrgent + stageRoutine) / queue.ratePerServer);
  }
  const totalInflow = urgentInflow + routineInflow;
  const meanWait =
    totalInflow > 0 ? inflowWeightedMean(urgentInflow, urgentWait, routineInflow, routineWait, totalInflow) : routineWait;
  const exact = queues.length === 1 && !spec.pathway && urgentInflow === 0 && queues[0].variabilityFactor === 1;
  return {
    utilisation,
    routineWait,
    urgentWait,
    meanWait,
    shareWithinStandard: shareWithin(Math.min(1, expectedWaitingVisits), routineWait, standardWeeks),
    shareWithinStandardExact: exact,
  };
}

/** Avoids 0·Infinity = NaN when one class has no inflow and an infinite wait. */
function inflowWeightedMean(urgentInflow: number, urgentWait: number, routineInflow: number, routineWait: number, total: number): number {
  const urgentPart = urgentInflow > 0 ? urgentInflow * urgentWait : 0;
  const routinePart = routineInflow > 0 ? routineInflow * routineWait : 0;
  return (urgentPart + routinePart) / total;
}

/** 1 − p·exp(−p·t/W): waits at all with probability p, then exponentially with the mean that gives W overall. */
function shareWithin(probabilityOfWaiting: number, meanWait: number, standardWeeks: number): number {
  if (!Number.isFinite(meanWait)) return 0;
  if (meanWait <= 0 || probabilityOfWaiting <= 0) return 1;
  return 1 - probabilityOfWaiting * Math.exp((-probabilityOfWaiting * standardWeeks) / meanWait);
}
