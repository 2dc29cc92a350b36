/**
 * The WebGL part of the region map (maplibre-gl 6 through react-map-gl). Loaded lazily in the
 * browser only: maplibre needs `window`, and its worker must be served from our own bundle
 * (`setWorkerUrl` with Vite's `?url` import) or a production build fails with "Worker failed to load".
 *
 * No tile server and no glyph server: the style is a water background plus the region's own
 * GeoJSON, and labels are drawn with the shipped Noto Sans through the style's `font-faces`.
 */
import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import * as maplibregl from "maplibre-gl";
import type { StyleSpecification } from "maplibre-gl";
import workerUrl from "maplibre-gl/dist/maplibre-gl-worker.mjs?url";
import notoSansUrl from "@fontsource/noto-sans/files/noto-sans-latin-400-normal.woff2?url";
import "maplibre-gl/dist/maplibre-gl.css";
import MapView, { Layer, Marker, Source, type MapLayerMouseEvent, type MapRef, type MarkerDragEvent } from "react-map-gl/maplibre";
import type { Feature, FeatureCollection, LineString, Point } from "geojson";
import { dataBounds, SHADE_COLOURS, SiteGlyph, utilisationColour, type RegionMapProps } from "./region-map";

maplibregl.setWorkerUrl(workerUrl);

const WATER = "#cfe3ea";
const LAND = "#f3efe4";
const TOWN = "#e2dccb";
const BOUNDARY = "#8a8272";
const FONT = "Noto Sans Regular";

function baseStyle(): StyleSpecification {
  return {
    version: 8,
    // The browser loads the font file itself (CSS Font Loading API), so an absolute URL is safest.
    "font-faces": { [FONT]: new URL(notoSansUrl, window.location.href).href },
    sources: {},
    layers: [{ id: "water", type: "background", paint: { "background-color": WATER } }],
  };
}

function shadeColour(value: number | null | undefined, domain: [number, number] | undefined): string {
  if (value === null || value === undefined || !domain) return "#0b5e6b";
  const [low, high] = domain;
  const t = high > low ? Math.min(1, Math.max(0, (value - low) / (high - low))) : 0;
  return SHADE_COLOURS[Math.min(SHADE_COLOURS.length - 1, Math.floor(t * SHADE_COLOURS.length))];
}

export default function RegionMapCanvas({
  region,
  practices,
  sites,
  flows,
  shading,
  editable = false,
  onMoveSite,
  onAddSite,
  onLoaded,
}: RegionMapProps & { onLoaded: () => void }) {
  const mapRef = useRef<MapRef>(null);
  const [adding, setAdding] = useState(false);
  const style = useMemo(baseStyle, []);
  const bounds = useMemo(() => dataBounds(practices, sites) ?? regionBounds(region), [practices, sites, region]);

  const practiceFeatures = useMemo<FeatureCollection<Point>>(() => {
    const maxDemand = Math.max(1e-9, ...practices.map((practice) => practice.demand));
    return {
      type: "FeatureCollection",
      features: practices.map((practice) => ({
        type: "Feature",
        id: practice.id,
        geometry: { type: "Point", coordinates: [practice.lon, practice.lat] },
        properties: {
          id: practice.id,
          name: practice.name ?? practice.id,
          // Area proportional to demand.
          radius: 3 + 11 * Math.sqrt(Math.max(0, practice.demand) / maxDemand),
          colour: shadeColour(practice.shade, shading?.domain),
        },
      })),
    };
  }, [practices, shading]);

  const flowFeatures = useMemo<FeatureCollection<LineString>>(() => {
    const at = new Map<string, [number, number]>();
    for (const practice of practices) at.set(`p:${practice.id}`, [practice.lon, practice.lat]);
    for (const site of sites) at.set(`s:${site.id}`, [site.lon, site.lat]);
    const maxValue = Math.max(1e-9, ...(flows ?? []).map((flow) => flow.value));
    const features: Feature<LineString>[] = [];
    for (const flow of flows ?? []) {
      const from = at.get(`p:${flow.sourceId}`);
      const to = at.get(`s:${flow.siteId}`);
      // Flows under 1% of the largest would only clutter the map.
      if (!from || !to || flow.value < maxValue * 0.01) continue;
      features.push({
        type: "Feature",
        geometry: { type: "LineString", coordinates: [from, to] },
        properties: { width: 0.75 + 7.25 * (flow.value / maxValue), value: flow.value },
      });
    }
    return { type: "FeatureCollection", features };
  }, [flows, practices, sites]);

  // Refit only when something lies outside the view (a new region or import), not after every drag.
  useEffect(() => {
    const map = mapRef.current;
    if (!map || !bounds) return;
    const view = map.getBounds();
    const inside = view.contains([bounds[0], bounds[1]]) && view.contains([bounds[2], bounds[3]]);
    if (!inside) map.fitBounds(bounds, { padding: 40, duration: 0 });
  }, [bounds]);

  const handleClick = useCallback(
    (event: MapLayerMouseEvent) => {
      if (!adding || !onAddSite) return;
      setAdding(false);
      onAddSite(round(event.lngLat.lat), round(event.lngLat.lng));
    },
    [adding, onAddSite],
  );

  return (
    <>
      <MapView
        ref={mapRef}
        mapLib={maplibregl}
        mapStyle={style}
        initialViewState={bounds ? { bounds, fitBoundsOptions: { padding: 40 } } : { longitude: 0, latitude: 0, zoom: 1 }}
        style={{ width: "100%", height: "100%" }}
        attributionControl={false}
        cursor={adding ? "crosshair" : undefined}
        onClick={handleClick}
        onLoad={onLoaded}
      >
        {region && (
          <Source id="region" type="geojson" data={region}>
            <Layer
              id="land"
              type="fill"
              filter={["all", ["in", ["geometry-type"], ["literal", ["Polygon", "MultiPolygon"]]], ["!=", ["get", "kind"], "town"], ["!=", ["get", "kind"], "boundary"]]}
              paint={{ "fill-color": LAND, "fill-outline-color": BOUNDARY }}
            />
            <Layer
              id="towns"
              type="fill"
              filter={["all", ["in", ["geometry-type"], ["literal", ["Polygon", "MultiPolygon"]]], ["==", ["get", "kind"], "town"]]}
              paint={{ "fill-color": TOWN, "fill-outline-color": BOUNDARY }}
            />
            <Layer
              id="boundaries"
              type="line"
              filter={["any", ["in", ["geometry-type"], ["literal", ["LineString", "MultiLineString"]]], ["==", ["get", "kind"], "boundary"]]}
              paint={{ "line-color": BOUNDARY, "line-width": 1, "line-dasharray": [3, 2] }}
            />
            <Layer
              id="place-labels"
              type="symbol"
              filter={["all", ["==", ["geometry-type"], "Point"], ["has", "name"]]}
              layout={{
                "text-field": ["get", "name"],
                "text-font": [FONT],
                "text-size": ["case", ["==", ["get", "kind"], "town"], 13, 10],
                "text-allow-overlap": false,
              }}
              paint={{ "text-color": "#3e4650", "text-halo-color": "#ffffff", "text-halo-width": 1.2 }}
            />
          </Source>
        )}
        <Source id="flows" type="geojson" data={flowFeatures}>
          <Layer id="flow-lines" type="line" layout={{ "line-cap": "round" }} paint={{ "line-color": "#3b528b", "line-opacity": 0.45, "line-width": ["get", "width"] }} />
        </Source>
        <Source id="practices" type="geojson" data={practiceFeatures}>
          <Layer
            id="practice-circles"
            type="circle"
            paint={{
              "circle-radius": ["get", "radius"],
              "circle-color": ["get", "colour"],
              "circle-opacity": 0.8,
              "circle-stroke-color": "#ffffff",
              "circle-stroke-width": 1,
            }}
          />
        </Source>
        {sites.map((site) => (
          <Marker
            key={site.id}
            longitude={site.lon}
            latitude={site.lat}
            draggable={editable && Boolean(onMoveSite)}
            onDragEnd={(event: MarkerDragEvent) => onMoveSite?.(site.id, round(event.lngLat.lat), round(event.lngLat.lng))}
          >
            <div className="flex flex-col items-center" data-testid={`site-marker-${site.id}`} title={`${site.name ?? site.id} (${site.sector})`} aria-label={`Site ${site.name ?? site.id}`}>
              <SiteGlyph sector={site.sector} colour={utilisationColour(site.utilisation)} />
              <span className="rounded bg-white/80 px-1 text-[10px] font-semibold leading-tight text-ink">{site.id}</span>
            </div>
          </Marker>
        ))}
      </MapView>
      {editable && onAddSite && (
        <button
          type="button"
          onClick={() => setAdding((value) => !value)}
          aria-pressed={adding}
          className={`absolute left-2 top-2 rounded border px-3 py-1 text-sm shadow ${adding ? "border-accent bg-accent text-white" : "border-rule bg-white text-ink"}`}
        >
          {adding ? "Click the map to place the site" : "Add a site"}
        </button>
      )}
    </>
  );
}

/** Five decimals of a degree is about a metre: enough, and stable in tables and exports. */
function round(value: number): number {
  return Math.round(value * 1e5) / 1e5;
}

function regionBounds(region: FeatureCollection | null | undefined): [number, number, number, number] | null {
  if (!region) return null;
  let west = Infinity;
  let south = Infinity;
  let east = -Infinity;
  let north = -Infinity;
  const visit = (coordinates: unknown): void => {
    if (Array.isArray(coordinates) && typeof coordinates[0] === "number" && typeof coordinates[1] === "number") {
      west = Math.min(west, coordinates[0]);
      east = Math.max(east, coordinates[0]);
      south = Math.min(south, coordinates[1]);
      north = Math.max(north, coordinates[1]);
    } else if (Array.isArray(coordinates)) coordinates.forEach(visit);
  };
  for (const feature of region.features) if (feature.geometry && "coordinates" in feature.geometry) visit(feature.geometry.coordinates);
  return Number.isFinite(west) ? [west, south, east, north] : null;
}
