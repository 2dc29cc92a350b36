/**
 * The engine's internal, normalised view of one service line: what every rule solves.
 *
 * The exchange-format scenario (see `scenario.ts`) is validated and turned into one
 * `LineProblem` per service line (and per period). Solvers work only with these arrays:
 * sources i = 0..n-1, sites j = 0..m-1, the pair (i, j) stored at index i * m + j.
 *
 * Units: time in weeks, distance in km, cost in weeks-equivalent (one week of waiting = 1).
 */
import type { FlowRows } from "./flow-rows";

/**
 * How the routine-class queue wait at one site grows with the routine inflow routed to it.
 * Implementations live in `site-wait.ts` (M/M/c by Erlang C, the Allen–Cunneen correction,
 * non-preemptive priority behind a fixed urgent inflow, pathways as Jackson networks).
 */
export interface SiteWaitModel {
  /** Largest routine inflow (referrals/week) the site can take and still reach a steady state. */
  readonly capacity: number;
  /** Mean wait in queue (weeks) faced by a routine patient when the routine inflow is x; Infinity at or above capacity. */
  wait(x: number): number;
  /** d wait / dx at routine inflow x (weeks per referral/week); Infinity at or above capacity. */
  waitSlope(x: number): number;
  /** d² wait / dx² at routine inflow x (the marginal cost's slope needs it); Infinity at or above capacity. */
  waitCurvature(x: number): number;
}

export interface LineProblem {
  lineId: string;
  standardWeeks: number;
  /** Number of referral sources (practices). */
  n: number;
  /** Number of provider sites that offer this line. */
  m: number;
  sourceIds: string[];
  siteIds: string[];
  /** Routine demand per source (referrals/week) that the rule allocates. */
  demand: Float64Array;
  /** Outside-option (private care) cost per source in weeks-equivalent; Infinity = no outside option. */
  outsideCost: Float64Array;
  /** Spread s in [0, 1): reservation costs uniform on [o(1-s), o(1+s)]; 0 = sharp threshold. */
  outsideSpread: Float64Array;
  /** Travel cost km / kmPerWeek for each pair (n*m, row-major by source); Infinity = pair not allowed. */
  travelCost: Float64Array;
  /** Road km for each pair (n*m), for reporting and journey limits. */
  km: Float64Array;
  /** One wait model per site. */
  sites: SiteWaitModel[];
  /** Optional contract volumes per site (routine referrals/week); NaN = none. */
  minWeekly: Float64Array;
  maxWeekly: Float64Array;
}

/** An allocation of one line's routine demand: flows per pair and balking per source. */
export interface Allocation {
  /** Referrals/week from source i to site j, index i * m + j. */
  flow: Float64Array;
  /** Referrals/week from source i that leave for the outside option (private care or go without). */
  balked: Float64Array;
  /**
   * The same flows as rows of their non-zero entries, when the solver made them so (`flow-rows.ts`):
   * readers over every pair visit these instead, and `flow` is then made only when read.
   */
  rows?: FlowRows;
}

export interface SolveDiagnostics {
  converged: boolean;
  iterations: number;
  relativeGap: number;
  warnings: string[];
}

export type RuleKey = "choice" | "choiceLogit" | "optimum" | "nearest" | "capacityShare" | "plan";

/** A typed error for input the engine cannot accept: names the field path and the value. */
export class ScenarioInputError extends Error {
  constructor(public readonly issues: { path: string; message: string }[]) {
    super(issues.map((issue) => `${issue.path}: ${issue.message}`).join("\n"));
    this.name = "ScenarioInputError";
  }
}

/** Demand above capacity with no outside option: the model has no steady state. */
export class NoSteadyStateError extends Error {
  constructor(
    public readonly shortfalls: { lineId: string; periodId?: string; siteIds: string[]; demand: number; capacity: number; shortfall: number }[],
  ) {
    super(
      shortfalls
        .map(
          (s) =>
            `No steady state for service line "${s.lineId}"${s.periodId ? ` in period "${s.periodId}"` : ""}: ` +
            `demand without an outside option ${s.demand.toFixed(2)} referrals/week exceeds the capacity of sites ` +
            `${s.siteIds.join(", ")} (${s.capacity.toFixed(2)}/week) by ${s.shortfall.toFixed(2)} referrals/week.`,
        )
        .join("\n"),
    );
    this.name = "NoSteadyStateError";
  }
}
