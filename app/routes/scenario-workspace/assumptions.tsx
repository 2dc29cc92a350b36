/**
 * The assumptions behind every figure, each with its unit and a one-line meaning: willingness to
 * travel (κ), circuity, the private-care outside option per line, the choice model, the waiting
 * standards and the plan's limits.
 */
import { formatNumber } from "~/components/data-table";
import type { ScenarioDoc } from "~/models/scenario-document";

type AssumptionDoc = Pick<ScenarioDoc, "kmPerWeek" | "circuity" | "choiceModel" | "plan" | "serviceLines"> & {
  sources: Array<{ outsideCost?: ScenarioDoc["sources"][number]["outsideCost"]; outsideSpread?: number }>;
};

function range(values: number[], decimals = 1): string {
  if (values.length === 0) return "none";
  const low = Math.min(...values);
  const high = Math.max(...values);
  return low === high ? formatNumber(low, decimals) : `${formatNumber(low, decimals)}–${formatNumber(high, decimals)}`;
}

export function AssumptionsList({ doc, compact = false }: { doc: AssumptionDoc; compact?: boolean }) {
  const items: Array<{ name: string; value: string; unit: string; meaning: string }> = [
    {
      name: "Willingness to travel (κ)",
      value: formatNumber(doc.kmPerWeek, 1),
      unit: "km per week of waiting",
      meaning: "how far a patient would travel to wait one week less; no settled published value — calibrate so the baseline matches the observed share bypassing their nearest site, and read results at 5 and 50 too",
    },
    { name: "Circuity", value: formatNumber(doc.circuity, 2), unit: "road km per straight-line km", meaning: "turns straight-line distance into road distance where no km matrix was uploaded" },
    {
      name: "Choice model",
      value: doc.choiceModel.kind === "logit" ? `logit, θ = ${formatNumber(doc.choiceModel.scale, 2)}` : "Wardrop (deterministic)",
      unit: doc.choiceModel.kind === "logit" ? "θ per week-equivalent" : "",
      meaning:
        doc.choiceModel.kind === "logit"
          ? "patients weigh options with some randomness; larger θ means closer to always taking the cheapest"
          : "every option patients use costs the same and no cheaper one is left unused",
    },
  ];
  for (const line of doc.serviceLines) {
    const costs: number[] = [];
    const spreads: number[] = [];
    for (const source of doc.sources) {
      const cost = source.outsideCost;
      const value = typeof cost === "number" ? cost : cost && typeof cost === "object" ? cost[line.id] : null;
      if (typeof value === "number") {
        costs.push(value);
        spreads.push(source.outsideSpread ?? 0);
      }
    }
    items.push({
      name: `${line.name ?? line.id}: waiting standard`,
      value: formatNumber(line.standardWeeks, 1),
      unit: "weeks",
      meaning: "the share within the standard counts routine patients whose wait is at most this",
    });
    items.push({
      name: `${line.name ?? line.id}: private-care cost`,
      value: costs.length > 0 ? `${range(costs)} (spread ${range(spreads, 2)})` : "no outside option",
      unit: costs.length > 0 ? "weeks-equivalent" : "",
      meaning:
        costs.length > 0
          ? `${costs.length} of ${doc.sources.length} practices have one; patients whose reservation cost (spread ± around it) is below the public cost leave for private care`
          : "patients never balk on this line",
    });
  }
  if (doc.plan) {
    if (doc.plan.maxUtilisation !== undefined) {
      items.push({ name: "Plan: utilisation ceiling", value: `${formatNumber(doc.plan.maxUtilisation * 100, 0)}%`, unit: "of capacity", meaning: "the constrained plan keeps every site below this" });
    }
    if (doc.plan.maxKm !== undefined) {
      items.push({ name: "Plan: longest journey", value: formatNumber(doc.plan.maxKm, 0), unit: "km", meaning: "the constrained plan sends no patient further" });
    }
  }
  return (
    <dl className={compact ? "space-y-1.5 text-xs" : "space-y-2 text-sm"} data-testid="assumptions">
      {items.map((item) => (
        <div key={item.name}>
          <dt className="font-semibold">{item.name}</dt>
          <dd>
            <span className="tabular-nums">{item.value}</span> {item.unit && <span className="text-ink-soft">{item.unit}</span>}
            {!compact && <span className="block text-xs text-ink-soft">{item.meaning}</span>}
          </dd>
        </div>
      ))}
    </dl>
  );
}
