/**
 * The region map: practices, sites and (after a run) referral flows over the region's own
 * geography. The WebGL map itself (`region-map-canvas.tsx`) loads only in the browser after
 * hydration; the server renders a placeholder of the same size and the legend, so the page
 * does not jump and the legend reads without JavaScript.
 */
import { lazy, Suspense, useEffect, useState } from "react";
import type { FeatureCollection } from "geojson";

export interface MapPractice {
  id: string;
  name?: string;
  lat: number;
  lon: number;
  /** Referrals/week on the service lines shown: sets the circle's size. */
  demand: number;
  /** The value the practice is shaded by after a run (balking share or mean wait); null = no result. */
  shade?: number | null;
}

export interface MapSite {
  id: string;
  name?: string;
  lat: number;
  lon: number;
  sector: "public" | "independent";
  /** Utilisation after a run (0–1+); null = no result. */
  utilisation?: number | null;
}

export interface MapFlow {
  sourceId: string;
  siteId: string;
  /** Referrals/week. */
  value: number;
}

export interface PracticeShading {
  label: string;
  unit: string;
  /** The values at the light and dark ends of the scale. */
  domain: [number, number];
}

export interface RegionMapProps {
  region?: FeatureCollection | null;
  practices: MapPractice[];
  sites: MapSite[];
  flows?: MapFlow[];
  shading?: PracticeShading | null;
  /** Planners may drag sites and add one by clicking the map. */
  editable?: boolean;
  onMoveSite?: (id: string, lat: number, lon: number) => void;
  onAddSite?: (lat: number, lon: number) => void;
  height?: number;
}

/** Viridis stops: ordered in lightness, readable for the common colour-vision deficiencies and in greyscale. */
export const SHADE_COLOURS = ["#fde725", "#5ec962", "#21918c", "#3b528b", "#440154"] as const;
export const UTILISATION_COLOURS = { calm: "#2b6a3f", busy: "#d08c00", warning: "#8f2d2d", none: "#0b5e6b" } as const;

export function utilisationColour(utilisation: number | null | undefined): string {
  if (utilisation === null || utilisation === undefined) return UTILISATION_COLOURS.none;
  if (utilisation >= 0.85) return UTILISATION_COLOURS.warning;
  if (utilisation >= 0.7) return UTILISATION_COLOURS.busy;
  return UTILISATION_COLOURS.calm;
}

/** [west, south, east, north] around everything shown, so any region fits, wherever it is. */
export function dataBounds(practices: { lat: number; lon: number }[], sites: { lat: number; lon: number }[]): [number, number, number, number] | null {
  const points = [...practices, ...sites];
  if (points.length === 0) return null;
  let west = Infinity;
  let south = Infinity;
  let east = -Infinity;
  let north = -Infinity;
  for (const { lat, lon } of points) {
    west = Math.min(west, lon);
    east = Math.max(east, lon);
    south = Math.min(south, lat);
    north = Math.max(north, lat);
  }
  // A single point (or a line of them) still needs an area to frame: about 2 km around it.
  const pad = 0.02;
  if (east - west < pad) {
    west -= pad;
    east += pad;
  }
  if (north - south < pad) {
    south -= pad;
    north += pad;
  }
  return [west, south, east, north];
}

const RegionMapCanvas = lazy(() => import("./region-map-canvas"));

function useHydrated(): boolean {
  const [hydrated, setHydrated] = useState(false);
  useEffect(() => setHydrated(true), []);
  return hydrated;
}

export function RegionMap(props: RegionMapProps) {
  const hydrated = useHydrated();
  const [loaded, setLoaded] = useState(false);
  const height = props.height ?? 480;
  const placeholder = (
    <div className="flex h-full items-center justify-center text-sm text-ink-soft" style={{ background: "#cfe3ea" }}>
      Loading the map…
    </div>
  );
  return (
    <figure className="m-0">
      <div
        className="relative overflow-hidden rounded border border-rule"
        style={{ height }}
        data-testid="region-map"
        data-map-loaded={loaded ? "true" : "false"}
      >
        {hydrated ? (
          <Suspense fallback={placeholder}>
            <RegionMapCanvas {...props} onLoaded={() => setLoaded(true)} />
          </Suspense>
        ) : (
          placeholder
        )}
      </div>
      <MapLegend shading={props.shading} hasFlows={Boolean(props.flows?.length)} hasUtilisation={props.sites.some((site) => site.utilisation != null)} editable={props.editable} />
    </figure>
  );
}

export function MapLegend({
  shading,
  hasFlows,
  hasUtilisation,
  editable,
}: {
  shading?: PracticeShading | null;
  hasFlows: boolean;
  hasUtilisation: boolean;
  editable?: boolean;
}) {
  return (
    <figcaption className="mt-2 flex flex-wrap items-start gap-x-6 gap-y-2 text-xs text-ink-soft" aria-label="Map legend">
      <span className="flex items-center gap-1.5">
        <svg width="28" height="14" aria-hidden="true">
          <circle cx="5" cy="7" r="3" fill="#0b5e6b" fillOpacity="0.7" />
          <circle cx="19" cy="7" r="6" fill="#0b5e6b" fillOpacity="0.7" />
        </svg>
        Practice, sized by referrals/week
      </span>
      <span className="flex items-center gap-1.5">
        <SiteGlyph sector="public" colour={UTILISATION_COLOURS.none} size={14} /> Public site
      </span>
      <span className="flex items-center gap-1.5">
        <SiteGlyph sector="independent" colour={UTILISATION_COLOURS.none} size={14} /> Independent site
      </span>
      {hasUtilisation && (
        <span className="flex items-center gap-2">
          Site utilisation:
          <Swatch colour={UTILISATION_COLOURS.calm} label="under 70%" />
          <Swatch colour={UTILISATION_COLOURS.busy} label="70–85%" />
          <Swatch colour={UTILISATION_COLOURS.warning} label="85% or more (warning)" />
        </span>
      )}
      {hasFlows && (
        <span className="flex items-center gap-1.5">
          <svg width="28" height="10" aria-hidden="true">
            <line x1="0" y1="5" x2="28" y2="5" stroke="#3b528b" strokeOpacity="0.6" strokeWidth="4" />
          </svg>
          Referral flow, width by referrals/week
        </span>
      )}
      {shading && (
        <span className="flex items-center gap-1.5">
          {shading.label}:
          <span className="num">{formatLegendNumber(shading.domain[0])}</span>
          <span className="flex" aria-hidden="true">
            {SHADE_COLOURS.map((colour) => (
              <span key={colour} style={{ background: colour, width: 14, height: 10, display: "inline-block" }} />
            ))}
          </span>
          <span className="num">
            {formatLegendNumber(shading.domain[1])} {shading.unit}
          </span>
        </span>
      )}
      {editable && <span>Drag a site to move it; use “Add a site” and click the map to place one.</span>}
    </figcaption>
  );
}

function formatLegendNumber(value: number): string {
  return Math.abs(value) >= 10 ? value.toFixed(0) : value.toFixed(2);
}

function Swatch({ colour, label }: { colour: string; label: string }) {
  return (
    <span className="flex items-center gap-1">
      <span aria-hidden="true" style={{ background: colour, width: 10, height: 10, display: "inline-block", borderRadius: 2 }} />
      {label}
    </span>
  );
}

/** Sites are squares (public) or diamonds (independent): told apart by shape, not colour alone. */
export function SiteGlyph({ sector, colour, size = 22 }: { sector: "public" | "independent"; colour: string; size?: number }) {
  return (
    <svg width={size} height={size} viewBox="0 0 22 22" aria-hidden="true">
      {sector === "public" ? (
        <rect x="3" y="3" width="16" height="16" rx="2" fill={colour} stroke="white" strokeWidth="2" />
      ) : (
        <path d="M11 1.5 L20.5 11 L11 20.5 L1.5 11 Z" fill={colour} stroke="white" strokeWidth="2" />
      )}
      <path d="M11 7v8M7 11h8" stroke="white" strokeWidth="2" strokeLinecap="round" />
    </svg>
  );
}
