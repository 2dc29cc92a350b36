/**
 * The region drawn as plain SVG — land, boundaries, towns, practices shaded by a value, sites by
 * utilisation and referral flows — for print: it renders on the server, needs no WebGL and prints
 * exactly as it looks. (The interactive map is `region-map.tsx`.)
 *
 * Projection: equirectangular with x scaled by cos(mid-latitude), which keeps shapes true to a
 * few parts in a thousand across a region of a hundred kilometres or so.
 */
import type { FeatureCollection, Geometry, Position } from "geojson";
import { dataBounds, SHADE_COLOURS, utilisationColour, type MapFlow, type MapPractice, type MapSite, type PracticeShading } from "./region-map";

export interface StaticRegionMapProps {
  title: string;
  region?: FeatureCollection | null;
  practices: MapPractice[];
  sites: MapSite[];
  flows?: MapFlow[];
  shading?: PracticeShading | null;
  width?: number;
  height?: number;
}

function shadeColour(value: number | null | undefined, domain: [number, number]): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "#9aa5b1";
  const [low, high] = domain;
  const t = high > low ? Math.min(1, Math.max(0, (value - low) / (high - low))) : 0;
  return SHADE_COLOURS[Math.min(SHADE_COLOURS.length - 1, Math.floor(t * SHADE_COLOURS.length))];
}

function rings(geometry: Geometry): Position[][] {
  if (geometry.type === "Polygon") return geometry.coordinates;
  if (geometry.type === "MultiPolygon") return geometry.coordinates.flat();
  return [];
}

export function StaticRegionMap({ title, region, practices, sites, flows = [], shading, width = 720, height = 460 }: StaticRegionMapProps) {
  const bounds = dataBounds(practices, sites);
  if (!bounds) return null;
  const [west, south, east, north] = bounds;
  const cosine = Math.cos((((south + north) / 2) * Math.PI) / 180);
  const spanX = (east - west) * cosine;
  const spanY = north - south;
  const margin = 24;
  const scale = Math.min((width - 2 * margin) / spanX, (height - 2 * margin) / spanY);
  const offsetX = (width - spanX * scale) / 2;
  const offsetY = (height - spanY * scale) / 2;
  const x = (lon: number) => offsetX + (lon - west) * cosine * scale;
  const y = (lat: number) => offsetY + (north - lat) * scale;
  const path = (ring: Position[]) => `M${ring.map(([lon, lat]) => `${x(lon).toFixed(1)},${y(lat).toFixed(1)}`).join("L")}Z`;
  const maxDemand = Math.max(1e-9, ...practices.map((practice) => practice.demand));
  const maxFlow = Math.max(1e-9, ...flows.map((flow) => flow.value));
  const practiceById = new Map(practices.map((practice) => [practice.id, practice]));
  const siteById = new Map(sites.map((site) => [site.id, site]));
  const features = region?.features ?? [];
  return (
    <figure className="m-0 break-inside-avoid" aria-label={title}>
      <svg viewBox={`0 0 ${width} ${height}`} width="100%" role="img" aria-label={title} style={{ background: "#cfe3ea", maxHeight: height }}>
        {features
          .filter((feature) => feature.properties?.kind === "land")
          .flatMap((feature, index) => rings(feature.geometry).map((ring, k) => <path key={`land-${index}-${k}`} d={path(ring)} fill="#f3efe3" stroke="#b9b29e" strokeWidth={0.8} />))}
        {features
          .filter((feature) => feature.properties?.kind === "boundary")
          .flatMap((feature, index) => rings(feature.geometry).map((ring, k) => <path key={`boundary-${index}-${k}`} d={path(ring)} fill="none" stroke="#8a8372" strokeDasharray="3 3" strokeWidth={0.7} />))}
        {features
          .filter((feature) => feature.properties?.kind === "town")
          .flatMap((feature, index) => rings(feature.geometry).map((ring, k) => <path key={`town-${index}-${k}`} d={path(ring)} fill="#e2dccb" stroke="none" />))}
        {flows.map((flow) => {
          const from = practiceById.get(flow.sourceId);
          const to = siteById.get(flow.siteId);
          if (!from || !to || flow.value <= 0) return null;
          return (
            <line
              key={`${flow.sourceId}-${flow.siteId}`}
              x1={x(from.lon)}
              y1={y(from.lat)}
              x2={x(to.lon)}
              y2={y(to.lat)}
              stroke="#3b528b"
              strokeOpacity={0.45}
              strokeWidth={0.5 + 5 * Math.sqrt(flow.value / maxFlow)}
            />
          );
        })}
        {practices.map((practice) => (
          <circle
            key={practice.id}
            cx={x(practice.lon)}
            cy={y(practice.lat)}
            r={2 + 7 * Math.sqrt(practice.demand / maxDemand)}
            fill={shading ? shadeColour(practice.shade, shading.domain) : "#0b5e6b"}
            fillOpacity={0.85}
            stroke="#1f2933"
            strokeWidth={0.5}
          >
            <title>{`${practice.name ?? practice.id}: ${practice.demand.toFixed(1)} referrals/week`}</title>
          </circle>
        ))}
        {sites.map((site) => {
          const size = 9;
          const cx = x(site.lon);
          const cy = y(site.lat);
          const colour = utilisationColour(site.utilisation);
          return (
            <g key={site.id}>
              {site.sector === "public" ? (
                <rect x={cx - size / 2} y={cy - size / 2} width={size} height={size} fill={colour} stroke="white" strokeWidth={1.5} />
              ) : (
                <path d={`M${cx},${cy - size / 1.6}L${cx + size / 1.6},${cy}L${cx},${cy + size / 1.6}L${cx - size / 1.6},${cy}Z`} fill={colour} stroke="white" strokeWidth={1.5} />
              )}
              <text x={cx + 8} y={cy + 4} fontSize={11} fill="#1f2933" stroke="white" strokeWidth={3} paintOrder="stroke">
                {site.id}
              </text>
            </g>
          );
        })}
      </svg>
      <figcaption className="mt-1 text-xs text-ink-soft">
        {title}. Circles: practices sized by referrals/week{shading ? `, shaded by ${shading.label.toLowerCase()} (light ${shading.domain[0].toFixed(2)} → dark ${shading.domain[1].toFixed(2)}${shading.unit ? ` ${shading.unit}` : ""})` : ""}. Squares: public sites; diamonds: independent sites;
        green under 70% utilisation, amber 70–85%, red 85% or more. Lines: referral flows, width by referrals/week.
      </figcaption>
    </figure>
  );
}
