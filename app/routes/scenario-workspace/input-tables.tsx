/**
 * The scenario's inputs as tables — practices (demand and private-care cost per line), sites,
 * capacities per site and line, service lines — each sortable and filterable, with totals and
 * units, and editable in place for planners. An accepted edit hands the whole new document to
 * `onChange`; the page sends it to the API, which validates it again before storing.
 */
import { useState } from "react";
import { z } from "zod";
import { DataTable, formatNumber, type DataColumn } from "~/components/data-table";
import {
  outsideCostOf,
  removeSiteLine,
  setServiceLine,
  setSiteField,
  setSiteLine,
  setSourceDemand,
  setSourceField,
  setSourceOutsideCost,
  type ScenarioDoc,
  type SiteLineField,
} from "~/models/scenario-document";

type Source = ScenarioDoc["sources"][number];
type Provider = ScenarioDoc["providers"][number];

/** A typed cell: empty → null when `optional`, else a finite number passing `ok`. */
function numberEdit(expectation: string, ok: (value: number) => boolean, optional = false): z.ZodType<number | null, string> {
  return z.string().transform((raw, ctx) => {
    const text = raw.trim();
    if (text === "") {
      if (optional) return null;
      ctx.addIssue({ code: "custom", message: `is required: ${expectation}` });
      return z.NEVER;
    }
    const value = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text) ? Number(text) : Number.NaN;
    if (!Number.isFinite(value) || !ok(value)) {
      ctx.addIssue({ code: "custom", message: `must be ${expectation}` });
      return z.NEVER;
    }
    return value;
  });
}

const textEdit = z.string().transform((raw, ctx) => {
  const text = raw.trim();
  if (text === "") {
    ctx.addIssue({ code: "custom", message: "must not be empty" });
    return z.NEVER;
  }
  return text;
});

const demandEdit = numberEdit("a number ≥ 0 (referrals/week)", (v) => v >= 0);
const outsideCostEdit = numberEdit("a number > 0 (weeks-equivalent), or empty for no outside option", (v) => v > 0, true);
const spreadEdit = numberEdit("a spread in [0, 1)", (v) => v >= 0 && v < 1);
const decileEdit = numberEdit("a whole number from 1 to 10, or empty", (v) => Number.isInteger(v) && v >= 1 && v <= 10, true);
const populationEdit = numberEdit("a whole number of people ≥ 0, or empty", (v) => Number.isInteger(v) && v >= 0, true);
const teamsEdit = numberEdit("a whole number of teams ≥ 1", (v) => Number.isInteger(v) && v >= 1);
const rateEdit = numberEdit("a number > 0 (patients per team per week)", (v) => v > 0);
const cvEdit = numberEdit("a coefficient of variation ≥ 0 (1 = exponential)", (v) => v >= 0, true);
const volumeEdit = numberEdit("a number ≥ 0 (referrals/week), or empty for none", (v) => v >= 0, true);
const standardEdit = numberEdit("a number of weeks > 0", (v) => v > 0);
const sectorEdit = z.string().transform((raw, ctx) => {
  const text = raw.trim().toLowerCase();
  if (text === "public" || text === "independent") return text;
  ctx.addIssue({ code: "custom", message: 'must be "public" or "independent"' });
  return z.NEVER;
});

type Change = (doc: ScenarioDoc) => void;

export function PracticesTable({ doc, editable, onChange }: { doc: ScenarioDoc; editable: boolean; onChange: Change }) {
  const columns: DataColumn<Source>[] = [
    { id: "id", header: "Code", value: (row) => row.id },
    { id: "name", header: "Practice", value: (row) => row.name ?? "", edit: textEdit },
    { id: "deprivationDecile", header: "Deprivation", unit: "decile (1 = most)", numeric: true, value: (row) => row.deprivationDecile ?? null, edit: decileEdit, format: (v) => (v == null ? "–" : String(v)) },
    { id: "population", header: "Population", unit: "people", numeric: true, value: (row) => row.population ?? null, total: "sum", edit: populationEdit, format: (v) => (typeof v === "number" ? formatNumber(v, 0) : "–") },
    { id: "outsideSpread", header: "Cost spread", unit: "share, 0–1", numeric: true, value: (row) => row.outsideSpread, edit: spreadEdit },
  ];
  for (const line of doc.serviceLines) {
    columns.push({ id: `demand.${line.id}`, header: `Demand ${line.name ?? line.id}`, unit: "referrals/week", numeric: true, value: (row) => row.demand[line.id] ?? 0, total: "sum", edit: demandEdit });
  }
  for (const line of doc.serviceLines) {
    columns.push({ id: `outsideCost.${line.id}`, header: `Private cost ${line.name ?? line.id}`, unit: "weeks-equivalent", numeric: true, value: (row) => outsideCostOf(row, line.id), total: "mean", edit: outsideCostEdit });
  }
  return (
    <DataTable
      label="Practices"
      rows={doc.sources}
      columns={columns}
      rowId={(row) => row.id}
      editable={editable}
      onEdit={(rowId, columnId, value) => {
        const [field, lineId] = columnId.split(".");
        if (field === "demand") onChange(setSourceDemand(doc, rowId, lineId, value as number));
        else if (field === "outsideCost") onChange(setSourceOutsideCost(doc, rowId, lineId, value as number | null));
        else onChange(setSourceField(doc, rowId, field as "name" | "deprivationDecile" | "population" | "outsideSpread", value));
      }}
    />
  );
}

function siteCapacity(site: Provider): number {
  return Object.values(site.lines).reduce((total, line) => total + (line.teams ?? 0) * (line.ratePerTeam ?? 0), 0);
}

export function SitesTable({ doc, editable, onChange, onRemove }: { doc: ScenarioDoc; editable: boolean; onChange: Change; onRemove?: (siteId: string) => void }) {
  const columns: DataColumn<Provider>[] = [
    { id: "id", header: "Code", value: (row) => row.id },
    { id: "name", header: "Site", value: (row) => row.name ?? "", edit: textEdit },
    { id: "sector", header: "Sector", value: (row) => row.sector, edit: sectorEdit },
    { id: "lat", header: "Latitude", unit: "degrees", numeric: true, value: (row) => row.lat, format: (v) => (typeof v === "number" ? v.toFixed(4) : "–") },
    { id: "lon", header: "Longitude", unit: "degrees", numeric: true, value: (row) => row.lon, format: (v) => (typeof v === "number" ? v.toFixed(4) : "–") },
    { id: "lines", header: "Lines offered", value: (row) => Object.keys(row.lines).join(", ") || "none yet" },
    { id: "capacity", header: "Capacity", unit: "patients/week", numeric: true, value: siteCapacity, total: "sum", format: (v) => (typeof v === "number" ? formatNumber(v, 1) : "–") },
  ];
  return (
    <DataTable
      label="Sites"
      rows={doc.providers}
      columns={columns}
      rowId={(row) => row.id}
      editable={editable}
      onEdit={(rowId, columnId, value) => onChange(setSiteField(doc, rowId, columnId as "name" | "sector", value as string))}
      rowActions={
        editable && onRemove
          ? (row) => (
              <button type="button" className="text-xs text-bad underline" onClick={() => onRemove(row.id)} aria-label={`Remove site ${row.id}`}>
                Remove
              </button>
            )
          : undefined
      }
    />
  );
}

interface CapacityRow {
  key: string;
  siteId: string;
  siteName: string;
  lineId: string;
  teams: number | null;
  ratePerTeam: number | null;
  serviceCv: number;
  minWeekly: number | null;
  maxWeekly: number | null;
  staged: boolean;
}

export function CapacitiesTable({ doc, editable, onChange }: { doc: ScenarioDoc; editable: boolean; onChange: Change }) {
  const rows: CapacityRow[] = doc.providers.flatMap((site) =>
    Object.entries(site.lines).map(([lineId, line]) => ({
      key: `${site.id}/${lineId}`,
      siteId: site.id,
      siteName: site.name ?? site.id,
      lineId,
      teams: line.teams ?? null,
      ratePerTeam: line.ratePerTeam ?? null,
      serviceCv: line.serviceCv,
      minWeekly: line.minWeekly ?? null,
      maxWeekly: line.maxWeekly ?? null,
      staged: Boolean(line.stages),
    })),
  );
  const columns: DataColumn<CapacityRow>[] = [
    { id: "site", header: "Site", value: (row) => `${row.siteName} (${row.siteId})` },
    { id: "line", header: "Line", value: (row) => row.lineId },
    { id: "teams", header: "Teams", unit: "servers", numeric: true, value: (row) => row.teams, total: "sum", edit: teamsEdit, format: (v, row) => (row.staged ? `${v ?? "–"} (pathway)` : v == null ? "–" : String(v)) },
    { id: "ratePerTeam", header: "Rate per team", unit: "patients/week", numeric: true, value: (row) => row.ratePerTeam, edit: rateEdit },
    { id: "capacity", header: "Capacity", unit: "patients/week", numeric: true, value: (row) => (row.teams ?? 0) * (row.ratePerTeam ?? 0), total: "sum" },
    { id: "serviceCv", header: "Service-time CV", unit: "1 = exponential", numeric: true, value: (row) => row.serviceCv, edit: cvEdit },
    { id: "minWeekly", header: "Contract minimum", unit: "referrals/week", numeric: true, value: (row) => row.minWeekly, edit: volumeEdit },
    { id: "maxWeekly", header: "Contract maximum", unit: "referrals/week", numeric: true, value: (row) => row.maxWeekly, edit: volumeEdit },
  ];
  return (
    <div className="space-y-3">
      <DataTable
        label="Capacities"
        rows={rows}
        columns={columns}
        rowId={(row) => row.key}
        editable={editable}
        onEdit={(rowId, columnId, value) => {
          const [siteId, lineId] = rowId.split("/");
          onChange(setSiteLine(doc, siteId, lineId, columnId as SiteLineField, value as number | null));
        }}
        rowActions={
          editable
            ? (row) => (
                <button type="button" className="text-xs text-bad underline" onClick={() => onChange(removeSiteLine(doc, row.siteId, row.lineId))} aria-label={`Remove ${row.lineId} at ${row.siteId}`}>
                  Remove
                </button>
              )
            : undefined
        }
      />
      {editable && <AddCapacityForm doc={doc} onChange={onChange} />}
    </div>
  );
}

function AddCapacityForm({ doc, onChange }: { doc: ScenarioDoc; onChange: Change }) {
  const [siteId, setSiteId] = useState(doc.providers[0]?.id ?? "");
  const [lineId, setLineId] = useState(doc.serviceLines[0]?.id ?? "");
  const [teams, setTeams] = useState("1");
  const [rate, setRate] = useState("5");
  const [error, setError] = useState<string | null>(null);
  return (
    <form
      className="flex flex-wrap items-end gap-2 text-sm"
      aria-label="Add capacity"
      onSubmit={(event) => {
        event.preventDefault();
        const parsedTeams = teamsEdit.safeParse(teams);
        const parsedRate = rateEdit.safeParse(rate);
        if (!parsedTeams.success) return setError(`Teams ${parsedTeams.error.issues[0].message}`);
        if (!parsedRate.success) return setError(`Rate per team ${parsedRate.error.issues[0].message}`);
        setError(null);
        let next = setSiteLine(doc, siteId, lineId, "teams", parsedTeams.data);
        next = setSiteLine(next, siteId, lineId, "ratePerTeam", parsedRate.data);
        onChange(next);
      }}
    >
      <label>
        Site
        <select value={siteId} onChange={(event) => setSiteId(event.target.value)} className="ml-1 rounded border border-rule px-1 py-0.5">
          {doc.providers.map((site) => (
            <option key={site.id} value={site.id}>
              {site.name ?? site.id} ({site.id})
            </option>
          ))}
        </select>
      </label>
      <label>
        Line
        <select value={lineId} onChange={(event) => setLineId(event.target.value)} className="ml-1 rounded border border-rule px-1 py-0.5">
          {doc.serviceLines.map((line) => (
            <option key={line.id} value={line.id}>
              {line.name ?? line.id}
            </option>
          ))}
        </select>
      </label>
      <label>
        Teams
        <input value={teams} onChange={(event) => setTeams(event.target.value)} className="ml-1 w-14 rounded border border-rule px-1 py-0.5 text-right" />
      </label>
      <label>
        Rate per team <span className="text-ink-soft">(patients/week)</span>
        <input value={rate} onChange={(event) => setRate(event.target.value)} className="ml-1 w-16 rounded border border-rule px-1 py-0.5 text-right" />
      </label>
      <button type="submit" className="rounded border border-rule px-3 py-1 hover:bg-accent-soft">
        Set capacity
      </button>
      {error && (
        <span role="alert" className="text-bad">
          {error}
        </span>
      )}
    </form>
  );
}

interface LineRow {
  id: string;
  name: string;
  standardWeeks: number;
  demand: number;
  capacity: number;
}

export function ServiceLinesTable({ doc, editable, onChange }: { doc: ScenarioDoc; editable: boolean; onChange: Change }) {
  const rows: LineRow[] = doc.serviceLines.map((line) => ({
    id: line.id,
    name: line.name ?? line.id,
    standardWeeks: line.standardWeeks,
    demand: doc.sources.reduce((total, source) => total + (source.demand[line.id] ?? 0), 0),
    capacity: doc.providers.reduce((total, site) => {
      const siteLine = site.lines[line.id];
      return total + (siteLine ? (siteLine.teams ?? 0) * (siteLine.ratePerTeam ?? 0) : 0);
    }, 0),
  }));
  const columns: DataColumn<LineRow>[] = [
    { id: "id", header: "Code", value: (row) => row.id },
    { id: "name", header: "Service line", value: (row) => row.name, edit: textEdit },
    { id: "standardWeeks", header: "Waiting standard", unit: "weeks", numeric: true, value: (row) => row.standardWeeks, edit: standardEdit },
    { id: "demand", header: "Demand", unit: "referrals/week", numeric: true, value: (row) => row.demand, total: "sum", format: (v) => (typeof v === "number" ? formatNumber(v, 1) : "–") },
    { id: "capacity", header: "Capacity", unit: "patients/week", numeric: true, value: (row) => row.capacity, total: "sum", format: (v) => (typeof v === "number" ? formatNumber(v, 1) : "–") },
    {
      id: "load",
      header: "Demand ÷ capacity",
      unit: "share",
      numeric: true,
      value: (row) => (row.capacity > 0 ? row.demand / row.capacity : null),
      format: (v) => (typeof v === "number" ? `${(v * 100).toFixed(0)}%` : "no capacity"),
      tone: (v) => (typeof v !== "number" || v >= 0.85 ? "warning" : undefined),
    },
  ];
  return (
    <DataTable
      label="Service lines"
      rows={rows}
      columns={columns}
      rowId={(row) => row.id}
      editable={editable}
      onEdit={(rowId, columnId, value) => onChange(setServiceLine(doc, rowId, columnId as "name" | "standardWeeks", value as string | number))}
    />
  );
}
