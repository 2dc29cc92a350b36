/**
 * The organisation's own map: land, boundaries, towns and villages as GeoJSON, drawn over a water
 * background instead of any real basemap. One map per organisation; every function filters by it.
 */
import { eq } from "drizzle-orm";
import { z } from "zod";
import { regionMaps } from "~/db/schema";
import { ScenarioInputError } from "~/engine/problem";
import type { Queryable } from "./scenarios.server";

export const REGION_FEATURE_KINDS = ["land", "boundary", "town", "village"] as const;

const position = z.tuple([z.number().min(-180).max(180), z.number().min(-90).max(90)], { error: "must be a [longitude, latitude] pair" });
const ring = z.array(position).min(4, { error: "a ring needs at least four positions (the first repeated last)" });
const geometry = z.discriminatedUnion(
  "type",
  [
    z.object({ type: z.literal("Point"), coordinates: position }),
    z.object({ type: z.literal("Polygon"), coordinates: z.array(ring).min(1) }),
    z.object({ type: z.literal("MultiPolygon"), coordinates: z.array(z.array(ring).min(1)).min(1) }),
  ],
  { error: "must be a Point, Polygon or MultiPolygon geometry" },
);

const featureSchema = z.object({
  type: z.literal("Feature"),
  properties: z.looseObject({
    kind: z.enum(REGION_FEATURE_KINDS, { error: `must be one of ${REGION_FEATURE_KINDS.join(", ")}` }),
    name: z.string().min(1, { error: "must not be empty" }),
  }),
  geometry,
});

export const regionMapSchema = z.object({
  type: z.literal("FeatureCollection", { error: 'must be "FeatureCollection"' }),
  features: z.array(featureSchema),
});

export type RegionMap = z.infer<typeof regionMapSchema>;
export type RegionFeature = RegionMap["features"][number];

/** Checks a GeoJSON document; throws `ScenarioInputError` naming each offending path (e.g. features[3].properties.kind). */
export function parseRegionMap(input: unknown): RegionMap {
  const parsed = regionMapSchema.safeParse(input);
  if (!parsed.success) {
    throw new ScenarioInputError(
      parsed.error.issues.map((issue) => ({
        path: issue.path.map((key) => (typeof key === "number" ? `[${key}]` : `.${String(key)}`)).join("").replace(/^\./, "") || "(the map)",
        message: issue.message,
      })),
    );
  }
  return parsed.data;
}

export async function getRegionMap(db: Queryable, organisationId: number): Promise<RegionMap | null> {
  const [row] = await db.select({ geojson: regionMaps.geojson }).from(regionMaps).where(eq(regionMaps.organisationId, organisationId));
  return row ? (row.geojson as RegionMap) : null;
}

/** Validates and stores (or replaces) the organisation's map. */
export async function saveRegionMap(db: Queryable, organisationId: number, input: unknown): Promise<RegionMap> {
  const map = parseRegionMap(input);
  await db
    .insert(regionMaps)
    .values({ organisationId, geojson: map })
    .onConflictDoUpdate({ target: regionMaps.organisationId, set: { geojson: map } });
  return map;
}
