/**
 * The capacity advisor: where should N extra teams go?
 *
 * A team belongs to one site and one service line. Placing teams changes only the lines they
 * are placed on, and the total cost (PRODUCT.md: Σ flows × (wait + km/κ) + balkers' reservation
 * costs, routine referrals) is a sum over lines, so the question is a placement of N teams over
 * the (site, line) pairs that minimises Σ_lines cost_line(teams placed on that line).
 *
 * Greedy (the ranked list): N steps; at each, every (site, line) pair still under its site's
 * limit is tried with one more team, its line re-solved under the rule (not extrapolated from
 * derivatives: patients move when waits change), and the pair that lowers total cost most takes
 * the team. Only the line that received the team changes, so the next step re-solves only that
 * line's pairs; every other pair's gain is kept. This is the marginal-allocation method
 * (Fox 1966, "Discrete optimization via marginal analysis", Management Science 13(3):210–216),
 * optimal when costs are separable and convex in each pair's teams. Here sites on one line
 * interact through patients' choices, so greedy is a heuristic — hence the exact check.
 *
 * Exact (small problems only): for each line, every placement of 0…N teams over its sites (within
 * the limits) is solved; then an integer program picks one placement per line so that exactly N
 * teams are placed, each site within its limit (a limit applies to the site over all its lines),
 * at least total cost:
 *
 *   min Σ_L Σ_v cost_L(v)·y_{L,v}  s.t.  Σ_v y_{L,v} = 1 ∀L,  Σ_{L,v} |v|·y_{L,v} = N,
 *   Σ_{L,v} v_j·y_{L,v} ≤ limit_j ∀ sites j,  y ∈ {0, 1}
 *
 * (a multiple-choice knapsack), solved by branch and bound in javascript-lp-solver. It is exact
 * in the placement because every candidate placement's cost comes from a full re-solve; the
 * enumeration grows as Σ_L C(N + m_L, m_L), so it runs only under a budget of solves.
 *
 * Both run under choice (what patients would do with the new capacity) and under the optimum (what
 * a central hub could make of it); the two can disagree, which is itself worth showing a board.
 */
import solver, { type Model, type Solution } from "javascript-lp-solver";
import { buildLineProblem } from "./build-problem";
import { addTeams } from "./extra-teams";
import { RESOLVED_RULES, solveLineRule, type LineRuleOutcome, type ResolvedRule } from "./line-rule-solve";
import type { Scenario } from "./scenario";

export interface CapacityAdvisorOptions {
  /** Teams to place, a whole number ≥ 1. */
  extraTeams: number;
  /** Rules to advise under. Default both: choice and optimum. */
  rules?: readonly ResolvedRule[];
  /** Service lines the teams may go to. Default every line. */
  lines?: readonly string[];
  /** Most extra teams per site id over all its lines. Default: no limit. */
  siteLimits?: Readonly<Record<string, number>>;
  /** Run the exact check when it needs at most this many line solves per rule; 0 switches it off. Default 120. */
  exactSolveBudget?: number;
}

export interface PlacementStep {
  step: number;
  siteId: string;
  lineId: string;
  /** Stage that received the team, for a site with a pathway. */
  stageId: string | null;
  /** Teams on this site line after the step (the scenario's teams + extra placed so far). */
  teamsAfter: number;
  totalCostBefore: number;
  totalCostAfter: number;
  /** totalCostBefore − totalCostAfter (weeks-equivalent per week); negative if the team makes things worse. */
  gain: number;
  /** Routine referrals/week leaving for private care over the advised lines after the step. */
  balkedPerWeek: number;
}

export interface CandidateGain {
  siteId: string;
  lineId: string;
  gain: number;
}

export interface ExactPlacement {
  status: "solved";
  totalCost: number;
  /** Extra teams per site and line. */
  placement: Record<string, Record<string, number>>;
  /** True when the greedy placement costs the same (to 1e-9 relative) as the exact one. */
  agreesWithGreedy: boolean;
  /** Line placements compared (each a full solve, some shared with the greedy steps). */
  placementsCompared: number;
}

export interface ExactSkipped {
  status: "skipped";
  reason: string;
  solvesNeeded: number;
}

export interface AdvisorRuleResult {
  rule: ResolvedRule;
  baselineTotalCost: number;
  baselineBalkedPerWeek: number;
  /** Each team in the order greedy placed it. */
  steps: PlacementStep[];
  totalCost: number;
  /** Extra teams per site and line after all steps. */
  placement: Record<string, Record<string, number>>;
  /** The first step's gain at every pair, best first: where one team helps most. */
  firstStepRanking: CandidateGain[];
  exact: ExactPlacement | ExactSkipped;
  /** Solves that did not converge (their costs are the last iterate). */
  warnings: string[];
  solves: number;
}

export interface CapacityAdvice {
  extraTeams: number;
  lines: string[];
  siteLimits: Record<string, number>;
  rules: AdvisorRuleResult[];
}

interface Candidate {
  siteId: string;
  lineId: string;
}

/** One line's solved placements under one rule, keyed by the extra teams per site of that line. */
class LineCosts {
  readonly sites: string[];
  private readonly cache = new Map<string, LineRuleOutcome>();
  solves = 0;
  readonly warnings: string[] = [];

  constructor(
    private readonly scenario: Scenario,
    readonly lineId: string,
    private readonly rule: ResolvedRule,
  ) {
    this.sites = scenario.providers.filter((provider) => provider.lines[lineId]).map((provider) => provider.id);
  }

  outcome(extra: readonly number[], warmFrom?: readonly number[]): LineRuleOutcome {
    const key = extra.join(",");
    const known = this.cache.get(key);
    if (known) return known;
    let scenario = this.scenario;
    extra.forEach((count, j) => {
      if (count > 0) scenario = addTeams(scenario, this.sites[j], this.lineId, count).scenario;
    });
    const warm = warmFrom ? this.cache.get(warmFrom.join(","))?.siteWait : undefined;
    const result = solveLineRule(buildLineProblem(scenario, this.lineId), this.rule, warm);
    this.solves += 1;
    if (!result.converged) {
      this.warnings.push(`${this.rule} on line ${this.lineId} with extra teams [${key}] did not converge after ${result.iterations} iterations.`);
    }
    this.cache.set(key, result);
    return result;
  }
}

function normalise(scenario: Scenario, options: CapacityAdvisorOptions) {
  const { extraTeams } = options;
  if (!Number.isInteger(extraTeams) || extraTeams < 1) throw new RangeError(`extraTeams must be a whole number ≥ 1, got ${String(extraTeams)}`);
  const knownLines = scenario.serviceLines.map((line) => line.id);
  const lines = options.lines ? [...options.lines] : knownLines;
  for (const line of lines) if (!knownLines.includes(line)) throw new RangeError(`lines: unknown service line "${line}" (known: ${knownLines.join(", ")})`);
  if (lines.length === 0) throw new RangeError("lines must name at least one service line");
  const siteLimits: Record<string, number> = {};
  for (const [siteId, limit] of Object.entries(options.siteLimits ?? {})) {
    if (!scenario.providers.some((provider) => provider.id === siteId)) throw new RangeError(`siteLimits: unknown site "${siteId}"`);
    if (!Number.isInteger(limit) || limit < 0) throw new RangeError(`siteLimits.${siteId} must be a whole number ≥ 0, got ${String(limit)}`);
    siteLimits[siteId] = limit;
  }
  const rules = options.rules ? [...options.rules] : [...RESOLVED_RULES];
  for (const rule of rules) if (!RESOLVED_RULES.includes(rule)) throw new RangeError(`rules: unknown rule "${String(rule)}" (choice or optimum)`);
  const room = scenario.providers
    .filter((provider) => lines.some((line) => provider.lines[line]))
    .reduce((total, provider) => total + (siteLimits[provider.id] ?? Infinity), 0);
  if (room < extraTeams) throw new RangeError(`siteLimits leave room for ${room} extra teams on the chosen lines, fewer than the ${extraTeams} to place`);
  return { extraTeams, lines, siteLimits, rules, exactSolveBudget: options.exactSolveBudget ?? 120 };
}

/** Advises where to place `extraTeams` teams (see the file comment). The scenario must have a steady state. */
export function adviseCapacity(scenario: Scenario, options: CapacityAdvisorOptions): CapacityAdvice {
  const settings = normalise(scenario, options);
  return {
    extraTeams: settings.extraTeams,
    lines: settings.lines,
    siteLimits: settings.siteLimits,
    rules: settings.rules.map((rule) => adviseUnderRule(scenario, rule, settings)),
  };
}

function adviseUnderRule(scenario: Scenario, rule: ResolvedRule, settings: ReturnType<typeof normalise>): AdvisorRuleResult {
  const { extraTeams, lines, siteLimits } = settings;
  const costs = new Map(lines.map((lineId) => [lineId, new LineCosts(scenario, lineId, rule)]));
  const placed = new Map(lines.map((lineId) => [lineId, new Array<number>(costs.get(lineId)!.sites.length).fill(0)]));
  const perSite = new Map<string, number>();
  const baseTeams = (siteId: string, lineId: string) => {
    const siteLine = scenario.providers.find((provider) => provider.id === siteId)!.lines[lineId];
    return siteLine.stages ? siteLine.stages.reduce((total, stage) => total + stage.teams, 0) : (siteLine.teams as number);
  };

  const lineCost = (lineId: string) => costs.get(lineId)!.outcome(placed.get(lineId)!);
  const total = () => lines.reduce((sum, lineId) => sum + lineCost(lineId).totalCost, 0);
  const balked = () => lines.reduce((sum, lineId) => sum + lineCost(lineId).balkedPerWeek, 0);
  const baselineTotalCost = total();
  const baselineBalkedPerWeek = balked();

  const candidates: Candidate[] = lines.flatMap((lineId) => costs.get(lineId)!.sites.map((siteId) => ({ siteId, lineId })));
  const gainOf = (candidate: Candidate): number => {
    const line = costs.get(candidate.lineId)!;
    const current = placed.get(candidate.lineId)!;
    const trial = current.slice();
    trial[line.sites.indexOf(candidate.siteId)] += 1;
    return line.outcome(current).totalCost - line.outcome(trial, current).totalCost;
  };

  let firstStepRanking: CandidateGain[] = [];
  const steps: PlacementStep[] = [];
  for (let step = 1; step <= extraTeams; step++) {
    const open = candidates.filter((candidate) => (perSite.get(candidate.siteId) ?? 0) < (siteLimits[candidate.siteId] ?? Infinity));
    const gains = open.map((candidate) => ({ ...candidate, gain: gainOf(candidate) }));
    if (step === 1) firstStepRanking = [...gains].sort((a, b) => b.gain - a.gain);
    // Ties go to the pair listed first (line order, then site order): the list is stable run to run.
    let best = gains[0];
    for (const candidate of gains) if (candidate.gain > best.gain) best = candidate;
    const before = total();
    const line = costs.get(best.lineId)!;
    const vector = placed.get(best.lineId)!;
    const index = line.sites.indexOf(best.siteId);
    vector[index] += 1;
    perSite.set(best.siteId, (perSite.get(best.siteId) ?? 0) + 1);
    const after = total();
    const stages = addTeams(scenario, best.siteId, best.lineId, vector[index]).stages;
    steps.push({
      step,
      siteId: best.siteId,
      lineId: best.lineId,
      stageId: stages.length > 0 ? stages[stages.length - 1] : null,
      teamsAfter: baseTeams(best.siteId, best.lineId) + vector[index],
      totalCostBefore: before,
      totalCostAfter: after,
      gain: before - after,
      balkedPerWeek: balked(),
    });
  }

  const greedyCost = total();
  const exact = exactPlacement(costs, lines, settings, greedyCost);
  const warnings = lines.flatMap((lineId) => costs.get(lineId)!.warnings);
  return {
    rule,
    baselineTotalCost,
    baselineBalkedPerWeek,
    steps,
    totalCost: greedyCost,
    placement: placementRecord(costs, placed),
    firstStepRanking,
    exact,
    warnings,
    solves: lines.reduce((sum, lineId) => sum + costs.get(lineId)!.solves, 0),
  };
}

function placementRecord(costs: Map<string, LineCosts>, placed: Map<string, number[]>): Record<string, Record<string, number>> {
  const record: Record<string, Record<string, number>> = {};
  for (const [lineId, vector] of placed) {
    vector.forEach((count, j) => {
      if (count === 0) return;
      const siteId = costs.get(lineId)!.sites[j];
      record[siteId] = { ...(record[siteId] ?? {}), [lineId]: count };
    });
  }
  return record;
}

/** Every vector of `m` whole numbers with sum ≤ `total`, each within its cap. */
export function boundedCompositions(m: number, total: number, caps: readonly number[]): number[][] {
  const out: number[][] = [];
  const current = new Array<number>(m).fill(0);
  const walk = (index: number, left: number) => {
    if (index === m) {
      out.push(current.slice());
      return;
    }
    for (let count = 0; count <= Math.min(left, caps[index]); count++) {
      current[index] = count;
      walk(index + 1, left - count);
    }
    current[index] = 0;
  };
  walk(0, total);
  return out;
}

function exactPlacement(
  costs: Map<string, LineCosts>,
  lines: string[],
  settings: ReturnType<typeof normalise>,
  greedyCost: number,
): ExactPlacement | ExactSkipped {
  const { extraTeams, siteLimits, exactSolveBudget } = settings;
  const options = new Map<string, number[][]>();
  let solvesNeeded = 0;
  for (const lineId of lines) {
    const line = costs.get(lineId)!;
    const caps = line.sites.map((siteId) => Math.min(extraTeams, siteLimits[siteId] ?? extraTeams));
    const vectors = boundedCompositions(line.sites.length, extraTeams, caps);
    options.set(lineId, vectors);
    solvesNeeded += vectors.length;
  }
  if (solvesNeeded > exactSolveBudget) {
    return {
      status: "skipped",
      reason: `the exact check needs ${solvesNeeded} line solves, more than the budget of ${exactSolveBudget}; the greedy placement stands unconfirmed`,
      solvesNeeded,
    };
  }

  // Costs enter the program relative to each line's cheapest placement: the simplex then works
  // with numbers of the size of the differences it has to tell apart.
  const model: Model = { optimize: "cost", opType: "min", constraints: { teams: { equal: extraTeams } }, variables: {}, binaries: {} };
  const chosen = new Map<string, { lineId: string; vector: number[]; cost: number }>();
  lines.forEach((lineId, lineIndex) => {
    const line = costs.get(lineId)!;
    const vectors = options.get(lineId)!;
    const lineCosts = vectors.map((vector) => line.outcome(vector).totalCost);
    const floor = Math.min(...lineCosts);
    model.constraints[`line${lineIndex}`] = { equal: 1 };
    vectors.forEach((vector, k) => {
      const name = `y_${lineIndex}_${k}`;
      const coefficients: Record<string, number> = { cost: lineCosts[k] - floor, [`line${lineIndex}`]: 1, teams: vector.reduce((a, b) => a + b, 0) };
      vector.forEach((count, j) => {
        const siteId = line.sites[j];
        if (count > 0 && siteLimits[siteId] !== undefined) coefficients[`site_${siteId}`] = count;
      });
      model.variables[name] = coefficients;
      model.binaries![name] = 1;
      chosen.set(name, { lineId, vector, cost: lineCosts[k] });
    });
  });
  for (const [siteId, limit] of Object.entries(siteLimits)) model.constraints[`site_${siteId}`] = { max: limit };

  const solution = solver.Solve(model) as Solution;
  if (!solution.feasible) {
    return { status: "skipped", reason: "the integer program found no placement within the site limits", solvesNeeded };
  }
  const placement: Record<string, Record<string, number>> = {};
  let totalCost = 0;
  for (const [name, option] of chosen) {
    const value = solution[name];
    if (typeof value !== "number" || value < 0.5) continue;
    totalCost += option.cost;
    const line = costs.get(option.lineId)!;
    option.vector.forEach((count, j) => {
      if (count > 0) placement[line.sites[j]] = { ...(placement[line.sites[j]] ?? {}), [option.lineId]: count };
    });
  }
  return {
    status: "solved",
    totalCost,
    placement,
    agreesWithGreedy: Math.abs(greedyCost - totalCost) <= 1e-9 * Math.max(1, Math.abs(totalCost)),
    placementsCompared: solvesNeeded,
  };
}
