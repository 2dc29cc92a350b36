/**
 * Mulberry32 (Tommy Ettinger's public-domain generator): small, fast and seedable, so property
 * tests and benchmarks see the same instances on every run. The demo region is drawn with the
 * same generator; there is one copy, in `seed/geometry.ts`.
 */
export { seededRandom } from "../../seed/geometry";
