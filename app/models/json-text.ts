/**
 * Large documents a page only reads (a run's result, the region's GeoJSON) travel from the loader
 * to the browser as one JSON text instead of as objects. React Router's turbo-stream encodes an
 * object value by value — tens of thousands of entries for a run's result, on the server and again
 * when the browser decodes it — while a string costs one native escape, and the browser reads it
 * back with the native `JSON.parse`. The type parameter keeps the document's type across the trip.
 */
export type JsonText<T> = string & { readonly jsonOf?: T };

export function toJsonText<T>(value: T): JsonText<T> {
  return JSON.stringify(value) as JsonText<T>;
}

export function fromJsonText<T>(text: JsonText<T>): T {
  return JSON.parse(text) as T;
}

/** Equal as JSON values (objects compared key by key whatever their order, as after a jsonb column). */
export function sameJson(a: unknown, b: unknown): boolean {
  if (a === b) return true;
  if (typeof a !== "object" || typeof b !== "object" || a === null || b === null) return false;
  if (Array.isArray(a)) return Array.isArray(b) && a.length === b.length && a.every((item, index) => sameJson(item, b[index]));
  if (Array.isArray(b)) return false;
  const left = a as Record<string, unknown>;
  const right = b as Record<string, unknown>;
  const keys = Object.keys(left).filter((key) => left[key] !== undefined);
  // Undefined fields do not exist in JSON.
  if (keys.length !== Object.keys(right).filter((key) => right[key] !== undefined).length) return false;
  return keys.every((key) => Object.hasOwn(right, key) && sameJson(left[key], right[key]));
}
