/**
 * The result exchange format (`equilibra/result@1`, PRODUCT.md "The exchange format") as the
 * workspace reads it, and the comparison of referral rules derived from it.
 *
 * Pure: used by the server (CSV export, API) and the browser (comparison panel, what-if worker
 * results). Results come back from storage as untyped JSON, so every reader tolerates optional
 * fields that a later engine version may add or an older run may lack.
 */

export const RESULT_SCHEMA = "equilibra/result@1";

export interface ProviderResult {
  id: string;
  inflow: number;
  utilisation: number;
  meanWaitWeeks: number;
  shareWithinStandard: number;
}

export interface SourceResult {
  id: string;
  balked: number;
  meanWaitWeeks: number;
  meanKm: number;
  flows: Record<string, number>;
  /** Mean cost per referral in weeks-equivalent, balkers included, when the engine reports it. */
  meanCost?: number;
}

export interface RuleResult {
  converged: boolean;
  iterations: number;
  relativeGap: number;
  totalCost: number;
  servedPerWeek: number;
  balkedPerWeek: number;
  meanWaitWeeks: number;
  meanKm: number;
  shareWithinStandard?: number;
  providers: ProviderResult[];
  sources: SourceResult[];
  warnings?: string[];
}

export interface LineResult {
  priceOfAnarchy: number | null;
  rules: Partial<Record<string, RuleResult>>;
}

export interface ResultDocument {
  schema: typeof RESULT_SCHEMA;
  priceOfAnarchy: number | null;
  lines: Record<string, LineResult>;
  warnings?: string[];
}

/** The rules in the order the comparison shows them; keys as in the result format. */
export const RULE_ORDER = ["choice", "choiceLogit", "optimum", "nearest", "capacityShare", "plan"] as const;

export const RULE_LABELS: Record<string, string> = {
  choice: "Patient choice (Wardrop)",
  choiceLogit: "Patient choice (logit)",
  optimum: "Central referral hub (optimum)",
  nearest: "Nearest site",
  capacityShare: "Share by capacity",
  plan: "Constrained plan",
};

/** Utilisation at or above this is flagged: queues lengthen sharply, more so at small sites. */
export const UTILISATION_WARNING = 0.85;

export function isResultDocument(value: unknown): value is ResultDocument {
  return typeof value === "object" && value !== null && (value as { schema?: unknown }).schema === RESULT_SCHEMA && typeof (value as { lines?: unknown }).lines === "object";
}

/** The rules present in a result, in display order. */
export function rulesIn(result: ResultDocument): string[] {
  const present = new Set<string>();
  for (const line of Object.values(result.lines)) for (const rule of Object.keys(line.rules)) present.add(rule);
  const ordered: string[] = RULE_ORDER.filter((rule) => present.has(rule));
  for (const rule of present) if (!ordered.includes(rule)) ordered.push(rule);
  return ordered;
}

export interface SourceFacts {
  id: string;
  deprivationDecile?: number | null;
}

export interface RuleSummary {
  rule: string;
  totalCost: number;
  /** Total cost of this rule over the optimum's, over all selected lines. */
  priceOfAnarchy: number | null;
  /** Weighted by patients served. */
  meanWaitWeeks: number;
  shareWithinStandard: number | null;
  meanKm: number;
  servedPerWeek: number;
  balkedPerWeek: number;
  /** Spread of mean cost per referral across practices (max − min, weeks-equivalent). */
  costSpread: number | null;
  /** Mean cost per referral by deprivation decile (1 = most deprived); empty when no decile is known. */
  costByDecile: Array<{ decile: number; meanCost: number; demand: number }>;
  converged: boolean;
  /** Site utilisation warnings (≥ 85%). */
  busySites: Array<{ line: string; id: string; utilisation: number }>;
}

/** Mean cost per referral of one practice under one rule (weeks-equivalent). */
export function sourceMeanCost(source: SourceResult, kmPerWeek: number): number | null {
  if (typeof source.meanCost === "number") return source.meanCost;
  const served = Object.values(source.flows).reduce((sum, flow) => sum + flow, 0);
  if (served <= 0) return null;
  // Without the engine's figure, the cost of those served: wait plus travel converted at κ.
  return source.meanWaitWeeks + source.meanKm / kmPerWeek;
}

/**
 * One row per rule, aggregated over the chosen service lines (all by default). Means are weighted
 * by patients served; equity is read across practices and deprivation deciles.
 */
export function summariseRules(
  result: ResultDocument,
  options: { kmPerWeek: number; lines?: string[]; sources?: SourceFacts[] },
): RuleSummary[] {
  const lineIds = options.lines ?? Object.keys(result.lines);
  const decileOf = new Map((options.sources ?? []).map((source) => [source.id, source.deprivationDecile ?? null]));
  let optimumCost = 0;
  let optimumComplete = true;
  for (const lineId of lineIds) {
    const optimum = result.lines[lineId]?.rules.optimum;
    if (optimum) optimumCost += optimum.totalCost;
    else optimumComplete = false;
  }
  return rulesIn(result).map((rule) => {
    let totalCost = 0;
    let served = 0;
    let balked = 0;
    let waitSum = 0;
    let kmSum = 0;
    let withinSum = 0;
    let withinKnown = true;
    let converged = true;
    const busySites: RuleSummary["busySites"] = [];
    // Per practice over lines: demand-weighted cost.
    const practiceCost = new Map<string, { cost: number; demand: number }>();
    for (const lineId of lineIds) {
      const ruleResult = result.lines[lineId]?.rules[rule];
      if (!ruleResult) continue;
      totalCost += ruleResult.totalCost;
      served += ruleResult.servedPerWeek;
      balked += ruleResult.balkedPerWeek;
      waitSum += ruleResult.meanWaitWeeks * ruleResult.servedPerWeek;
      kmSum += ruleResult.meanKm * ruleResult.servedPerWeek;
      converged &&= ruleResult.converged;
      let lineWithin = 0;
      let lineInflow = 0;
      for (const provider of ruleResult.providers) {
        lineWithin += provider.shareWithinStandard * provider.inflow;
        lineInflow += provider.inflow;
        if (provider.utilisation >= UTILISATION_WARNING) busySites.push({ line: lineId, id: provider.id, utilisation: provider.utilisation });
      }
      if (typeof ruleResult.shareWithinStandard === "number") withinSum += ruleResult.shareWithinStandard * ruleResult.servedPerWeek;
      else if (lineInflow > 0) withinSum += (lineWithin / lineInflow) * ruleResult.servedPerWeek;
      else withinKnown &&= ruleResult.servedPerWeek === 0;
      for (const source of ruleResult.sources) {
        const cost = sourceMeanCost(source, options.kmPerWeek);
        if (cost === null) continue;
        const demand = Object.values(source.flows).reduce((sum, flow) => sum + flow, 0) + source.balked;
        const entry = practiceCost.get(source.id) ?? { cost: 0, demand: 0 };
        entry.cost += cost * demand;
        entry.demand += demand;
        practiceCost.set(source.id, entry);
      }
    }
    const means = [...practiceCost.entries()].filter(([, entry]) => entry.demand > 0).map(([id, entry]) => ({ id, mean: entry.cost / entry.demand, demand: entry.demand }));
    const deciles = new Map<number, { cost: number; demand: number }>();
    for (const practice of means) {
      const decile = decileOf.get(practice.id);
      if (typeof decile !== "number") continue;
      const entry = deciles.get(decile) ?? { cost: 0, demand: 0 };
      entry.cost += practice.mean * practice.demand;
      entry.demand += practice.demand;
      deciles.set(decile, entry);
    }
    return {
      rule,
      totalCost,
      priceOfAnarchy: optimumComplete && optimumCost > 0 ? totalCost / optimumCost : null,
      meanWaitWeeks: served > 0 ? waitSum / served : 0,
      shareWithinStandard: withinKnown && served > 0 ? withinSum / served : null,
      meanKm: served > 0 ? kmSum / served : 0,
      servedPerWeek: served,
      balkedPerWeek: balked,
      costSpread: means.length > 0 ? Math.max(...means.map((m) => m.mean)) - Math.min(...means.map((m) => m.mean)) : null,
      costByDecile: [...deciles.entries()]
        .sort(([a], [b]) => a - b)
        .map(([decile, entry]) => ({ decile, meanCost: entry.cost / entry.demand, demand: entry.demand })),
      converged,
      busySites,
    };
  });
}

export interface SiteRuleRow {
  line: string;
  site: string;
  byRule: Record<string, { inflow: number; utilisation: number; meanWaitWeeks: number; shareWithinStandard: number }>;
}

/** Per site and line, the inflow and utilisation under each rule: the side-by-side site table. */
export function siteRows(result: ResultDocument, lines?: string[]): SiteRuleRow[] {
  const rows = new Map<string, SiteRuleRow>();
  for (const lineId of lines ?? Object.keys(result.lines)) {
    const line = result.lines[lineId];
    if (!line) continue;
    for (const [rule, ruleResult] of Object.entries(line.rules)) {
      if (!ruleResult) continue;
      for (const provider of ruleResult.providers) {
        const key = `${lineId}\u0000${provider.id}`;
        const row = rows.get(key) ?? { line: lineId, site: provider.id, byRule: {} };
        row.byRule[rule] = {
          inflow: provider.inflow,
          utilisation: provider.utilisation,
          meanWaitWeeks: provider.meanWaitWeeks,
          shareWithinStandard: provider.shareWithinStandard,
        };
        rows.set(key, row);
      }
    }
  }
  return [...rows.values()];
}
