/**
 * The result exchange format (`equilibra/result@1`, PRODUCT.md "The exchange format") as the
 * workspace reads it, and the comparison of referral rules derived from it.
 *
 * Pure: used by the server (CSV export, API) and the browser (comparison panel, what-if worker
 * results). Results come back from storage as untyped JSON, so every reader tolerates optional
 * fields that a later engine version may add or an older run may lack.
 */

export const RESULT_SCHEMA = "equilibra/result@1";

// Numbers the model has no finite value for (a site overloaded by a fixed rule) arrive as null.
export interface ProviderResult {
  id: string;
  name?: string | null;
  inflow: number;
  utilisation: number | null;
  meanWaitWeeks: number | null;
  shareWithinStandard: number | null;
  warning?: string;
}

export interface SourceResult {
  id: string;
  /** Referrals/week of the line from this practice (urgent + routine), when reported. */
  demand?: number;
  balked: number;
  meanWaitWeeks: number | null;
  meanKm: number | null;
  flows: Record<string, number>;
  /** Mean cost per referral in weeks-equivalent, balkers at their reservation cost included. */
  meanCost?: number | null;
}

export interface RuleResult {
  converged: boolean;
  iterations: number;
  relativeGap: number | null;
  totalCost: number | null;
  servedPerWeek: number;
  balkedPerWeek: number;
  meanWaitWeeks: number | null;
  meanKm: number | null;
  shareWithinStandard?: number | null;
  providers: ProviderResult[];
  sources: SourceResult[];
  warnings?: string[];
}

export interface LineResult {
  name?: string;
  standardWeeks?: number;
  priceOfAnarchy: number | null;
  rules: Partial<Record<string, RuleResult>>;
  warnings?: string[];
}

export interface ResultDocument {
  schema: typeof RESULT_SCHEMA;
  priceOfAnarchy: number | null;
  lines: Record<string, LineResult>;
  assumptions?: Record<string, unknown>;
  cautions?: string[];
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
  /** Null when some line has no finite cost under this rule (a site it overloads). */
  totalCost: number | null;
  /** Total cost of this rule over the optimum's, over the selected lines. */
  priceOfAnarchy: number | null;
  /** Means over patients served. */
  meanWaitWeeks: number | null;
  shareWithinStandard: number | null;
  meanKm: number | null;
  servedPerWeek: number;
  balkedPerWeek: number;
  /** Spread of mean cost per referral across practices (max − min, weeks-equivalent). */
  costSpread: number | null;
  /** Mean cost per referral by deprivation decile (1 = most deprived); empty when no decile is known. */
  costByDecile: Array<{ decile: number; meanCost: number; demand: number }>;
  converged: boolean;
  /** Sites at or above 85% utilisation. */
  busySites: Array<{ line: string; id: string; utilisation: number }>;
}

function sourceDemand(source: SourceResult): number {
  return source.demand ?? Object.values(source.flows).reduce((sum, flow) => sum + flow, 0) + source.balked;
}

/**
 * One row per rule, aggregated over the chosen service lines (all by default). Means are weighted
 * by patients served; a practice's cost over several lines is weighted by its demand on each, and
 * practices are grouped by deprivation decile for the equity columns.
 */
export function summariseRules(result: ResultDocument, options: { lines?: string[]; sources?: SourceFacts[] } = {}): RuleSummary[] {
  const lineIds = options.lines ?? Object.keys(result.lines);
  const decileOf = new Map((options.sources ?? []).map((source) => [source.id, source.deprivationDecile ?? null]));
  let optimumCost: number | null = 0;
  for (const lineId of lineIds) {
    const cost = result.lines[lineId]?.rules.optimum?.totalCost;
    optimumCost = typeof cost === "number" && optimumCost !== null ? optimumCost + cost : null;
  }
  return rulesIn(result).map((rule) => {
    let totalCost: number | null = 0;
    let served = 0;
    let balked = 0;
    let waitSum: number | null = 0;
    let kmSum: number | null = 0;
    let withinSum: number | null = 0;
    let withinWeight = 0;
    let converged = true;
    const busySites: RuleSummary["busySites"] = [];
    const practiceCost = new Map<string, { cost: number; demand: number }>();
    let costsComplete = true;
    for (const lineId of lineIds) {
      const ruleResult = result.lines[lineId]?.rules[rule];
      if (!ruleResult) continue;
      totalCost = totalCost !== null && ruleResult.totalCost !== null ? totalCost + ruleResult.totalCost : null;
      served += ruleResult.servedPerWeek;
      balked += ruleResult.balkedPerWeek;
      if (ruleResult.servedPerWeek > 0) {
        waitSum = waitSum !== null && ruleResult.meanWaitWeeks !== null ? waitSum + ruleResult.meanWaitWeeks * ruleResult.servedPerWeek : null;
        kmSum = kmSum !== null && ruleResult.meanKm !== null ? kmSum + ruleResult.meanKm * ruleResult.servedPerWeek : null;
        if (ruleResult.shareWithinStandard != null && withinSum !== null) {
          withinSum += ruleResult.shareWithinStandard * ruleResult.servedPerWeek;
          withinWeight += ruleResult.servedPerWeek;
        } else if (ruleResult.shareWithinStandard === null) withinSum = null;
      }
      converged &&= ruleResult.converged;
      for (const provider of ruleResult.providers) {
        if (provider.utilisation === null || provider.utilisation >= UTILISATION_WARNING) {
          busySites.push({ line: lineId, id: provider.id, utilisation: provider.utilisation ?? Infinity });
        }
      }
      for (const source of ruleResult.sources) {
        const demand = sourceDemand(source);
        if (demand <= 0) continue;
        if (source.meanCost === null || source.meanCost === undefined) {
          costsComplete = false;
          continue;
        }
        const entry = practiceCost.get(source.id) ?? { cost: 0, demand: 0 };
        entry.cost += source.meanCost * demand;
        entry.demand += demand;
        practiceCost.set(source.id, entry);
      }
    }
    const means = [...practiceCost.entries()].map(([id, entry]) => ({ id, mean: entry.cost / entry.demand, demand: entry.demand }));
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
      priceOfAnarchy: totalCost !== null && optimumCost !== null && optimumCost > 0 ? totalCost / optimumCost : null,
      meanWaitWeeks: served > 0 && waitSum !== null ? waitSum / served : null,
      shareWithinStandard: withinSum !== null && withinWeight > 0 ? withinSum / withinWeight : null,
      meanKm: served > 0 && kmSum !== null ? kmSum / served : null,
      servedPerWeek: served,
      balkedPerWeek: balked,
      costSpread: costsComplete && means.length > 0 ? Math.max(...means.map((m) => m.mean)) - Math.min(...means.map((m) => m.mean)) : null,
      costByDecile: costsComplete
        ? [...deciles.entries()].sort(([a], [b]) => a - b).map(([decile, entry]) => ({ decile, meanCost: entry.cost / entry.demand, demand: entry.demand }))
        : [],
      converged,
      busySites,
    };
  });
}

export interface SiteRuleRow {
  line: string;
  site: string;
  byRule: Record<string, { inflow: number; utilisation: number | null; meanWaitWeeks: number | null; shareWithinStandard: number | null }>;
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

/**
 * Only what the workspace shows (headline figures, each site's and practice's figures and flows):
 * pages carry the result inside their HTML, and the engine's further detail roughly doubles it.
 */
export function slimResult(result: ResultDocument): ResultDocument {
  const lines: Record<string, LineResult> = {};
  for (const [lineId, line] of Object.entries(result.lines)) {
    const rules: LineResult["rules"] = {};
    for (const [key, rule] of Object.entries(line.rules)) {
      if (!rule) continue;
      rules[key] = {
        converged: rule.converged,
        iterations: rule.iterations,
        relativeGap: rule.relativeGap,
        totalCost: rule.totalCost,
        servedPerWeek: rule.servedPerWeek,
        balkedPerWeek: rule.balkedPerWeek,
        meanWaitWeeks: rule.meanWaitWeeks,
        meanKm: rule.meanKm,
        shareWithinStandard: rule.shareWithinStandard,
        providers: rule.providers.map(({ id, inflow, utilisation, meanWaitWeeks, shareWithinStandard }) => ({ id, inflow, utilisation, meanWaitWeeks, shareWithinStandard })),
        sources: rule.sources.map(({ id, demand, balked, meanWaitWeeks, meanKm, meanCost, flows }) => ({ id, demand, balked, meanWaitWeeks, meanKm, meanCost, flows })),
      };
    }
    lines[lineId] = { name: line.name, standardWeeks: line.standardWeeks, priceOfAnarchy: line.priceOfAnarchy, rules };
  }
  return { schema: result.schema, priceOfAnarchy: result.priceOfAnarchy, lines, warnings: result.warnings };
}
