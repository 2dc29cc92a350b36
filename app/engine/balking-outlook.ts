/**
 * The balking outlook: referrals per week expected to leave for private care (or go without),
 * by practice, service line and deprivation decile, with the travel each practice's patients
 * face — read from a solved result, so the figures are the run's own.
 *
 * "Furthest" ranks practices by the mean km their served patients travel; "most balking" by the
 * share of their referrals that balk (a share, so that large practices do not crowd out small
 * ones whose patients are pushed out more often); both over the chosen lines together.
 */
import type { RuleKey } from "./problem";
import type { Scenario } from "./scenario";
import type { LineReport, ScenarioResult } from "./solve-scenario";

export interface BalkingOutlookOptions {
  rule?: RuleKey;
  /** Only these lines. Default every line. */
  lines?: readonly string[];
  /** A period of the year instead of the stationary solve. */
  periodId?: string;
  /** How many practices in each ranking. Default 5. */
  top?: number;
}

export interface PracticeLineBalking {
  sourceId: string;
  lineId: string;
  demandPerWeek: number;
  balkedPerWeek: number;
  balkedShare: number;
  meanKm: number | null;
  meanWaitWeeks: number | null;
}

export interface PracticeBalking {
  sourceId: string;
  name: string | null;
  lat: number;
  lon: number;
  deprivationDecile: number | null;
  demandPerWeek: number;
  balkedPerWeek: number;
  balkedShare: number;
  /** Mean km travelled by the practice's served patients over the chosen lines. */
  meanKm: number | null;
  meanWaitWeeks: number | null;
}

export interface DecileBalking {
  decile: number;
  practices: number;
  demandPerWeek: number;
  balkedPerWeek: number;
  balkedShare: number;
  meanKm: number | null;
}

export interface BalkingOutlook {
  rule: RuleKey;
  periodId: string | null;
  lines: string[];
  totalBalkedPerWeek: number;
  totalDemandPerWeek: number;
  practices: PracticeBalking[];
  byPracticeAndLine: PracticeLineBalking[];
  byDecile: DecileBalking[];
  furthest: PracticeBalking[];
  mostBalking: PracticeBalking[];
}

function linesOf(result: ScenarioResult, periodId: string | undefined): Record<string, LineReport> {
  if (periodId === undefined) return result.lines;
  const period = result.periods?.find((candidate) => candidate.id === periodId);
  if (!period) throw new RangeError(`periodId: no period "${periodId}" in this result`);
  return period.lines;
}

export function balkingOutlook(scenario: Scenario, result: ScenarioResult, options: BalkingOutlookOptions = {}): BalkingOutlook {
  const rule = options.rule ?? "choice";
  const top = options.top ?? 5;
  const reports = linesOf(result, options.periodId);
  const lines = (options.lines ? [...options.lines] : scenario.serviceLines.map((line) => line.id)).filter((lineId) => reports[lineId]);

  const byPracticeAndLine: PracticeLineBalking[] = [];
  const totals = new Map<string, { demand: number; balked: number; km: number; wait: number; served: number }>();
  for (const lineId of lines) {
    const ruleReport = reports[lineId].rules[rule];
    if (!ruleReport) continue;
    for (const source of ruleReport.sources) {
      const served = Object.values(source.flows).reduce((total, flow) => total + flow, 0);
      byPracticeAndLine.push({
        sourceId: source.id,
        lineId,
        demandPerWeek: source.demand,
        balkedPerWeek: source.balked,
        balkedShare: source.demand > 0 ? source.balked / source.demand : 0,
        meanKm: source.meanKm,
        meanWaitWeeks: source.meanWaitWeeks,
      });
      const entry = totals.get(source.id) ?? { demand: 0, balked: 0, km: 0, wait: 0, served: 0 };
      entry.demand += source.demand;
      entry.balked += source.balked;
      if (served > 0 && source.meanKm !== null) entry.km += served * source.meanKm;
      if (served > 0 && source.meanWaitWeeks !== null) entry.wait += served * source.meanWaitWeeks;
      entry.served += served;
      totals.set(source.id, entry);
    }
  }

  const practices: PracticeBalking[] = scenario.sources
    .filter((source) => totals.has(source.id))
    .map((source) => {
      const entry = totals.get(source.id)!;
      return {
        sourceId: source.id,
        name: source.name ?? null,
        lat: source.lat,
        lon: source.lon,
        deprivationDecile: source.deprivationDecile ?? null,
        demandPerWeek: entry.demand,
        balkedPerWeek: entry.balked,
        balkedShare: entry.demand > 0 ? entry.balked / entry.demand : 0,
        meanKm: entry.served > 0 ? entry.km / entry.served : null,
        meanWaitWeeks: entry.served > 0 ? entry.wait / entry.served : null,
      };
    });

  const deciles = new Map<number, { practices: number; demand: number; balked: number; km: number; served: number }>();
  for (const practice of practices) {
    if (practice.deprivationDecile === null) continue;
    const entry = deciles.get(practice.deprivationDecile) ?? { practices: 0, demand: 0, balked: 0, km: 0, served: 0 };
    const served = totals.get(practice.sourceId)!.served;
    entry.practices += 1;
    entry.demand += practice.demandPerWeek;
    entry.balked += practice.balkedPerWeek;
    entry.km += totals.get(practice.sourceId)!.km;
    entry.served += served;
    deciles.set(practice.deprivationDecile, entry);
  }
  const byDecile = [...deciles.entries()]
    .sort(([a], [b]) => a - b)
    .map(([decile, entry]) => ({
      decile,
      practices: entry.practices,
      demandPerWeek: entry.demand,
      balkedPerWeek: entry.balked,
      balkedShare: entry.demand > 0 ? entry.balked / entry.demand : 0,
      meanKm: entry.served > 0 ? entry.km / entry.served : null,
    }));

  const ranked = (key: (practice: PracticeBalking) => number) =>
    practices
      .filter((practice) => Number.isFinite(key(practice)))
      .sort((a, b) => key(b) - key(a) || a.sourceId.localeCompare(b.sourceId))
      .slice(0, top);
  return {
    rule,
    periodId: options.periodId ?? null,
    lines,
    totalBalkedPerWeek: practices.reduce((total, practice) => total + practice.balkedPerWeek, 0),
    totalDemandPerWeek: practices.reduce((total, practice) => total + practice.demandPerWeek, 0),
    practices,
    byPracticeAndLine,
    byDecile,
    furthest: ranked((practice) => practice.meanKm ?? Number.NaN),
    mostBalking: ranked((practice) => (practice.balkedPerWeek > 0 ? practice.balkedShare : Number.NaN)),
  };
}
