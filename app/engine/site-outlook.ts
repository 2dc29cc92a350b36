/**
 * The site inflow outlook: for each site, service line, period of the year and rule, the
 * referrals a site should expect by priority class, how busy it is, how long patients wait, the
 * share seen within the waiting standard — and how many teams it would need for a chosen share.
 *
 * Everything but the teams needed is read from a solved result (`solveScenario`), whose periods
 * are each solved as a stationary problem (SIPP; Green, Kolesar & Soares 2001, "Improving the
 * SIPP approach for staffing service systems that have cyclic demands", Operations Research
 * 49(4):549–564), so the outlook shows exactly the figures of the run it comes from.
 *
 * Teams needed: the smallest number of teams, each at the site's rate per team μ, with which the
 * share of routine patients waiting at most the standard reaches the target at that period's
 * inflow (urgent patients still seen first) — `serversNeeded` for a single queue. It is a count
 * of teams on duty, compared with the teams available that period (teams × the period's teams
 * factor). It holds the inflow fixed: under patient choice a site with more teams draws more
 * patients, which the capacity advisor re-solves. For a pathway the teams are added one at a time
 * to the stage that raises the share most, starting from the fewest teams that keep every stage
 * stable — a greedy count that may exceed the least possible by a team or two.
 */
import { periodFactors, siteQueueSpec } from "./build-problem";
import type { RuleKey } from "./problem";
import type { ProviderReport } from "./rule-report";
import type { Scenario, ScenarioSiteLine } from "./scenario";
import type { ScenarioResult } from "./solve-scenario";
import { visitRatios } from "./pathway";
import { siteMetrics, type SiteQueueSpec } from "./site-wait";
import { serversNeeded } from "./time-varying";

/** A common target: 92% of patients within the standard (the English 18-week referral-to-treatment operational standard). */
export const DEFAULT_TARGET_SHARE = 0.92;

export interface SiteOutlookOptions {
  /** Share of routine patients to be seen within the standard, in (0, 1). Default 0.92. */
  targetShareWithin?: number;
  /** Standard (weeks) for the teams-needed figure. Default: each line's own standard. */
  standardWeeks?: number;
  /** Only these sites (a provider manager's own). Default every site. */
  siteIds?: readonly string[];
  /** Only these lines. Default every line. */
  lines?: readonly string[];
}

export interface SiteOutlookRow {
  siteId: string;
  siteName: string | null;
  lineId: string;
  lineName: string;
  /** "year" when the scenario has no periods (one stationary solve for the whole year). */
  periodId: string;
  periodLabel: string;
  weeks: number | null;
  rule: RuleKey;
  urgentInflow: number | null;
  routineInflow: number | null;
  inflow: number | null;
  utilisation: number | null;
  meanWaitWeeks: number | null;
  routineWaitWeeks: number | null;
  urgentWaitWeeks: number | null;
  /** Share of routine patients within the line's standard, as the run reported it. */
  shareWithinStandard: number | null;
  /** Teams on duty that period: the scenario's teams × the period's teams factor (all stages, for a pathway). */
  teamsAvailable: number;
  /** Teams needed for the target at this inflow; null when it cannot be computed (see `note`). */
  teamsNeeded: number | null;
  /** For a pathway, teams needed per stage. */
  teamsNeededByStage: Record<string, number> | null;
  /** Why a figure is missing or what it rests on. */
  note: string | null;
}

export interface SiteOutlook {
  targetShareWithin: number;
  /** The standard used for teams needed, per line (weeks). */
  standardWeeks: Record<string, number>;
  periods: { id: string; label: string; weeks: number | null }[];
  rows: SiteOutlookRow[];
}

interface PeriodView {
  id: string;
  label: string;
  weeks: number | null;
  period: NonNullable<Scenario["periods"]>[number] | undefined;
  lines: ScenarioResult["lines"];
}

/** The outlook of a solved scenario (`result` must come from `solveScenario(scenario)`). */
export function siteOutlook(scenario: Scenario, result: ScenarioResult, options: SiteOutlookOptions = {}): SiteOutlook {
  const targetShareWithin = options.targetShareWithin ?? DEFAULT_TARGET_SHARE;
  if (!(targetShareWithin > 0 && targetShareWithin < 1)) {
    throw new RangeError(`targetShareWithin must be a share in (0, 1), got ${String(targetShareWithin)}`);
  }
  if (options.standardWeeks !== undefined && !(Number.isFinite(options.standardWeeks) && options.standardWeeks >= 0)) {
    throw new RangeError(`standardWeeks must be a number of weeks ≥ 0, got ${String(options.standardWeeks)}`);
  }
  const siteFilter = options.siteIds ? new Set(options.siteIds) : null;
  const lineFilter = options.lines ? new Set(options.lines) : null;

  const views: PeriodView[] = result.periods
    ? result.periods.map((report) => ({
        id: report.id,
        label: report.label,
        weeks: report.weeks,
        period: scenario.periods?.find((period) => period.id === report.id),
        lines: report.lines,
      }))
    : [{ id: "year", label: "Whole year (one stationary solve)", weeks: null, period: undefined, lines: result.lines }];

  const standardWeeks: Record<string, number> = {};
  const rows: SiteOutlookRow[] = [];
  for (const line of scenario.serviceLines) {
    if (lineFilter && !lineFilter.has(line.id)) continue;
    const standard = options.standardWeeks ?? line.standardWeeks;
    standardWeeks[line.id] = standard;
    for (const provider of scenario.providers) {
      const siteLine = provider.lines[line.id];
      if (!siteLine || (siteFilter && !siteFilter.has(provider.id))) continue;
      for (const view of views) {
        const lineReport = view.lines[line.id];
        const teamsFactor = periodFactors(view.period, line.id).teams;
        const teamsAvailable = totalTeams(siteLine) * teamsFactor;
        const base = {
          siteId: provider.id,
          siteName: provider.name ?? null,
          lineId: line.id,
          lineName: line.name ?? line.id,
          periodId: view.id,
          periodLabel: view.label,
          weeks: view.weeks,
          teamsAvailable,
        };
        if (!lineReport || lineReport.noSteadyState) {
          rows.push({ ...base, ...emptyFigures(), rule: "choice", note: "No steady state on this line in this period: demand with no outside option exceeds capacity." });
          continue;
        }
        for (const [rule, report] of Object.entries(lineReport.rules) as [RuleKey, NonNullable<(typeof lineReport.rules)[RuleKey]>][]) {
          const providerReport = report.providers.find((candidate) => candidate.id === provider.id);
          if (!providerReport) {
            rows.push({ ...base, ...emptyFigures(), rule, note: report.status === "infeasible" ? "The plan is infeasible in this period." : "Not reported for this rule." });
            continue;
          }
          rows.push({ ...base, rule, ...figures(providerReport), ...teamsNeededFor(siteLine, providerReport, standard, targetShareWithin) });
        }
      }
    }
  }
  return { targetShareWithin, standardWeeks, periods: views.map(({ id, label, weeks }) => ({ id, label, weeks })), rows };
}

function totalTeams(siteLine: ScenarioSiteLine): number {
  return siteLine.stages ? siteLine.stages.reduce((total, stage) => total + stage.teams, 0) : (siteLine.teams as number);
}

function emptyFigures() {
  return {
    urgentInflow: null,
    routineInflow: null,
    inflow: null,
    utilisation: null,
    meanWaitWeeks: null,
    routineWaitWeeks: null,
    urgentWaitWeeks: null,
    shareWithinStandard: null,
    teamsNeeded: null,
    teamsNeededByStage: null,
  };
}

function figures(report: ProviderReport) {
  return {
    urgentInflow: report.urgentInflow,
    routineInflow: report.routineInflow,
    inflow: report.inflow,
    utilisation: report.utilisation,
    meanWaitWeeks: report.meanWaitWeeks,
    routineWaitWeeks: report.routineWaitWeeks,
    urgentWaitWeeks: report.urgentWaitWeeks,
    shareWithinStandard: report.shareWithinStandard,
  };
}

function teamsNeededFor(
  siteLine: ScenarioSiteLine,
  report: ProviderReport,
  standardWeeks: number,
  target: number,
): Pick<SiteOutlookRow, "teamsNeeded" | "teamsNeededByStage" | "note"> {
  if (!siteLine.stages) {
    const teamsNeeded = serversNeeded({
      arrivalRate: report.routineInflow,
      urgentArrivalRate: report.urgentInflow,
      ratePerServer: siteLine.ratePerTeam as number,
      serviceCv: siteLine.serviceCv,
      standardWeeks,
      targetShareWithin: target,
    });
    return { teamsNeeded, teamsNeededByStage: null, note: null };
  }
  const byStage = pathwayTeamsNeeded(siteLine, report.urgentInflow, report.routineInflow, standardWeeks, target);
  return {
    teamsNeeded: Object.values(byStage).reduce((total, teams) => total + teams, 0),
    teamsNeededByStage: byStage,
    note: "Pathway: teams added one at a time where they raise the share most (may exceed the least possible by a team or two).",
  };
}

/** Greedy per-stage count for a pathway site (see the file comment). */
function pathwayTeamsNeeded(siteLine: ScenarioSiteLine, urgent: number, routine: number, standardWeeks: number, target: number): Record<string, number> {
  const stages = (siteLine.stages as NonNullable<ScenarioSiteLine["stages"]>).map((stage) => ({ ...stage }));
  if (urgent + routine === 0) return Object.fromEntries(stages.map((stage) => [stage.id, 0]));
  const specOf = (): SiteQueueSpec => siteQueueSpec({ ...siteLine, stages });
  // The fewest teams that keep each stage stable: c_s > (u + x)·v_s/μ_s.
  const visits = visitRatios(
    stages.map((stage) => stage.id),
    siteLine.routing ?? [[0]],
    siteLine.entry ?? stages[0].id,
  );
  stages.forEach((stage, index) => {
    stage.teams = Math.floor(((urgent + routine) * visits[index]) / stage.ratePerTeam) + 1;
  });
  let share = siteMetrics(specOf(), urgent, routine, standardWeeks).shareWithinStandard;
  for (let guard = 0; share < target && guard < 100_000; guard++) {
    let bestIndex = 0;
    let bestShare = -Infinity;
    stages.forEach((stage, index) => {
      stage.teams += 1;
      const trial = siteMetrics(specOf(), urgent, routine, standardWeeks).shareWithinStandard;
      stage.teams -= 1;
      if (trial > bestShare + 1e-15) {
        bestShare = trial;
        bestIndex = index;
      }
    });
    stages[bestIndex].teams += 1;
    share = bestShare;
  }
  return Object.fromEntries(stages.map((stage) => [stage.id, stage.teams]));
}

export interface SiteLineSummary {
  siteId: string;
  siteName: string | null;
  lineId: string;
  lineName: string;
  rule: RuleKey;
  /** Inflow averaged over the year, each period weighted by its weeks (referrals/week). */
  meanInflow: number | null;
  peakInflow: number | null;
  peakPeriod: string | null;
  peakUtilisation: number | null;
  lowestShareWithinStandard: number | null;
  fewestTeamsAvailable: number;
  mostTeamsNeeded: number | null;
  /** Periods in which the teams needed exceed the teams on duty (or that have no steady state). */
  shortPeriods: string[];
}

/** One line per site, service line and rule: the year at a glance. */
export function summariseSiteOutlook(rows: readonly SiteOutlookRow[]): SiteLineSummary[] {
  const groups = new Map<string, SiteOutlookRow[]>();
  for (const row of rows) {
    const key = `${row.siteId}\u0000${row.lineId}\u0000${row.rule}`;
    const group = groups.get(key);
    if (group) group.push(row);
    else groups.set(key, [row]);
  }
  return [...groups.values()].map((group) => {
    const [first] = group;
    let weighted = 0;
    let weeks = 0;
    let peak: SiteOutlookRow | null = null;
    let peakUtilisation: number | null = null;
    let lowestShare: number | null = null;
    let mostNeeded: number | null = null;
    const shortPeriods: string[] = [];
    for (const row of group) {
      if (row.inflow === null) {
        shortPeriods.push(row.periodId);
        continue;
      }
      const weight = row.weeks ?? 1;
      weighted += row.inflow * weight;
      weeks += weight;
      if (!peak || row.inflow > (peak.inflow as number)) peak = row;
      if (row.utilisation !== null) peakUtilisation = Math.max(peakUtilisation ?? 0, row.utilisation);
      if (row.shareWithinStandard !== null) lowestShare = Math.min(lowestShare ?? 1, row.shareWithinStandard);
      if (row.teamsNeeded !== null) {
        mostNeeded = Math.max(mostNeeded ?? 0, row.teamsNeeded);
        if (row.teamsNeeded > row.teamsAvailable + 1e-9) shortPeriods.push(row.periodId);
      }
    }
    return {
      siteId: first.siteId,
      siteName: first.siteName,
      lineId: first.lineId,
      lineName: first.lineName,
      rule: first.rule,
      meanInflow: weeks > 0 ? weighted / weeks : null,
      peakInflow: peak?.inflow ?? null,
      peakPeriod: peak?.periodLabel ?? null,
      peakUtilisation,
      lowestShareWithinStandard: lowestShare,
      fewestTeamsAvailable: Math.min(...group.map((row) => row.teamsAvailable)),
      mostTeamsNeeded: mostNeeded,
      shortPeriods,
    };
  });
}
