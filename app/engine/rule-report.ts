/**
 * One rule's result on one service line, as the result format reports it (PRODUCT.md, "Result
 * JSON"): totals, each site's inflow, utilisation, waits and share within the standard, each
 * practice's flows, balking, wait, travel and cost, and equity across practices and deprivation
 * deciles.
 *
 * What counts where (README.md, "What each output means"):
 *  - `totalCost` is the rule's objective: routine referrals only (urgent ones are fixed at their
 *    nearest site under every rule), Σ flows × (wait + km/κ) + balkers' reservation costs.
 *  - `servedPerWeek` counts every referral seen publicly (urgent + routine), so served + balked
 *    is the line's demand; `meanWaitWeeks` and `meanKm` are means over those served.
 *  - `shareWithinStandard` is the share of routine patients whose queue wait is within the
 *    line's standard (urgent patients are seen first and are not counted in it).
 *  - A site's `inflow` is urgent + routine referrals/week; `meanWaitWeeks` their mean wait.
 * Numbers that have no finite value (a site overloaded by a fixed rule) are reported as null.
 */
import type { LineBuild } from "./build-problem";
import { allocationTotalCost } from "./allocation-cost";
import { ByteWriter, utf8 } from "./byte-writer";
import { allocationLoads, type FlowRows, rowsOf } from "./flow-rows";
import { balkingCost } from "./outside-option";
import type { Allocation, SolveDiagnostics } from "./problem";
import type { Scenario } from "./scenario";
import { siteMetrics } from "./site-wait";

/** Utilisation at or above this is flagged (Bagust, Place & Posnett 1999, BMJ 319:155–158). */
export const UTILISATION_WARNING = 0.85;

/** Flows below this (referrals/week) are left out of a practice's `flows`: rounding dust of the solvers. */
const FLOW_REPORT_THRESHOLD = 1e-12;

/** What every rule's solver hands back (the fixed rules add their overloads). */
export interface RuleSolution {
  allocation: Allocation;
  /** Routine-class wait per site (weeks). */
  siteWait: Float64Array;
  /** Routine inflow per site, the flows summed source by source, when the solver has it (a pass over the flows fewer). */
  siteInflow?: Float64Array;
  diagnostics: SolveDiagnostics;
  overloads?: { siteId: string; demand: number; capacity: number; shortfall: number }[];
  /** The plan's verdict; "infeasible" comes with `infeasibilities` and no allocation. */
  status?: "solved" | "infeasible" | "notConverged";
  infeasibilities?: string[];
  /**
   * The rule's own total cost when it cannot be recomputed from flows and per-source balking alone:
   * under capacityShare each (practice, site) group balks separately, so the balkers are not simply
   * a practice's lowest reservation costs.
   */
  totalCost?: number;
}

export interface ProviderReport {
  id: string;
  name: string | null;
  sector: "public" | "independent";
  /** Urgent + routine referrals/week. */
  inflow: number;
  utilisation: number | null;
  meanWaitWeeks: number | null;
  shareWithinStandard: number | null;
  urgentInflow: number;
  routineInflow: number;
  routineWaitWeeks: number | null;
  urgentWaitWeeks: number | null;
  /** Referrals/week the site can take in a steady state (teams × rate per team, or the pathway's bottleneck). */
  capacity: number;
  warning?: string;
}

export interface SourceReport {
  id: string;
  /** All referrals/week of the line from this practice (urgent + routine). */
  demand: number;
  balked: number;
  meanWaitWeeks: number | null;
  meanKm: number | null;
  /** Mean cost per referral (weeks-equivalent), balkers at their reservation cost included. */
  meanCost: number | null;
  urgentPerWeek: number;
  urgentSiteId: string | null;
  /** Referrals/week to each site, urgent included. */
  flows: Record<string, number>;
}

export interface DecileReport {
  decile: number;
  sources: number;
  demandPerWeek: number;
  balkedPerWeek: number;
  balkedShare: number;
  meanWaitWeeks: number | null;
  meanKm: number | null;
  meanCost: number | null;
}

export interface EquityReport {
  /** Spread across practices of the mean cost per referral (weeks-equivalent). */
  meanCostAcrossSources: { min: number | null; max: number | null; range: number | null; standardDeviation: number | null };
  /** Practices grouped by deprivation decile (1 = most deprived); practices without a decile are left out. */
  byDeprivationDecile: DecileReport[];
}

export interface RuleReport {
  /**
   * "solved"; "notConverged" (figures are the last iterate); "overloaded" (a fixed rule sends a
   * site more patients with no outside option than it can take: see `overloads`); "infeasible"
   * (the plan's constraints cannot all hold: see `infeasibilities`; no allocation is reported).
   */
  status: "solved" | "notConverged" | "overloaded" | "infeasible";
  converged: boolean;
  iterations: number;
  relativeGap: number | null;
  totalCost: number | null;
  servedPerWeek: number;
  balkedPerWeek: number;
  meanWaitWeeks: number | null;
  meanKm: number | null;
  shareWithinStandard: number | null;
  urgentPerWeek: number;
  routineMeanWaitWeeks: number | null;
  equity: EquityReport;
  warnings: string[];
  infeasibilities?: string[];
  /** Sites the rule overloads (a fixed rule sending more captive patients than they can take). */
  overloads?: { siteId: string; demand: number; capacity: number; shortfall: number }[];
  providers: ProviderReport[];
  sources: SourceReport[];
}

/** A finite number, or null where the model has no finite value (JSON has no Infinity). */
export function finite(value: number): number | null {
  return Number.isFinite(value) ? value : null;
}

/** Assembles the report of one rule's solution on one line. */
export function reportRule(scenario: Scenario, build: LineBuild, solution: RuleSolution): RuleReport {
  return assembleReport(scenario, build, solution, null).report;
}

/** A rule's report written as JSON text (UTF-8 chunks, in order), with what merging results reads from it. */
export interface RuleReportJson {
  totalCost: number | null;
  warnings: string[];
  json: Uint8Array[];
}

/**
 * The report of `reportRule` written straight as JSON text: exactly
 * `JSON.stringify(reportRule(scenario, build, solution), null, gap)` as it appears at `depth`
 * inside a larger document (every line break followed by `depth` more gaps). The practices'
 * flows — millions on a national instance — are written from the solution's arrays as they are
 * met, never made into objects: each practice's flows go through JSON.stringify as one array of
 * numbers (its number formatting is the fastest there is), and the site keys are put in place
 * of the commas as the text is copied into bytes (`ByteWriter.asciiWithKeys`).
 */
export function ruleReportJson(scenario: Scenario, build: LineBuild, solution: RuleSolution, gap: string, depth: number): RuleReportJson {
  const layout = jsonLayout(gap, depth, build.problem.siteIds);
  const { report, sourceBytes } = assembleReport(scenario, build, solution, layout);
  const { sources: _objects, ...head } = report;
  const headText = indentAtDepth(JSON.stringify(head, null, gap), gap, depth);
  // `sources` is the report's last key: its text goes where the head's closing brace was.
  const close = gap === "" ? "}" : `\n${gap.repeat(depth)}}`;
  const opening = `${headText.slice(0, headText.length - close.length)}${layout.lastKeySeparator}"sources"${layout.colon}`;
  const json = sourceBytes ? [utf8(opening), ...sourceBytes, utf8(close)] : [utf8(`${opening}[]${close}`)];
  return { totalCost: report.totalCost, warnings: report.warnings, json };
}

/** `text` (JSON.stringify output) as it appears at `depth` inside a larger document. */
export function indentAtDepth(text: string, gap: string, depth: number): string {
  return gap === "" || depth === 0 ? text : text.replaceAll("\n", `\n${gap.repeat(depth)}`);
}

/** The punctuation JSON.stringify(…, null, gap) puts around a report's sources at a depth. */
interface JsonLayout {
  /** JSON.stringify's gap, and the depth of a practice's entry (the report's depth + 2). */
  gap: string;
  rowDepth: number;
  colon: string;
  /** Before the report's last key (`sources`), after the key before it. */
  lastKeySeparator: string;
  rowsOpen: string;
  rowsSeparator: string;
  rowsClose: string;
  /** Around a practice's fields. */
  fieldsSeparator: string;
  fieldsClose: string;
  /** Around a practice's flows (as bytes), and each site's key with the colon after it. */
  flowsOpen: Uint8Array;
  flowsSeparator: Uint8Array;
  flowsClose: Uint8Array;
  siteKeys: Uint8Array[];
  /**
   * Compact output only: whether every site id is plain (its JSON text ASCII without commas, so
   * commas alone locate the keys), else each id's JSON length and UTF-8 bytes beyond that.
   */
  compact: { plain: boolean; siteJsonLength: number[]; siteExtraBytes: number[] } | null;
}

function jsonLayout(gap: string, depth: number, siteIds: readonly string[]): JsonLayout {
  const colon = gap === "" ? ":" : ": ";
  // The report at `depth`; its sources array at depth + 1, a practice at + 2, its fields at + 3, its flows at + 4.
  const line = (level: number) => (gap === "" ? "" : `\n${gap.repeat(depth + level)}`);
  return {
    gap,
    rowDepth: depth + 2,
    colon,
    lastKeySeparator: `,${line(1)}`,
    rowsOpen: `[${line(2)}`,
    rowsSeparator: `,${line(2)}`,
    rowsClose: `${line(1)}]`,
    fieldsSeparator: `,${line(3)}`,
    fieldsClose: `${line(2)}}`,
    flowsOpen: utf8(`{${line(4)}`),
    flowsSeparator: utf8(`,${line(4)}`),
    flowsClose: utf8(`${line(3)}}`),
    siteKeys: siteIds.map((id) => utf8(`${JSON.stringify(id)}${colon}`)),
    compact:
      gap === ""
        ? {
            plain: siteIds.every((id) => /^[\x20-\x7e]*$/.test(JSON.stringify(id)) && !id.includes(",")),
            siteJsonLength: siteIds.map((id) => JSON.stringify(id).length),
            siteExtraBytes: siteIds.map((id) => utf8(JSON.stringify(id)).length - JSON.stringify(id).length),
          }
        : null,
  };
}

/**
 * The report as objects, or — with a layout — with the practices' entries written as the JSON
 * array `sources` instead (`sourceBytes`, UTF-8 chunks in order; null when there are none;
 * `report.sources` left empty).
 * One loop for both, so the two cannot differ.
 */
function assembleReport(
  scenario: Scenario,
  build: LineBuild,
  solution: RuleSolution,
  layout: JsonLayout | null,
): { report: RuleReport; sourceBytes: Uint8Array[] | null } {
  if (solution.status === "infeasible") return { report: infeasibleReport(build, solution), sourceBytes: null };
  const writer = layout && build.problem.n > 0 ? new ByteWriter() : null;
  // A practice's flows in text form: their values (for one JSON.stringify) and their sites' keys;
  // for compact output keys and values alternate in one array, with the keys' lengths beside.
  const flowValues: number[] = [];
  const flowKeys: Uint8Array[] = [];
  const flowPairs: (string | number)[] = [];
  const flowKeyLengths: number[] = [];
  const flowKeyExtraBytes: number[] = [];
  const { problem, siteSpecs, urgentInflow, urgentDemand, urgentSite, standardWeeks } = build;
  const { n, m } = problem;
  const allocation = solution.allocation;
  const warnings = [...solution.diagnostics.warnings];

  const routineInflow = solution.siteInflow ?? allocationLoads(allocation, n, m);

  const siteWaitUrgent = new Float64Array(m);
  const siteWaitRoutine = new Float64Array(m);
  let servedWait = 0;
  let servedKm = 0;
  let served = 0;
  let withinRoutine = 0;
  let routineServed = 0;
  let routineWaitSum = 0;
  const providers: ProviderReport[] = build.providerIndex.map((index, j) => {
    const provider = scenario.providers[index];
    const capacity = build.fullCapacity[j];
    const overloaded = routineInflow[j] >= problem.sites[j].capacity && routineInflow[j] > 0;
    const metrics = siteMetrics(siteSpecs[j], urgentInflow[j], routineInflow[j], standardWeeks);
    const routineWait = overloaded ? Infinity : metrics.routineWait;
    const meanWait = overloaded ? Infinity : metrics.meanWait;
    siteWaitUrgent[j] = metrics.urgentWait;
    siteWaitRoutine[j] = routineWait;
    const inflow = urgentInflow[j] + routineInflow[j];
    if (inflow > 0) servedWait += inflow * meanWait;
    served += inflow;
    if (routineInflow[j] > 0) {
      withinRoutine += routineInflow[j] * (overloaded ? 0 : metrics.shareWithinStandard);
      routineWaitSum += routineInflow[j] * routineWait;
      routineServed += routineInflow[j];
    }
    const report: ProviderReport = {
      id: provider.id,
      name: provider.name ?? null,
      sector: provider.sector,
      inflow,
      utilisation: finite(metrics.utilisation),
      meanWaitWeeks: finite(meanWait),
      shareWithinStandard: overloaded ? 0 : finite(metrics.shareWithinStandard),
      urgentInflow: urgentInflow[j],
      routineInflow: routineInflow[j],
      routineWaitWeeks: finite(routineWait),
      urgentWaitWeeks: finite(metrics.urgentWait),
      capacity,
    };
    if (metrics.utilisation >= UTILISATION_WARNING) {
      report.warning =
        `utilisation ${(metrics.utilisation * 100).toFixed(1)}% is at or above ${UTILISATION_WARNING * 100}%: ` +
        `waits rise steeply near capacity, the more so the fewer teams a site has`;
      warnings.push(`Site ${provider.id}: ${report.warning}.`);
    }
    return report;
  });

  let balked = 0;
  const pairs: PairArrays = { m, rows: rowsOf(allocation, m), rowSites: new Int32Array(m), rowFlows: new Float64Array(m), km: problem.km, travelCost: problem.travelCost, siteWaitRoutine, siteWaitUrgent };
  const reported: ReportedFlows = { sites: new Int32Array(m), flows: new Float64Array(m), totals: new Float64Array(4) };
  const sources: SourceReport[] = [];
  const sourceCosts: { cost: number; demand: number; decile: number | null; balked: number; wait: number; km: number; served: number }[] = [];
  for (let i = 0; i < n; i++) {
    const source = scenario.sources[build.sourceIndex[i]];
    const flows: Record<string, number> = {};
    flowValues.length = 0;
    flowKeys.length = 0;
    flowPairs.length = 0;
    flowKeyLengths.length = 0;
    flowKeyExtraBytes.length = 0;
    const count = reportedFlows(pairs, i, urgentSite[i], urgentDemand[i], reported);
    const sourceServed = reported.totals[0];
    const sourceKm = reported.totals[1];
    const sourceWait = reported.totals[2];
    let sourceCost = reported.totals[3];
    for (let k = 0; k < count; k++) {
      const j = reported.sites[k];
      const flow = reported.flows[k];
      if (layout?.compact) {
        flowPairs.push(problem.siteIds[j], flow);
        if (!layout.compact.plain) {
          flowKeyLengths.push(layout.compact.siteJsonLength[j]);
          flowKeyExtraBytes.push(layout.compact.siteExtraBytes[j]);
        }
      } else if (layout) {
        flowValues.push(flow);
        flowKeys.push(layout.siteKeys[j]);
      } else {
        flows[problem.siteIds[j]] = flow;
      }
    }
    const sourceBalked = allocation.balked[i];
    balked += sourceBalked;
    servedKm += sourceKm;
    sourceCost += balkingCost(sourceBalked, problem.demand[i], problem.outsideCost[i], problem.outsideSpread[i]);
    const demand = problem.demand[i] + urgentDemand[i];
    const row: Omit<SourceReport, "flows"> = {
      id: source.id,
      demand,
      balked: sourceBalked,
      meanWaitWeeks: sourceServed > 0 ? finite(sourceWait / sourceServed) : null,
      meanKm: sourceServed > 0 ? sourceKm / sourceServed : null,
      meanCost: demand > 0 ? finite(sourceCost / demand) : null,
      urgentPerWeek: urgentDemand[i],
      urgentSiteId: urgentSite[i] >= 0 ? problem.siteIds[urgentSite[i]] : null,
    };
    if (layout && writer) {
      // The row's fields as JSON.stringify writes them at their depth (natively, which is faster
      // than joining them field by field), without the closing brace: `flows` comes last.
      const fields = indentAtDepth(JSON.stringify(row, null, layout.gap), layout.gap, layout.rowDepth);
      const opening = i === 0 ? layout.rowsOpen : `${layout.fieldsClose}${layout.rowsSeparator}`;
      const text = `${opening}${fields.slice(0, fields.length - layout.fieldsClose.length)}${layout.fieldsSeparator}`;
      const empty = flowValues.length === 0 && flowPairs.length === 0;
      writer.text(`${text}"flows"${layout.colon}${empty ? "{}" : ""}`);
      if (!empty && layout.compact) {
        const keys = layout.compact.plain ? null : { lengths: flowKeyLengths, extraBytes: flowKeyExtraBytes };
        writer.compactObjectFromPairs(JSON.stringify(flowPairs), keys);
      } else if (!empty) {
        // JSON numbers hold no commas, so the commas of this text are exactly the separators.
        const numbers = JSON.stringify(flowValues);
        writer.raw(layout.flowsOpen);
        writer.asciiWithKeys(numbers, 1, numbers.length - 1, layout.flowsSeparator, flowKeys);
        writer.raw(layout.flowsClose);
      }
    } else {
      sources.push({ ...row, flows });
    }
    sourceCosts.push({ cost: sourceCost, demand, decile: source.deprivationDecile ?? null, balked: sourceBalked, wait: sourceWait, km: sourceKm, served: sourceServed });
  }

  const totalCost = solution.totalCost ?? allocationTotalCost(problem, allocation, solution.siteWait);
  if (!solution.diagnostics.converged && !(solution.overloads?.length ?? 0)) {
    warnings.push("The solver did not converge: figures are the last iterate, not an equilibrium or optimum.");
  }
  const urgentTotal = urgentInflow.reduce((total, value) => total + value, 0);
  const overloaded = (solution.overloads?.length ?? 0) > 0;
  const report: RuleReport = {
    status: overloaded ? "overloaded" : solution.diagnostics.converged ? "solved" : "notConverged",
    converged: solution.diagnostics.converged,
    iterations: solution.diagnostics.iterations,
    relativeGap: finite(solution.diagnostics.relativeGap),
    totalCost: finite(totalCost),
    servedPerWeek: served,
    balkedPerWeek: balked,
    meanWaitWeeks: served > 0 ? finite(servedWait / served) : null,
    meanKm: served > 0 ? servedKm / served : null,
    shareWithinStandard: routineServed > 0 ? withinRoutine / routineServed : null,
    urgentPerWeek: urgentTotal,
    routineMeanWaitWeeks: routineServed > 0 ? finite(routineWaitSum / routineServed) : null,
    equity: equityOf(sourceCosts),
    warnings,
    ...(solution.overloads && solution.overloads.length > 0 ? { overloads: solution.overloads } : {}),
    providers,
    sources,
  };
  if (layout && writer) writer.text(`${layout.fieldsClose}${layout.rowsClose}`);
  return { report, sourceBytes: writer ? writer.finish() : null };
}

/*
 * The loops over all n·m pairs are functions of their own: a report is written once or twice per
 * thread, so its code runs mostly unoptimised, and a small loop is optimised at once (on the
 * stack) and stays so, while the same loop inside the report's long function was optimised and
 * thrown back several times on its first run (the code after the loop had not run yet).
 */

/** What a report reads pair by pair: routine flows, km and travel costs (n·m), and each site's waits. */
interface PairArrays {
  m: number;
  /** Routine flows, source by source (`flow-rows.ts`), read into the two scratch rows (room for m each). */
  rows: FlowRows;
  rowSites: Int32Array;
  rowFlows: Float64Array;
  km: Float64Array;
  travelCost: Float64Array;
  siteWaitRoutine: Float64Array;
  siteWaitUrgent: Float64Array;
}

/** A source's flows above the report threshold (routine + urgent), in site order, and their totals. */
interface ReportedFlows {
  sites: Int32Array;
  flows: Float64Array;
  /** Referrals served, × km, × wait, × (wait + travel cost): the source's sums over those flows. */
  totals: Float64Array;
}

/** Fills `reported` with source i's flows above FLOW_REPORT_THRESHOLD and their totals; returns how many. */
function reportedFlows(pairs: PairArrays, i: number, urgentSite: number, urgentDemand: number, reported: ReportedFlows): number {
  const { m, rows, rowSites, rowFlows, km, travelCost, siteWaitRoutine, siteWaitUrgent } = pairs;
  const { sites, flows, totals } = reported;
  let served = 0;
  let servedKm = 0;
  let wait = 0;
  let cost = 0;
  let count = 0;
  // Pairs in site order: the row's, with the urgent site slotted in at its place when the row
  // leaves it out (a zero routine flow adds nothing, so the sums are those of a dense scan).
  const end = rows.read(i, rowSites, rowFlows);
  let next = 0;
  let urgentDue = urgentSite >= 0 && urgentDemand > 0;
  while (next < end || urgentDue) {
    let j: number;
    let routine: number;
    if (urgentDue && (next >= end || urgentSite <= rowSites[next])) {
      j = urgentSite;
      urgentDue = false;
      routine = next < end && rowSites[next] === j ? rowFlows[next++] : 0;
    } else {
      j = rowSites[next];
      routine = rowFlows[next++];
    }
    const pair = i * m + j;
    const urgent = urgentSite === j ? urgentDemand : 0;
    const flow = routine + urgent;
    if (flow <= FLOW_REPORT_THRESHOLD) continue;
    sites[count] = j;
    flows[count++] = flow;
    served += flow;
    servedKm += flow * km[pair];
    if (routine > 0) {
      wait += routine * siteWaitRoutine[j];
      cost += routine * (siteWaitRoutine[j] + travelCost[pair]);
    }
    if (urgent > 0) {
      wait += urgent * siteWaitUrgent[j];
      cost += urgent * (siteWaitUrgent[j] + travelCost[pair]);
    }
  }
  totals[0] = served;
  totals[1] = servedKm;
  totals[2] = wait;
  totals[3] = cost;
  return count;
}

/** A plan whose constraints cannot all hold: the reasons, and no allocation at all. */
function infeasibleReport(build: LineBuild, solution: RuleSolution): RuleReport {
  const infeasibilities = solution.infeasibilities ?? [];
  return {
    status: "infeasible",
    converged: false,
    iterations: solution.diagnostics.iterations,
    relativeGap: null,
    totalCost: null,
    servedPerWeek: 0,
    balkedPerWeek: 0,
    meanWaitWeeks: null,
    meanKm: null,
    shareWithinStandard: null,
    urgentPerWeek: build.urgentInflow.reduce((total, value) => total + value, 0),
    routineMeanWaitWeeks: null,
    equity: { meanCostAcrossSources: { min: null, max: null, range: null, standardDeviation: null }, byDeprivationDecile: [] },
    warnings: [...solution.diagnostics.warnings, ...infeasibilities],
    infeasibilities,
    providers: [],
    sources: [],
  };
}

function equityOf(rows: { cost: number; demand: number; decile: number | null; balked: number; wait: number; km: number; served: number }[]): EquityReport {
  const means = rows.filter((row) => row.demand > 0).map((row) => ({ mean: row.cost / row.demand, demand: row.demand }));
  const finiteMeans = means.filter((row) => Number.isFinite(row.mean));
  let spread: EquityReport["meanCostAcrossSources"] = { min: null, max: null, range: null, standardDeviation: null };
  if (finiteMeans.length === means.length && means.length > 0) {
    const min = Math.min(...means.map((row) => row.mean));
    const max = Math.max(...means.map((row) => row.mean));
    const weight = means.reduce((total, row) => total + row.demand, 0);
    const average = means.reduce((total, row) => total + row.mean * row.demand, 0) / weight;
    const variance = means.reduce((total, row) => total + row.demand * (row.mean - average) ** 2, 0) / weight;
    spread = { min, max, range: max - min, standardDeviation: Math.sqrt(variance) };
  }
  const deciles = new Map<number, { sources: number; demand: number; balked: number; wait: number; km: number; served: number; cost: number }>();
  for (const row of rows) {
    if (row.decile === null) continue;
    const entry = deciles.get(row.decile) ?? { sources: 0, demand: 0, balked: 0, wait: 0, km: 0, served: 0, cost: 0 };
    entry.sources += 1;
    entry.demand += row.demand;
    entry.balked += row.balked;
    entry.wait += row.wait;
    entry.km += row.km;
    entry.served += row.served;
    entry.cost += row.cost;
    deciles.set(row.decile, entry);
  }
  const byDeprivationDecile = [...deciles.entries()]
    .sort(([a], [b]) => a - b)
    .map(([decile, entry]) => ({
      decile,
      sources: entry.sources,
      demandPerWeek: entry.demand,
      balkedPerWeek: entry.balked,
      balkedShare: entry.demand > 0 ? entry.balked / entry.demand : 0,
      meanWaitWeeks: entry.served > 0 ? finite(entry.wait / entry.served) : null,
      meanKm: entry.served > 0 ? entry.km / entry.served : null,
      meanCost: entry.demand > 0 ? finite(entry.cost / entry.demand) : null,
    }));
  return { meanCostAcrossSources: spread, byDeprivationDecile };
}
