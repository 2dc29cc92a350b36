/**
 * Edits of an exchange-format scenario document as the workspace makes them: a table cell, a site
 * moved or added on the map, an assumption, and the what-if adjustments (km per week, private
 * cost, extra teams). Pure and immutable — each edit returns a new document — so the browser can
 * build the next document, show it at once, and send it whole to the API, which validates it again.
 */
import type { Scenario } from "~/engine/scenario";

/** A scenario document with Equilibra's two optional extensions. */
export type ScenarioDoc = Scenario & { description?: string; dataDate?: string };

type Source = Scenario["sources"][number];
type Provider = Scenario["providers"][number];
type SiteLine = Provider["lines"][string];

function copy(doc: ScenarioDoc): ScenarioDoc {
  return structuredClone(doc);
}

function findSource(doc: ScenarioDoc, id: string): Source {
  const source = doc.sources.find((candidate) => candidate.id === id);
  if (!source) throw new Error(`No practice "${id}" in the scenario.`);
  return source;
}

function findSite(doc: ScenarioDoc, id: string): Provider {
  const site = doc.providers.find((candidate) => candidate.id === id);
  if (!site) throw new Error(`No site "${id}" in the scenario.`);
  return site;
}

/** The outside cost of a practice on one line, whichever form the document uses (number, map or none). */
export function outsideCostOf(source: Source, lineId: string): number | null {
  const cost = source.outsideCost;
  if (cost === null || cost === undefined) return null;
  if (typeof cost === "number") return cost;
  return cost[lineId] ?? null;
}

export type SourceField = "name" | "lat" | "lon" | "outsideSpread" | "deprivationDecile" | "population";

export function setSourceField(doc: ScenarioDoc, sourceId: string, field: SourceField, value: string | number | null): ScenarioDoc {
  const next = copy(doc);
  const source = findSource(next, sourceId) as Record<string, unknown>;
  if (value === null || value === "") delete source[field];
  else source[field] = value;
  if (field === "outsideSpread" && (value === null || value === "")) source.outsideSpread = 0;
  return next;
}

export function setSourceDemand(doc: ScenarioDoc, sourceId: string, lineId: string, value: number | null): ScenarioDoc {
  const next = copy(doc);
  const source = findSource(next, sourceId);
  if (value === null) delete source.demand[lineId];
  else source.demand[lineId] = value;
  return next;
}

/** Sets one line's outside cost, turning a single all-lines number into a per-line map first. */
export function setSourceOutsideCost(doc: ScenarioDoc, sourceId: string, lineId: string, value: number | null): ScenarioDoc {
  const next = copy(doc);
  const source = findSource(next, sourceId);
  const lines = next.serviceLines.map((line) => line.id);
  const map: Record<string, number> = {};
  for (const id of lines) {
    const current = outsideCostOf(source, id);
    if (current !== null) map[id] = current;
  }
  if (value === null) delete map[lineId];
  else map[lineId] = value;
  source.outsideCost = Object.keys(map).length > 0 ? map : undefined;
  if (source.outsideCost === undefined) delete source.outsideCost;
  return next;
}

export type SiteField = "name" | "lat" | "lon" | "sector";

export function setSiteField(doc: ScenarioDoc, siteId: string, field: SiteField, value: string | number): ScenarioDoc {
  const next = copy(doc);
  (findSite(next, siteId) as Record<string, unknown>)[field] = value;
  return next;
}

export function moveSite(doc: ScenarioDoc, siteId: string, lat: number, lon: number): ScenarioDoc {
  const next = copy(doc);
  const site = findSite(next, siteId);
  site.lat = lat;
  site.lon = lon;
  return next;
}

/** The next free code in the `ZZS` style the scenario already uses (or `NEW1`, `NEW2`, …). */
export function nextSiteId(doc: ScenarioDoc): string {
  const taken = new Set(doc.providers.map((provider) => provider.id));
  const pattern = /^(.*?)(\d+)$/.exec(doc.providers[0]?.id ?? "");
  const prefix = pattern ? pattern[1] : "NEW";
  for (let n = doc.providers.length + 1; ; n++) {
    const id = `${prefix}${n}`;
    if (!taken.has(id)) return id;
  }
}

/** Adds a public site at a point, offering the given lines with the given capacity (none by default). */
export function addSite(doc: ScenarioDoc, at: { lat: number; lon: number }, lines: Record<string, SiteLine> = {}): { doc: ScenarioDoc; id: string } {
  const next = copy(doc);
  const id = nextSiteId(doc);
  next.providers.push({ id, name: `New site ${id}`, lat: at.lat, lon: at.lon, sector: "public", lines: structuredClone(lines) });
  return { doc: next, id };
}

export function removeSite(doc: ScenarioDoc, siteId: string): ScenarioDoc {
  const next = copy(doc);
  next.providers = next.providers.filter((provider) => provider.id !== siteId);
  if (next.travelKm) for (const row of Object.values(next.travelKm)) delete row[siteId];
  return next;
}

export type SiteLineField = "teams" | "ratePerTeam" | "serviceCv" | "minWeekly" | "maxWeekly";

/** Sets a capacity figure; a line the site does not offer yet is added with 1 team at the given rate. */
export function setSiteLine(doc: ScenarioDoc, siteId: string, lineId: string, field: SiteLineField, value: number | null): ScenarioDoc {
  const next = copy(doc);
  const site = findSite(next, siteId);
  const line = (site.lines[lineId] ??= { teams: 1, ratePerTeam: 1, serviceCv: 1 }) as Record<string, unknown>;
  if (value === null) {
    if (field === "minWeekly" || field === "maxWeekly") delete line[field];
    else if (field === "serviceCv") line.serviceCv = 1;
  } else line[field] = value;
  return next;
}

export function removeSiteLine(doc: ScenarioDoc, siteId: string, lineId: string): ScenarioDoc {
  const next = copy(doc);
  delete findSite(next, siteId).lines[lineId];
  return next;
}

export function setServiceLine(doc: ScenarioDoc, lineId: string, field: "name" | "standardWeeks", value: string | number): ScenarioDoc {
  const next = copy(doc);
  const line = next.serviceLines.find((candidate) => candidate.id === lineId);
  if (!line) throw new Error(`No service line "${lineId}" in the scenario.`);
  (line as Record<string, unknown>)[field] = value;
  return next;
}

export interface Assumptions {
  kmPerWeek: number;
  circuity: number;
  choiceModel: Scenario["choiceModel"];
  plan: Scenario["plan"];
  dataDate?: string;
  description?: string;
}

export function setAssumptions(doc: ScenarioDoc, assumptions: Partial<Assumptions>): ScenarioDoc {
  const next = copy(doc);
  if (assumptions.kmPerWeek !== undefined) next.kmPerWeek = assumptions.kmPerWeek;
  if (assumptions.circuity !== undefined) next.circuity = assumptions.circuity;
  if (assumptions.choiceModel !== undefined) next.choiceModel = assumptions.choiceModel;
  if (assumptions.plan !== undefined) {
    if (assumptions.plan === null || Object.keys(assumptions.plan).length === 0) delete next.plan;
    else next.plan = assumptions.plan;
  }
  if (assumptions.dataDate !== undefined) next.dataDate = assumptions.dataDate;
  if (assumptions.description !== undefined) next.description = assumptions.description;
  return next;
}

export interface WhatIf {
  /** κ: km a patient would travel to wait one week less. */
  kmPerWeek: number;
  /** Multiplies every practice's outside (private care) cost; 1 = as entered. */
  outsideCostFactor: number;
  /** Teams added (or removed, if negative) at one site on one line. */
  extraTeams: { siteId: string; lineId: string; teams: number } | null;
}

export function baselineWhatIf(doc: ScenarioDoc): WhatIf {
  return { kmPerWeek: doc.kmPerWeek, outsideCostFactor: 1, extraTeams: null };
}

/** The document a what-if describes; the original is left untouched. */
export function applyWhatIf(doc: ScenarioDoc, whatIf: WhatIf): ScenarioDoc {
  const next = copy(doc);
  next.kmPerWeek = whatIf.kmPerWeek;
  if (whatIf.outsideCostFactor !== 1) {
    for (const source of next.sources) {
      const cost = source.outsideCost;
      if (typeof cost === "number") source.outsideCost = cost * whatIf.outsideCostFactor;
      else if (cost && typeof cost === "object") {
        for (const [lineId, value] of Object.entries(cost)) if (typeof value === "number") cost[lineId] = value * whatIf.outsideCostFactor;
      }
    }
  }
  const extra = whatIf.extraTeams;
  if (extra && extra.teams !== 0) {
    const site = findSite(next, extra.siteId);
    const line = site.lines[extra.lineId];
    if (line?.stages) {
      // With a pathway the bottleneck is a stage: extra teams go to the entry stage.
      const entry = line.stages.find((stage) => stage.id === (line.entry ?? line.stages?.[0].id)) ?? line.stages[0];
      entry.teams = Math.max(1, entry.teams + extra.teams);
    } else if (line) {
      line.teams = Math.max(1, (line.teams ?? 1) + extra.teams);
    } else if (extra.teams > 0) {
      // A line the site does not offer: open it at the line's typical rate elsewhere.
      const rates = next.providers.map((provider) => provider.lines[extra.lineId]?.ratePerTeam).filter((rate): rate is number => typeof rate === "number");
      site.lines[extra.lineId] = { teams: extra.teams, ratePerTeam: rates.length > 0 ? rates.reduce((a, b) => a + b, 0) / rates.length : 1, serviceCv: 1 };
    }
  }
  return next;
}

/** Demand per practice over the chosen lines (all when none is chosen), referrals/week. */
export function practiceDemand(source: Source, lineId: string | null): number {
  if (lineId) return source.demand[lineId] ?? 0;
  return Object.values(source.demand).reduce((total, value) => total + value, 0);
}
