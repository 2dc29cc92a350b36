/**
 * The rules side by side: cost, price of anarchy, waits, the share within the standard, travel,
 * balking and equity (spread across practices, cost by deprivation decile); then each site's
 * inflow and utilisation under each rule, with charts — and beside them the assumptions, the data
 * date and the planning cautions, so no figure is read without its context.
 */
import { memo, useDeferredValue, useMemo } from "react";
import { PlanningCautions } from "~/components/planning-cautions";
import { SiteBarChart, RULE_COLOURS, type SiteChartRow } from "~/components/rule-charts";
import { RULE_LABELS, rulesIn, siteRows, summariseRules, UTILISATION_WARNING, type ResultDocument, type RuleSummary } from "~/models/result-document";
import type { ScenarioDoc } from "~/models/scenario-document";
import { AssumptionsList } from "./assumptions";

// One formatter per number of decimals: building an Intl.NumberFormat per cell is slow.
const fixedFormatters = new Map<number, Intl.NumberFormat>();

function fmt(value: number | null | undefined, decimals = 2): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "–";
  // Fixed decimals per measure, so a column of figures lines up.
  let formatter = fixedFormatters.get(decimals);
  if (!formatter) {
    formatter = new Intl.NumberFormat("en-GB", { minimumFractionDigits: decimals, maximumFractionDigits: decimals });
    fixedFormatters.set(decimals, formatter);
  }
  return formatter.format(value);
}
function pct(value: number | null | undefined): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : `${(value * 100).toFixed(1)}%`;
}

const METRICS: Array<{ label: string; unit: string; meaning: string; value: (row: RuleSummary) => string }> = [
  { label: "Total cost", unit: "weeks-equivalent/week", meaning: "waiting + travel (km ÷ κ) + balkers' private-care cost", value: (r) => fmt(r.totalCost, 1) },
  { label: "Price of anarchy", unit: "ratio to optimum", meaning: "total cost over the central hub's minimum (1 = no loss)", value: (r) => fmt(r.priceOfAnarchy, 3) },
  { label: "Mean wait", unit: "weeks", meaning: "mean queue wait of patients seen publicly", value: (r) => fmt(r.meanWaitWeeks) },
  { label: "Within standard", unit: "share of routine patients", meaning: "seen within the line's waiting standard", value: (r) => pct(r.shareWithinStandard) },
  { label: "Mean travel", unit: "km", meaning: "road km from practice to site, per patient seen", value: (r) => fmt(r.meanKm, 1) },
  { label: "Seen publicly", unit: "referrals/week", meaning: "urgent and routine referrals treated at the sites", value: (r) => fmt(r.servedPerWeek, 1) },
  { label: "Balked", unit: "referrals/week", meaning: "patients who leave for private care (or go without)", value: (r) => fmt(r.balkedPerWeek, 1) },
  { label: "Equity: cost spread", unit: "weeks-equivalent", meaning: "highest minus lowest mean cost per referral across practices", value: (r) => fmt(r.costSpread) },
];

const MemoSiteBarChart = memo(SiteBarChart);

/** Mean wait and utilisation per site and rule on `lineId`, as the charts take them. */
function chartData(result: ResultDocument, lineId: string | null): { rules: string[]; waits: SiteChartRow[]; utilisation: SiteChartRow[] } {
  const rules = rulesIn(result);
  const waits: SiteChartRow[] = [];
  const utilisation: SiteChartRow[] = [];
  if (lineId) {
    for (const row of siteRows(result, [lineId])) {
      const wait: SiteChartRow = { site: row.site };
      const share: SiteChartRow = { site: row.site };
      for (const rule of rules) {
        wait[rule] = row.byRule[rule]?.meanWaitWeeks ?? 0;
        share[rule] = row.byRule[rule]?.utilisation ?? 0;
      }
      waits.push(wait);
      utilisation.push(share);
    }
  }
  return { rules, waits, utilisation };
}

export function RuleComparison({
  result,
  label,
  lineIds,
  doc,
  siteNames,
}: {
  result: ResultDocument;
  /** What the figures come from: "Run 12 (3 May 2026)" or "What-if, not saved". */
  label: string;
  lineIds: string[];
  doc: ScenarioDoc;
  siteNames: Record<string, string>;
}) {
  const summaries = useMemo(() => summariseRules(result, { lines: lineIds, sources: doc.sources }), [result, lineIds, doc.sources]);
  const rules = summaries.map((summary) => summary.rule);
  const sites = useMemo(() => siteRows(result, lineIds), [result, lineIds]);
  const deciles = [...new Set(summaries.flatMap((summary) => summary.costByDecile.map((entry) => entry.decile)))].sort((a, b) => a - b);
  const busy = summaries.flatMap((summary) => summary.busySites.map((site) => ({ ...site, rule: summary.rule })));
  const chartLine = lineIds.length === 1 ? lineIds[0] : null;
  // The charts (the slowest part to draw) follow the tables in a second, interruptible render, so
  // a what-if's figures show without waiting for them; the charts catch up a frame or so later.
  const chartResult = useDeferredValue(result);
  const charts = useMemo(() => chartData(chartResult, chartLine), [chartResult, chartLine]);
  const lineName = (id: string) => doc.serviceLines.find((line) => line.id === id)?.name ?? id;

  return (
    <div className="grid gap-6 lg:grid-cols-[1fr_18rem]" data-testid="rule-comparison">
      <div className="min-w-0 space-y-6">
        <p className="text-sm text-ink-soft">
          Figures from <strong className="text-ink">{label}</strong>, {lineIds.length === doc.serviceLines.length ? "all service lines" : lineIds.map(lineName).join(", ")}.
        </p>
        <div className="overflow-x-auto rounded border border-rule bg-white">
          <table className="min-w-full text-sm" aria-label="Rule comparison">
            <thead className="bg-accent-soft/60">
              <tr>
                <th scope="col" className="px-2 py-1.5 text-left">Measure</th>
                {rules.map((rule) => (
                  <th key={rule} scope="col" className="px-2 py-1.5 text-right">
                    <span className="mr-1 inline-block h-2.5 w-2.5 rounded-sm" style={{ background: RULE_COLOURS[rule] }} aria-hidden="true" />
                    {RULE_LABELS[rule] ?? rule}
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {METRICS.map((metric) => (
                <tr key={metric.label} className="border-t border-rule/60">
                  <th scope="row" className="px-2 py-1 text-left font-normal">
                    <span className="font-semibold">{metric.label}</span> <span className="text-xs text-ink-soft">({metric.unit})</span>
                    <span className="block text-xs text-ink-soft">{metric.meaning}</span>
                  </th>
                  {summaries.map((summary) => (
                    <td key={summary.rule} className="num px-2 py-1">
                      {metric.value(summary)}
                    </td>
                  ))}
                </tr>
              ))}
              <tr className="border-t border-rule/60">
                <th scope="row" className="px-2 py-1 text-left font-normal">
                  <span className="font-semibold">Solver</span> <span className="block text-xs text-ink-soft">every line converged</span>
                </th>
                {summaries.map((summary) => (
                  <td key={summary.rule} className={`num px-2 py-1 ${summary.converged ? "" : "font-semibold text-bad"}`}>
                    {summary.converged ? "converged" : "not converged"}
                  </td>
                ))}
              </tr>
            </tbody>
          </table>
        </div>

        {deciles.length > 0 && (
          <div className="overflow-x-auto rounded border border-rule bg-white">
            <table className="min-w-full text-sm" aria-label="Mean cost by deprivation decile">
              <caption className="px-2 py-1.5 text-left text-sm font-semibold">
                Mean cost per referral by deprivation decile <span className="font-normal text-ink-soft">(weeks-equivalent; decile 1 = most deprived)</span>
              </caption>
              <thead className="bg-accent-soft/60">
                <tr>
                  <th scope="col" className="px-2 py-1 text-left">Decile</th>
                  {rules.map((rule) => (
                    <th key={rule} scope="col" className="px-2 py-1 text-right">
                      {RULE_LABELS[rule] ?? rule}
                    </th>
                  ))}
                </tr>
              </thead>
              <tbody>
                {deciles.map((decile) => (
                  <tr key={decile} className="border-t border-rule/60">
                    <th scope="row" className="px-2 py-1 text-left font-normal">
                      {decile}
                    </th>
                    {summaries.map((summary) => (
                      <td key={summary.rule} className="num px-2 py-1">
                        {fmt(summary.costByDecile.find((entry) => entry.decile === decile)?.meanCost)}
                      </td>
                    ))}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}

        {busy.length > 0 && (
          <div role="note" className="rounded border border-warn bg-warn-soft px-3 py-2 text-sm" data-testid="utilisation-warnings">
            <p className="font-semibold text-warn">Sites at or above {UTILISATION_WARNING * 100}% utilisation</p>
            <p className="text-xs">Waits rise steeply near capacity, the more so the fewer teams a site has.</p>
            <ul className="mt-1 list-disc pl-5">
              {busy.map((site) => (
                <li key={`${site.rule}-${site.line}-${site.id}`}>
                  {siteNames[site.id] ?? site.id} ({site.id}), {lineName(site.line)}, under {RULE_LABELS[site.rule] ?? site.rule}:{" "}
                  {Number.isFinite(site.utilisation) ? pct(site.utilisation) : "overloaded"}
                </li>
              ))}
            </ul>
          </div>
        )}

        <div className="overflow-x-auto rounded border border-rule bg-white">
          <table className="min-w-full text-sm" aria-label="Site inflow and utilisation by rule">
            <caption className="px-2 py-1.5 text-left text-sm font-semibold">Each site's inflow and utilisation under each rule</caption>
            <thead className="bg-accent-soft/60">
              <tr>
                <th scope="col" className="px-2 py-1 text-left">Site</th>
                <th scope="col" className="px-2 py-1 text-left">Line</th>
                {rules.map((rule) => (
                  <th key={rule} scope="col" className="px-2 py-1 text-right">
                    {RULE_LABELS[rule] ?? rule}
                    <span className="block text-xs font-normal text-ink-soft">referrals/week · utilisation</span>
                  </th>
                ))}
              </tr>
            </thead>
            <tbody>
              {sites.map((row) => (
                <tr key={`${row.line}-${row.site}`} className="border-t border-rule/60">
                  <th scope="row" className="px-2 py-1 text-left font-normal">
                    {siteNames[row.site] ?? row.site} <span className="text-xs text-ink-soft">{row.site}</span>
                  </th>
                  <td className="px-2 py-1">{lineName(row.line)}</td>
                  {rules.map((rule) => {
                    const cell = row.byRule[rule];
                    const warn = cell && (cell.utilisation === null || cell.utilisation >= UTILISATION_WARNING);
                    return (
                      <td key={rule} className={`num px-2 py-1 ${warn ? "bg-warn-soft font-semibold text-warn" : ""}`}>
                        {cell ? `${fmt(cell.inflow, 1)} · ${cell.utilisation === null ? "overloaded" : pct(cell.utilisation)}` : "–"}
                      </td>
                    );
                  })}
                </tr>
              ))}
            </tbody>
          </table>
        </div>

        {chartLine ? (
          <div className="grid gap-4 xl:grid-cols-2">
            <MemoSiteBarChart title={`Mean wait by site, ${lineName(chartLine)}`} unit="weeks" rows={charts.waits} rules={charts.rules} ruleLabels={RULE_LABELS} />
            <MemoSiteBarChart
              title={`Utilisation by site, ${lineName(chartLine)}`}
              unit="share of capacity"
              percent
              warningAt={UTILISATION_WARNING}
              rows={charts.utilisation}
              rules={charts.rules}
              ruleLabels={RULE_LABELS}
            />
          </div>
        ) : (
          <p className="text-sm text-ink-soft">Choose one service line above to chart waits and utilisation by site.</p>
        )}
      </div>

      <aside className="space-y-4 text-sm" aria-label="Assumptions and cautions">
        <div className="rounded border border-rule bg-white p-3">
          <p className="font-semibold">Data date</p>
          <p>{doc.dataDate ?? "Not stated: add it in the scenario's settings."}</p>
        </div>
        <div className="rounded border border-rule bg-white p-3">
          <p className="mb-1 font-semibold">Assumptions of these figures</p>
          <AssumptionsList doc={doc} compact />
        </div>
        <div className="rounded border border-rule bg-white p-3">
          <PlanningCautions />
        </div>
      </aside>
    </div>
  );
}
