/**
 * Charts of the outlooks (recharts 3): a site's inflow by priority through the year with the teams
 * it has and needs, and balking against a changed price or capacity. recharts draws nothing on the
 * server, so each chart reserves its height; animation is off so print and tests see the final picture.
 */
import { Bar, CartesianGrid, ComposedChart, Legend, Line, LineChart, ResponsiveContainer, Tooltip, XAxis, YAxis } from "recharts";

export interface PeriodInflowPoint {
  period: string;
  urgent: number;
  routine: number;
  teamsAvailable: number;
  teamsNeeded: number | null;
}

/** Okabe–Ito colours, as the rule charts use: distinct for the common colour-vision deficiencies and in greyscale. */
const URGENT = "#D55E00";
const ROUTINE = "#0072B2";
const AVAILABLE = "#009E73";
const NEEDED = "#000000";

export function PeriodInflowChart({ title, points, height = 280 }: { title: string; points: PeriodInflowPoint[]; height?: number }) {
  return (
    <figure className="m-0 rounded border border-rule bg-white p-3 break-inside-avoid" data-testid={`chart-${title.toLowerCase().replace(/[^a-z0-9]+/g, "-")}`}>
      <figcaption className="mb-2 text-sm font-semibold">
        {title} <span className="font-normal text-ink-soft">(bars: referrals/week by priority; lines: teams)</span>
      </figcaption>
      <div style={{ height }}>
        <ResponsiveContainer width="100%" height="100%">
          <ComposedChart data={points} margin={{ top: 8, right: 12, bottom: 4, left: 4 }}>
            <CartesianGrid strokeDasharray="3 3" stroke="#e5e1d6" />
            <XAxis dataKey="period" tick={{ fontSize: 11 }} />
            <YAxis yAxisId="inflow" tick={{ fontSize: 11 }} width={44} />
            <YAxis yAxisId="teams" orientation="right" allowDecimals={false} tick={{ fontSize: 11 }} width={36} />
            <Tooltip formatter={(value) => (typeof value === "number" ? value.toFixed(1) : String(value))} />
            <Legend wrapperStyle={{ fontSize: 12 }} />
            <Bar yAxisId="inflow" dataKey="urgent" name="Urgent" stackId="inflow" fill={URGENT} isAnimationActive={false} />
            <Bar yAxisId="inflow" dataKey="routine" name="Routine" stackId="inflow" fill={ROUTINE} isAnimationActive={false} />
            <Line yAxisId="teams" dataKey="teamsAvailable" name="Teams on duty" stroke={AVAILABLE} strokeWidth={2} dot={false} isAnimationActive={false} />
            <Line yAxisId="teams" dataKey="teamsNeeded" name="Teams needed" stroke={NEEDED} strokeDasharray="5 3" strokeWidth={2} isAnimationActive={false} />
          </ComposedChart>
        </ResponsiveContainer>
      </div>
    </figure>
  );
}

export interface CurvePoint {
  /** The factor applied (1 = as in the run). */
  factor: number;
  [series: string]: number | null;
}

export function SensitivityChart({
  title,
  xLabel,
  points,
  series,
  height = 240,
}: {
  title: string;
  xLabel: string;
  points: CurvePoint[];
  series: { key: string; label: string; colour: string }[];
  height?: number;
}) {
  return (
    <figure className="m-0 rounded border border-rule bg-white p-3 break-inside-avoid" data-testid={`chart-${title.toLowerCase().replace(/[^a-z0-9]+/g, "-")}`}>
      <figcaption className="mb-2 text-sm font-semibold">
        {title} <span className="font-normal text-ink-soft">(referrals/week balked; x: {xLabel})</span>
      </figcaption>
      <div style={{ height }}>
        <ResponsiveContainer width="100%" height="100%">
          <LineChart data={points} margin={{ top: 8, right: 12, bottom: 4, left: 4 }}>
            <CartesianGrid strokeDasharray="3 3" stroke="#e5e1d6" />
            <XAxis dataKey="factor" type="number" domain={["dataMin", "dataMax"]} tickFormatter={(value: number) => `×${value}`} tick={{ fontSize: 11 }} />
            <YAxis tick={{ fontSize: 11 }} width={44} />
            <Tooltip formatter={(value) => (typeof value === "number" ? value.toFixed(2) : String(value))} labelFormatter={(value) => `×${String(value)}`} />
            <Legend wrapperStyle={{ fontSize: 12 }} />
            {series.map((entry) => (
              <Line key={entry.key} dataKey={entry.key} name={entry.label} stroke={entry.colour} strokeWidth={2} isAnimationActive={false} />
            ))}
          </LineChart>
        </ResponsiveContainer>
      </div>
    </figure>
  );
}
