/**
 * CSV exports of the outlooks (site inflow, balking), each opening with `#` lines that carry the
 * run, its data date, the assumptions and the planning cautions — a spreadsheet shows them as its
 * first rows, so a figure never travels without them. Numbers as `String(number)` (exact).
 */
import Papa from "papaparse";
import { PLANNING_CAUTIONS } from "~/components/planning-cautions";
import type { BalkingOutlook } from "~/engine/balking-outlook";
import type { SiteOutlook } from "~/engine/site-outlook";

export interface OutlookExportContext {
  title: string;
  scenarioName: string;
  runLabel: string;
  dataDate: string | null;
  kmPerWeek: number;
  circuity: number;
}

type Cell = string | number | null | undefined;

function toCsv(header: string[], rows: Cell[][]): string {
  const text = (value: Cell) => (value === null || value === undefined ? "" : typeof value === "number" ? String(value) : value);
  return `${Papa.unparse({ fields: header, data: rows.map((row) => row.map(text)) }, { newline: "\n" })}\n`;
}

function preamble(context: OutlookExportContext, extra: string[] = []): string {
  return (
    [
      `# Equilibra ${context.title}: ${context.scenarioName} (${context.runLabel})`,
      `# Data date: ${context.dataDate ?? "not stated"}`,
      `# Assumptions: ${context.kmPerWeek} km of travel per week of waiting; road km = straight-line km x ${context.circuity} unless a km matrix was uploaded`,
      ...extra.map((line) => `# ${line}`),
      ...PLANNING_CAUTIONS.map((caution) => `# ${caution}`),
    ].join("\n") + "\n"
  );
}

export function siteOutlookCsv(outlook: SiteOutlook, context: OutlookExportContext): string {
  const standards = Object.entries(outlook.standardWeeks)
    .map(([line, weeks]) => `${line} ${weeks} weeks`)
    .join(", ");
  return (
    preamble(context, [`Teams needed: the fewest teams for ${outlook.targetShareWithin * 100}% of routine patients within the standard (${standards}) at the period's inflow`]) +
    toCsv(
      [
        "site",
        "line",
        "period",
        "weeks",
        "rule",
        "urgent inflow (referrals/week)",
        "routine inflow (referrals/week)",
        "inflow (referrals/week)",
        "utilisation (share)",
        "mean wait (weeks)",
        "routine wait (weeks)",
        "urgent wait (weeks)",
        "share within standard",
        "teams available",
        "teams needed",
        "note",
      ],
      outlook.rows.map((row) => [
        row.siteId,
        row.lineId,
        row.periodId,
        row.weeks,
        row.rule,
        row.urgentInflow,
        row.routineInflow,
        row.inflow,
        row.utilisation,
        row.meanWaitWeeks,
        row.routineWaitWeeks,
        row.urgentWaitWeeks,
        row.shareWithinStandard,
        row.teamsAvailable,
        row.teamsNeeded,
        row.note,
      ]),
    )
  );
}

export function balkingOutlookCsv(outlook: BalkingOutlook, context: OutlookExportContext): string {
  const names = new Map(outlook.practices.map((practice) => [practice.sourceId, practice]));
  return (
    preamble(context, [`Rule: ${outlook.rule}${outlook.periodId ? `; period ${outlook.periodId}` : "; whole year (stationary)"}`]) +
    toCsv(
      ["practice", "name", "deprivation decile", "line", "demand (referrals/week)", "balked (referrals/week)", "balked share", "mean km", "mean wait (weeks)"],
      outlook.byPracticeAndLine.map((row) => {
        const practice = names.get(row.sourceId);
        return [row.sourceId, practice?.name, practice?.deprivationDecile, row.lineId, row.demandPerWeek, row.balkedPerWeek, row.balkedShare, row.meanKm, row.meanWaitWeeks];
      }),
    )
  );
}
