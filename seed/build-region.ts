/**
 * Draws the demo region's map as a GeoJSON FeatureCollection from the layout: the island's land,
 * the commissioning body's boundary, town outlines with label points, and villages. Every feature
 * carries `kind` (land | boundary | town | village) and `name`. Deterministic: the same seeds give
 * the same file, and a test checks that the committed file is exactly what this produces.
 */
import {
  clipToConvex,
  closedRing,
  distanceKm,
  type Km,
  pointInPolygon,
  rayToRing,
  ringArea,
  roughenRing,
  seededRandom,
  toLonLat,
} from "./geometry";
import {
  COMMISSIONER_NAME,
  ISLAND_NAME,
  ISLAND_OUTLINE,
  NEIGHBOUR_TOWNS,
  REGION_CLIP,
  SITES,
  TOWNS,
  VILLAGES,
  VILLAGES_POPULATION,
} from "./layout";

export const COASTLINE_SEED = 20260417;
const COASTLINE_PASSES = 5;
const COASTLINE_ROUGHNESS = 0.13;
/** Nothing built stands closer to the sea than this (km). */
const MIN_DISTANCE_FROM_COAST_KM = 0.8;
const TOWN_OUTLINE_VERTICES = 36;

type Geometry = { type: "Point"; coordinates: [number, number] } | { type: "Polygon"; coordinates: [number, number][][] };
export interface RegionFeature {
  type: "Feature";
  properties: { kind: "land" | "boundary" | "town" | "village"; name: string } & Record<string, string | number | boolean>;
  geometry: Geometry;
}
export interface RegionFeatureCollection {
  type: "FeatureCollection";
  features: RegionFeature[];
}

export function islandRing(): Km[] {
  return roughenRing(ISLAND_OUTLINE, COASTLINE_PASSES, COASTLINE_ROUGHNESS, seededRandom(COASTLINE_SEED));
}

/** Smallest distance from a point to the ring's edges (km). */
function distanceToRing(point: Km, ring: readonly Km[]): number {
  let nearest = Infinity;
  for (let i = 0; i < ring.length; i++) {
    const a = ring[i];
    const b = ring[(i + 1) % ring.length];
    const ex = b[0] - a[0];
    const ey = b[1] - a[1];
    const t = Math.max(0, Math.min(1, ((point[0] - a[0]) * ex + (point[1] - a[1]) * ey) / (ex * ex + ey * ey)));
    nearest = Math.min(nearest, distanceKm(point, [a[0] + t * ex, a[1] + t * ey]));
  }
  return nearest;
}

/** A rounded, slightly irregular outline that stops short of the coast (coastal towns hug it). */
function townOutline(centre: Km, radiusKm: number, coast: readonly Km[], seed: number): Km[] {
  const random = seededRandom(seed);
  const phase2 = random() * 2 * Math.PI;
  const phase3 = random() * 2 * Math.PI;
  const ring: Km[] = [];
  for (let k = 0; k < TOWN_OUTLINE_VERTICES; k++) {
    const angle = (2 * Math.PI * k) / TOWN_OUTLINE_VERTICES;
    const wobble = 1 + 0.14 * Math.sin(2 * angle + phase2) + 0.09 * Math.sin(3 * angle + phase3) + 0.06 * (random() - 0.5);
    const reach = Math.min(radiusKm * wobble, rayToRing(centre, angle, coast) - 0.3);
    ring.push([centre[0] + reach * Math.cos(angle), centre[1] + reach * Math.sin(angle)]);
  }
  return ring;
}

/** Every place that must stand on land, with what it is, for the generator's own check and the tests. */
export function placesOnLand(): { what: string; at: Km }[] {
  const places: { what: string; at: Km }[] = [];
  for (const town of TOWNS) {
    places.push({ what: `town ${town.name}`, at: town.centre });
    for (const practice of town.practices) {
      places.push({ what: `practice ${practice.code}`, at: [town.centre[0] + practice.offset[0], town.centre[1] + practice.offset[1]] });
    }
  }
  for (const village of VILLAGES) places.push({ what: `village ${village.name}`, at: village.at });
  for (const town of NEIGHBOUR_TOWNS) places.push({ what: `town ${town.name}`, at: town.centre });
  for (const site of SITES) places.push({ what: `site ${site.code}`, at: site.at });
  return places;
}

export function buildRegion(): RegionFeatureCollection {
  const island = islandRing();
  for (const place of placesOnLand()) {
    if (!pointInPolygon(place.at, island) || distanceToRing(place.at, island) < MIN_DISTANCE_FROM_COAST_KM) {
      throw new Error(`The coastline leaves ${place.what} at sea or on the shore: pick another COASTLINE_SEED.`);
    }
  }
  const region = clipToConvex(island, REGION_CLIP);
  const regionPopulation = TOWNS.reduce((sum, town) => sum + town.population, 0) + VILLAGES_POPULATION;
  const features: RegionFeature[] = [
    {
      type: "Feature",
      properties: { kind: "land", name: ISLAND_NAME, areaKm2: Math.round(ringArea(island)) },
      geometry: { type: "Polygon", coordinates: [closedRing(island)] },
    },
    {
      type: "Feature",
      properties: { kind: "boundary", name: COMMISSIONER_NAME, areaKm2: Math.round(ringArea(region)), population: regionPopulation },
      geometry: { type: "Polygon", coordinates: [closedRing(region)] },
    },
  ];
  TOWNS.forEach((town, index) => {
    const properties = { kind: "town" as const, name: town.name, character: town.character, population: town.population, inRegion: true };
    features.push(
      { type: "Feature", properties, geometry: { type: "Polygon", coordinates: [closedRing(townOutline(town.centre, town.radiusKm, island, 100 + index))] } },
      { type: "Feature", properties: { ...properties, label: true }, geometry: { type: "Point", coordinates: toLonLat(town.centre) } },
    );
  });
  NEIGHBOUR_TOWNS.forEach((town, index) => {
    const properties = { kind: "town" as const, name: town.name, note: town.note, inRegion: false };
    features.push(
      { type: "Feature", properties, geometry: { type: "Polygon", coordinates: [closedRing(townOutline(town.centre, town.radiusKm, island, 200 + index))] } },
      { type: "Feature", properties: { ...properties, label: true }, geometry: { type: "Point", coordinates: toLonLat(town.centre) } },
    );
  });
  for (const village of VILLAGES) {
    features.push({
      type: "Feature",
      properties: { kind: "village", name: village.name, hasPractice: Boolean(village.practice) },
      geometry: { type: "Point", coordinates: toLonLat(village.at) },
    });
  }
  return { type: "FeatureCollection", features };
}

/** One feature per line: diffs stay readable without a number on every line. */
export function formatRegion(collection: RegionFeatureCollection): string {
  return `{"type":"FeatureCollection","features":[\n${collection.features.map((feature) => JSON.stringify(feature)).join(",\n")}\n]}\n`;
}
