/**
 * Saved what-if scenarios are stored as small patches on the demo scenario (seed/scenarios/*.json),
 * so that each file shows only what differs. A patch is a JSON merge patch (RFC 7396: objects
 * merge, `null` deletes, anything else replaces) with one addition for arrays of objects with an
 * `id` (sources, providers, periods, pathway stages): a patch *object* there merges into the
 * elements by id, while a patch *array* replaces the whole array as in RFC 7396.
 */
import { readFileSync } from "node:fs";
import path from "node:path";

export interface VariantFile {
  /** Another variant's file name (without .json) to build on, or absent for the demo scenario itself. */
  basedOn?: string;
  name: string;
  description: string;
  patch: Record<string, unknown>;
}

type Json = null | boolean | number | string | Json[] | { [key: string]: Json };

/** Resolved from the working directory (the project root), like the migrations folder, so bundling cannot move it. */
export const SEED_DIR = path.resolve(process.cwd(), "seed");
export const VARIANTS_DIR = path.join(SEED_DIR, "scenarios");

/** The saved scenarios to compare, in the order they are listed (DEMO.md "Saved scenarios to compare"). */
export const VARIANT_FILES = ["free-choice", "central-allocation", "independent-block", "winter-pressure"] as const;
export type VariantKey = (typeof VARIANT_FILES)[number];

function isObject(value: unknown): value is { [key: string]: Json } {
  return typeof value === "object" && value !== null && !Array.isArray(value);
}

function isArrayOfIdentified(value: unknown): value is { id: string; [key: string]: Json }[] {
  return Array.isArray(value) && value.every((item) => isObject(item) && typeof item.id === "string");
}

export function applyPatch(target: unknown, patch: unknown, at = "patch"): Json {
  if (isArrayOfIdentified(target) && isObject(patch)) {
    const known = new Set(target.map((item) => item.id));
    for (const id of Object.keys(patch)) {
      if (!known.has(id)) throw new Error(`${at}.${id}: no element with id "${id}" to patch`);
    }
    return target.filter((item) => patch[item.id] !== null).map((item) => (item.id in patch ? applyPatch(item, patch[item.id], `${at}.${item.id}`) : item));
  }
  if (!isObject(patch)) return structuredClone(patch as Json);
  const result: { [key: string]: Json } = isObject(target) ? { ...target } : {};
  for (const [key, value] of Object.entries(patch)) {
    if (value === null) delete result[key];
    else result[key] = applyPatch(result[key], value, `${at}.${key}`);
  }
  return result;
}

export function readVariant(key: string): VariantFile {
  return JSON.parse(readFileSync(path.join(VARIANTS_DIR, `${key}.json`), "utf8")) as VariantFile;
}

/** The full exchange-format document of a variant: its chain of patches applied to the demo scenario. */
export function resolveVariant(base: unknown, key: string, seen: string[] = []): Record<string, unknown> {
  if (seen.includes(key)) throw new Error(`Variant ${key} is based on itself (${[...seen, key].join(" → ")})`);
  const variant = readVariant(key);
  const start = variant.basedOn ? resolveVariant(base, variant.basedOn, [...seen, key]) : base;
  const patched = applyPatch(start, variant.patch);
  return { ...(patched as Record<string, unknown>), name: variant.name, description: variant.description };
}
