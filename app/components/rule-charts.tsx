/**
 * Charts of the rule comparison (recharts 3): mean wait and utilisation per site, one bar per rule.
 * recharts draws nothing on the server, so each chart reserves its height to keep the page still;
 * animation is off so what a test or a printout sees is the final picture.
 */
import { Bar, BarChart, CartesianGrid, Legend, ReferenceLine, ResponsiveContainer, Tooltip, XAxis, YAxis } from "recharts";

/** Okabe–Ito colours: distinguishable for the common colour-vision deficiencies. */
export const RULE_COLOURS: Record<string, string> = {
  choice: "#0072B2",
  choiceLogit: "#56B4E9",
  optimum: "#009E73",
  nearest: "#E69F00",
  capacityShare: "#CC79A7",
  plan: "#D55E00",
};

export interface SiteChartRow {
  site: string;
  /** One value per rule key. */
  [rule: string]: number | string;
}

export function SiteBarChart({
  title,
  rows,
  rules,
  ruleLabels,
  unit,
  percent = false,
  warningAt,
  height = 280,
}: {
  title: string;
  rows: SiteChartRow[];
  rules: string[];
  ruleLabels: Record<string, string>;
  unit: string;
  percent?: boolean;
  /** Draws a reference line (e.g. 85% utilisation). */
  warningAt?: number;
  height?: number;
}) {
  const format = (value: number) => (percent ? `${Math.round(value * 100)}%` : value.toFixed(1));
  return (
    <figure className="m-0 rounded border border-rule bg-white p-3" data-testid={`chart-${title.toLowerCase().replace(/[^a-z0-9]+/g, "-")}`}>
      <figcaption className="mb-2 text-sm font-semibold">
        {title} <span className="font-normal text-ink-soft">({unit})</span>
      </figcaption>
      <div style={{ height }}>
        <ResponsiveContainer width="100%" height="100%">
          <BarChart data={rows} margin={{ top: 8, right: 12, bottom: 4, left: 4 }}>
            <CartesianGrid strokeDasharray="3 3" stroke="#e5e1d6" />
            <XAxis dataKey="site" tick={{ fontSize: 11 }} />
            <YAxis tickFormatter={format} tick={{ fontSize: 11 }} width={44} />
            <Tooltip formatter={(value) => (typeof value === "number" ? format(value) : String(value))} />
            <Legend wrapperStyle={{ fontSize: 12 }} />
            {warningAt !== undefined && (
              <ReferenceLine y={warningAt} stroke="#8f2d2d" strokeDasharray="4 3" label={{ value: `${format(warningAt)} warning`, position: "insideTopRight", fontSize: 11, fill: "#8f2d2d" }} />
            )}
            {rules.map((rule) => (
              <Bar key={rule} dataKey={rule} name={ruleLabels[rule] ?? rule} fill={RULE_COLOURS[rule] ?? "#52606d"} isAnimationActive={false} />
            ))}
          </BarChart>
        </ResponsiveContainer>
      </div>
    </figure>
  );
}
