/**
 * Solves a whole scenario: every rule on every service line, the price of anarchy per line and
 * overall, and — when the scenario has periods — the same per period (SIPP: each period a
 * stationary problem), warm-started from the period before. Produces the result format
 * `equilibra/result@1` of PRODUCT.md; every field there keeps its name, the rest are additions.
 *
 * Failure policy:
 *  - the scenario as given (no period factors) has no steady state on some line → throws
 *    `NoSteadyStateError` naming each line, its sites and the shortfall (nothing is returned);
 *  - a period without a steady state is reported in that period's result (`noSteadyState` on
 *    the lines concerned) and in the top-level warnings — not hidden, and not fatal for the
 *    periods that do have one;
 *  - a fixed rule that overloads a site (a captive patient stream it cannot absorb) reports
 *    `converged: false` with its `overloads`; patient choice may be fine on the same line.
 */
import { PLANNING_CAUTIONS } from "./cautions";
import { buildLineProblems, type LineBuild, type LineDistances, type Shortfall } from "./build-problem";
import { solveChoice } from "./equilibrium";
import { solveCapacityShare, solveNearest } from "./fixed-rules";
import { solveLogit } from "./logit";
import { solveOptimum } from "./optimum";
import { solvePlan } from "./plan";
import { NoSteadyStateError, type RuleKey } from "./problem";
import { RULE_ORDER, rulesToRun } from "./rule-order";
import { finite, reportRule, UTILISATION_WARNING, type RuleReport, type RuleSolution } from "./rule-report";
import type { Scenario, ScenarioPeriod } from "./scenario";

export const RESULT_SCHEMA = "equilibra/result@1";

/** The cautions carried by every result (PRODUCT.md, "Cautions to show"). */
export const RESULT_CAUTIONS = PLANNING_CAUTIONS;

export { RULE_ORDER, rulesToRun } from "./rule-order";

export interface SolveScenarioOptions {
  /** Only these rules (default: all that apply — choiceLogit with a logit choice model, plan when `plan` is set). */
  rules?: readonly RuleKey[];
  /** Solve the periods too when the scenario has them. Default true. */
  periods?: boolean;
  /** Road km per line already computed (`lineDistances`); filled here when missing, and shared by the periods. */
  distances?: LineDistances;
  /**
   * Problems already built for this scenario, by period id ("" for the scenario as given); filled
   * here when missing. Solving the rules one call at a time (the command line's threads) then
   * builds each problem once, as a single call for all rules does.
   */
  builds?: Map<string, LineBuild[]>;
}

/** The cached problems of a period (or of the scenario as given), built when missing. */
function cachedBuilds(scenario: Scenario, period: ScenarioPeriod | undefined, options: SolveScenarioOptions, distances: LineDistances): LineBuild[] {
  const key = period ? `period:${period.id}` : "";
  let builds = options.builds?.get(key);
  if (!builds) {
    builds = buildLineProblems(scenario, period, distances);
    options.builds?.set(key, builds);
  }
  return builds;
}

/** What merging results reads from a rule's report (`mergeScenarioResults`): its total cost and warnings. */
export type RuleSummary = Pick<RuleReport, "totalCost" | "warnings">;

/**
 * The result types take the type of a rule's report as a parameter: `RuleReport` everywhere but
 * in the command line, which carries reports already written as JSON text (`result-json.ts`).
 */
export interface LineReport<R extends RuleSummary = RuleReport> {
  name: string;
  standardWeeks: number;
  /** totalCost(choice) / totalCost(optimum); null when either is missing, infinite or the optimum costs 0. */
  priceOfAnarchy: number | null;
  demandPerWeek: number;
  urgentPerWeek: number;
  /** Σ sites' capacity (referrals/week). */
  capacityPerWeek: number;
  rules: Partial<Record<RuleKey, R>>;
  warnings: string[];
  /** Present when this line has no steady state in this period. */
  noSteadyState?: Shortfall[];
}

export interface PeriodReport<R extends RuleSummary = RuleReport> {
  id: string;
  label: string;
  weeks: number;
  demandFactor: number | Record<string, number>;
  teamsFactor: number | Record<string, number>;
  priceOfAnarchy: number | null;
  lines: Record<string, LineReport<R>>;
  warnings: string[];
}

export interface ScenarioResult<R extends RuleSummary = RuleReport> {
  schema: typeof RESULT_SCHEMA;
  name: string | null;
  priceOfAnarchy: number | null;
  lines: Record<string, LineReport<R>>;
  periods?: PeriodReport<R>[];
  assumptions: {
    kmPerWeek: number;
    kmPerWeekNote: string;
    circuity: number;
    travel: string;
    choiceModel: Scenario["choiceModel"];
    utilisationWarning: number;
    urgentReferrals: string;
    periodTeams: string;
    plan: Scenario["plan"] | null;
    standardWeeks: Record<string, number>;
  };
  cautions: string[];
  warnings: string[];
}

/** Previous solutions per line and rule, to warm-start the next period. */
type WarmStarts = Map<string, Partial<Record<RuleKey, RuleSolution>>>;

/**
 * Makes one rule's report from its solution. `depth` is where the report sits in the result
 * JSON (`RULE_REPORT_DEPTH`), for reports written straight as text (the command line).
 */
export type RuleReporter<R extends RuleSummary> = (scenario: Scenario, build: LineBuild, solution: RuleSolution, depth: number) => R;

/** Depth of a rule's report in the result JSON: result.lines[id].rules[rule], result.periods[k].lines[id].rules[rule]. */
export const RULE_REPORT_DEPTH = { line: 4, period: 6 } as const;

/**
 * Solves the scenario (already checked by `parseScenario`). Throws `NoSteadyStateError` when the
 * scenario as given has none on some line.
 */
export function solveScenario(scenario: Scenario, options: SolveScenarioOptions = {}): ScenarioResult {
  return solveScenarioWith(scenario, options, (solved, build, solution) => reportRule(solved, build, solution));
}

/** `solveScenario` with each rule's report made by `reporter` (e.g. written as JSON text). */
export function solveScenarioWith<R extends RuleSummary>(scenario: Scenario, options: SolveScenarioOptions, reporter: RuleReporter<R>): ScenarioResult<R> {
  const rules = rulesToRun(scenario, options.rules);
  const distances = options.distances ?? new Map();
  const builds = cachedBuilds(scenario, undefined, options, distances);
  const shortfalls = builds.flatMap((build) => build.shortfalls);
  if (shortfalls.length > 0) throw new NoSteadyStateError(shortfalls);

  const warm: WarmStarts = new Map();
  const lines = solveLines(scenario, builds, rules, warm, (build, solution) => reporter(scenario, build, solution, RULE_REPORT_DEPTH.line));
  const warnings = collectWarnings(lines, "");

  let periods: PeriodReport<R>[] | undefined;
  if (scenario.periods && options.periods !== false) {
    periods = [];
    // Each period starts from the previous one's solution (the first from the stationary solve):
    // consecutive periods differ by a few percent, so the solvers start close to the answer.
    for (const period of scenario.periods) {
      const report = solvePeriod(scenario, period, rules, warm, cachedBuilds(scenario, period, options, distances), (build, solution) =>
        reporter(scenario, build, solution, RULE_REPORT_DEPTH.period),
      );
      periods.push(report);
      warnings.push(...report.warnings.map((warning) => `Period ${period.id}: ${warning}`));
    }
  }

  return {
    schema: RESULT_SCHEMA,
    name: scenario.name ?? null,
    priceOfAnarchy: overallPriceOfAnarchy(lines),
    lines,
    ...(periods ? { periods } : {}),
    assumptions: assumptionsOf(scenario),
    cautions: [...RESULT_CAUTIONS],
    warnings,
  };
}


function solvePeriod<R extends RuleSummary>(
  scenario: Scenario,
  period: ScenarioPeriod,
  rules: RuleKey[],
  warm: WarmStarts,
  builds: LineBuild[],
  report: (build: LineBuild, solution: RuleSolution) => R,
): PeriodReport<R> {
  const solvable = builds.filter((build) => build.shortfalls.length === 0);
  const lines = solveLines(scenario, solvable, rules, warm, report);
  const ordered: Record<string, LineReport<R>> = {};
  for (const build of builds) {
    if (build.shortfalls.length === 0) {
      ordered[build.lineId] = lines[build.lineId];
      continue;
    }
    const message = new NoSteadyStateError(build.shortfalls).message;
    ordered[build.lineId] = { ...lineHeader(build), priceOfAnarchy: null, rules: {}, warnings: [message], noSteadyState: build.shortfalls };
  }
  return {
    id: period.id,
    label: period.label ?? period.id,
    weeks: period.weeks,
    demandFactor: period.demandFactor,
    teamsFactor: period.teamsFactor,
    priceOfAnarchy: overallPriceOfAnarchy(ordered),
    lines: ordered,
    warnings: collectWarnings(ordered, ""),
  };
}

function lineHeader(build: LineBuild): Pick<LineReport, "name" | "standardWeeks" | "demandPerWeek" | "urgentPerWeek" | "capacityPerWeek"> {
  const sum = (values: Float64Array) => values.reduce((total, value) => total + value, 0);
  return {
    name: build.lineName,
    standardWeeks: build.standardWeeks,
    demandPerWeek: sum(build.problem.demand) + sum(build.urgentDemand),
    urgentPerWeek: sum(build.urgentDemand),
    capacityPerWeek: sum(build.fullCapacity),
  };
}

function solveLines<R extends RuleSummary>(
  scenario: Scenario,
  builds: LineBuild[],
  rules: RuleKey[],
  warm: WarmStarts,
  report: (build: LineBuild, solution: RuleSolution) => R,
): Record<string, LineReport<R>> {
  const lines: Record<string, LineReport<R>> = {};
  for (const build of builds) {
    const previous = warm.get(build.lineId) ?? {};
    const solutions: Partial<Record<RuleKey, RuleSolution>> = {};
    const reports: Partial<Record<RuleKey, R>> = {};
    for (const rule of rules) {
      const solution = runRule(scenario, build, rule, previous[rule]);
      solutions[rule] = solution;
      reports[rule] = report(build, solution);
    }
    warm.set(build.lineId, solutions);
    const choice = reports.choice?.totalCost ?? null;
    const optimum = reports.optimum?.totalCost ?? null;
    const warnings: string[] = [];
    for (const rule of rules) for (const warning of reports[rule]?.warnings ?? []) warnings.push(`${rule}: ${warning}`);
    lines[build.lineId] = {
      ...lineHeader(build),
      priceOfAnarchy: choice !== null && optimum !== null && optimum > 0 ? choice / optimum : null,
      rules: reports,
      warnings,
    };
  }
  return lines;
}

/** Runs one rule; a line with no routine demand needs no solver (every rule sends nobody). */
function runRule(scenario: Scenario, build: LineBuild, rule: RuleKey, previous: RuleSolution | undefined): RuleSolution {
  const { problem } = build;
  const routine = problem.demand.reduce((total, value) => total + value, 0);
  if (problem.n === 0 || problem.m === 0 || routine === 0) return emptySolution(build);
  // Site waits of the previous period's solution are where this period's Newton iterations start.
  const warmStartWaits = previous && previous.siteWait.every(Number.isFinite) ? previous.siteWait : undefined;
  switch (rule) {
    case "choice":
      return solveChoice(problem, { warmStartWaits });
    case "choiceLogit":
      return solveLogit(problem, scenario.choiceModel.kind === "logit" ? scenario.choiceModel.scale : 1, { warmStartWaits });
    case "optimum":
      return solveOptimum(problem, { warmStartWaits });
    case "nearest":
      return solveNearest(problem);
    case "capacityShare":
      return solveCapacityShare(problem);
    case "plan":
      return solvePlan(problem, {
        maxUtilisation: scenario.plan?.maxUtilisation,
        maxKm: scenario.plan?.maxKm,
        urgentInflow: build.urgentInflow,
        fullCapacity: build.fullCapacity,
        // The dual method at every size: exact, and far faster than the LP on a region
        // (app/engine/README.md, "The plan rule"); the tests keep the LP as its cross-check.
        method: "dual",
        // The previous period's multipliers, for the toll iteration should the direct solve not settle.
        warmStartTolls: previous && "siteToll" in previous && previous.siteToll instanceof Float64Array ? previous.siteToll : undefined,
      });
  }
}

function emptySolution(build: LineBuild): RuleSolution {
  const { n, m, sites } = build.problem;
  return {
    allocation: { flow: new Float64Array(n * m), balked: new Float64Array(n) },
    siteWait: Float64Array.from(sites, (site) => site.wait(0)),
    diagnostics: { converged: true, iterations: 0, relativeGap: 0, warnings: [] },
  };
}

/**
 * One result from results of the same scenario solved for disjoint sets of rules (e.g. on two
 * threads): each line's rules in RULE_ORDER, and the prices of anarchy and warnings recomputed as
 * `solveScenario` would have made them with every rule at once.
 */
export function mergeScenarioResults<R extends RuleSummary>(parts: readonly ScenarioResult<R>[]): ScenarioResult<R> {
  const [first] = parts;
  if (!first) throw new Error("mergeScenarioResults needs at least one result.");
  const mergeLines = (each: Record<string, LineReport<R>>[]): Record<string, LineReport<R>> => {
    const merged: Record<string, LineReport<R>> = {};
    for (const lineId of Object.keys(each[0])) {
      const versions = each.map((lines) => lines[lineId]);
      const rules: LineReport<R>["rules"] = {};
      // Warnings not about a rule (no steady state) are the same in every part; a rule's are
      // prefixed with its name and come from the part that solved it.
      const warnings = versions[0].warnings.filter((warning) => !RULE_ORDER.some((rule) => warning.startsWith(`${rule}: `)));
      for (const rule of RULE_ORDER) {
        const solvedBy = versions.find((line) => line.rules[rule]);
        if (!solvedBy) continue;
        rules[rule] = solvedBy.rules[rule];
        warnings.push(...solvedBy.warnings.filter((warning) => warning.startsWith(`${rule}: `)));
      }
      const choice = rules.choice?.totalCost ?? null;
      const optimum = rules.optimum?.totalCost ?? null;
      const priceOfAnarchy = choice !== null && optimum !== null && optimum > 0 ? choice / optimum : null;
      merged[lineId] = { ...versions[0], priceOfAnarchy: versions[0].noSteadyState ? null : priceOfAnarchy, rules, warnings };
    }
    return merged;
  };
  const lines = mergeLines(parts.map((part) => part.lines));
  const warnings = collectWarnings(lines, "");
  const periods = first.periods?.map((period, index): PeriodReport<R> => {
    const periodLines = mergeLines(parts.map((part) => (part.periods as PeriodReport<R>[])[index].lines));
    const report = { ...period, priceOfAnarchy: overallPriceOfAnarchy(periodLines), lines: periodLines, warnings: collectWarnings(periodLines, "") };
    warnings.push(...report.warnings.map((warning) => `Period ${period.id}: ${warning}`));
    return report;
  });
  return { ...first, priceOfAnarchy: overallPriceOfAnarchy(lines), lines, ...(periods ? { periods } : {}), warnings };
}

/** Σ_lines totalCost(choice) / Σ_lines totalCost(optimum), over lines where both are finite. */
function overallPriceOfAnarchy(lines: Record<string, LineReport<RuleSummary>>): number | null {
  let choice = 0;
  let optimum = 0;
  for (const line of Object.values(lines)) {
    const c = line.rules.choice?.totalCost;
    const o = line.rules.optimum?.totalCost;
    if (typeof c === "number" && typeof o === "number") {
      choice += c;
      optimum += o;
    }
  }
  return optimum > 0 ? finite(choice / optimum) : null;
}

function collectWarnings(lines: Record<string, LineReport<RuleSummary>>, prefix: string): string[] {
  return Object.entries(lines).flatMap(([lineId, line]) => line.warnings.map((warning) => `${prefix}Line ${lineId}: ${warning}`));
}

function assumptionsOf(scenario: Scenario): ScenarioResult["assumptions"] {
  const uploaded = scenario.travelKm ? Object.values(scenario.travelKm).reduce((total, row) => total + Object.keys(row).length, 0) : 0;
  return {
    kmPerWeek: scenario.kmPerWeek,
    kmPerWeekNote:
      "κ (km a patient would travel to wait one week less) has no settled published value: calibrate it so that the baseline " +
      "reproduces the observed share of patients who bypass their nearest provider, and read results at 5 and 50 km/week too.",
    circuity: scenario.circuity,
    travel:
      uploaded > 0
        ? `road km from the uploaded matrix for ${uploaded} practice–site pairs; great-circle km × ${scenario.circuity} for the rest`
        : `great-circle km × ${scenario.circuity} for every practice–site pair`,
    choiceModel: scenario.choiceModel,
    utilisationWarning: UTILISATION_WARNING,
    urgentReferrals: "urgent referrals go to the nearest site offering the line and are seen ahead of routine referrals (non-preemptive priority)",
    periodTeams: "a period's teams factor scales each site's capacity exactly: teams rounded to a whole number ≥ 1, rate per team adjusted",
    plan: scenario.plan ?? null,
    standardWeeks: Object.fromEntries(scenario.serviceLines.map((line) => [line.id, line.standardWeeks])),
  };
}
