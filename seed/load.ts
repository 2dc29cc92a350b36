/**
 * Loads the demo: the two invented commissioning bodies, their people and memberships, the region
 * map, the demo scenario and the saved what-ifs. Everything is written in one transaction, so a
 * failed seed leaves the database as it was.
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { count, inArray, sql } from "drizzle-orm";
import { memberships, organisations, users } from "../app/db/schema";
import { saveRegionMap } from "../app/models/region-maps.server";
import { importScenario, type Queryable } from "../app/models/scenarios.server";
import { DEMO_ORGANISATIONS, DEMO_PEOPLE, type DemoOrganisationSlug } from "./people";
import { SEED_DIR, VARIANT_FILES, resolveVariant, type VariantKey } from "./variants";

export const DEMO_SCENARIO_FILE = path.join(SEED_DIR, "demo-scenario.json");
export const REGION_FILE = path.join(SEED_DIR, "region.geojson");

/** Any number: it only has to be the same in every process that seeds (PostgreSQL advisory lock). */
const SEED_LOCK_KEY = 4_207_311;

export interface SeedSummary {
  organisations: Record<DemoOrganisationSlug, number>;
  users: Record<string, number>;
  demoScenarioId: number;
  variantIds: Record<VariantKey, number>;
  neighbourScenarioId: number;
}

export function readDemoScenario(): Record<string, unknown> {
  return JSON.parse(readFileSync(DEMO_SCENARIO_FILE, "utf8")) as Record<string, unknown>;
}

export function readRegion(): unknown {
  return JSON.parse(readFileSync(REGION_FILE, "utf8"));
}

/** Loads the demo organisations and their data; fails (storing nothing) if a demo organisation already exists. */
export async function seedDemo(db: Queryable): Promise<SeedSummary> {
  const demo = readDemoScenario();
  const region = readRegion();
  const variants = VARIANT_FILES.map((key) => [key, resolveVariant(demo, key)] as const);

  return db.transaction(async (tx) => {
    const organisationIds = {} as Record<DemoOrganisationSlug, number>;
    for (const organisation of DEMO_ORGANISATIONS) {
      const [row] = await tx.insert(organisations).values({ name: organisation.name, slug: organisation.slug }).returning({ id: organisations.id });
      organisationIds[organisation.slug] = row.id;
    }

    const userIds: Record<string, number> = {};
    for (const person of DEMO_PEOPLE) {
      const values = { githubId: person.githubId, login: person.login, name: person.name, email: person.email };
      const [row] = await tx
        .insert(users)
        .values(values)
        .onConflictDoUpdate({ target: users.githubId, set: values })
        .returning({ id: users.id });
      userIds[person.login] = row.id;
      await tx.insert(memberships).values({
        organisationId: organisationIds[person.organisation],
        userId: row.id,
        role: person.role,
        siteCodes: person.siteCodes ?? [],
      });
    }

    const calderveyId = organisationIds.caldervey;
    const planner = DEMO_PEOPLE.find((person) => person.organisation === "caldervey" && person.role === "planner");
    const createdBy = planner ? userIds[planner.login] : null;
    for (const organisationId of Object.values(organisationIds)) await saveRegionMap(tx, organisationId, region);

    const demoScenarioId = await importScenario(tx, calderveyId, demo, { createdBy });
    const variantIds = {} as Record<VariantKey, number>;
    for (const [key, document] of variants) {
      variantIds[key] = await importScenario(tx, calderveyId, document, { createdBy, parentId: demoScenarioId });
    }

    // The neighbouring body gets a scenario of its own, so that another tenant's data exists to be refused.
    const neighbour = DEMO_PEOPLE.find((person) => person.organisation === "upper-caldervey");
    const neighbourScenarioId = await importScenario(tx, organisationIds["upper-caldervey"], demo, {
      name: "Upper Caldervey cross-border review",
      description: "The neighbouring commissioning body's own copy of the Caldervey demo, for trying tenancy.",
      createdBy: neighbour ? userIds[neighbour.login] : null,
    });

    return { organisations: organisationIds, users: userIds, demoScenarioId, variantIds, neighbourScenarioId };
  });
}

/**
 * Seeds the demo when the database has no organisation at all (first start). Several app
 * instances may start together on one PostgreSQL server: an advisory lock lets only one seed.
 */
export async function seedIfEmpty(db: Queryable): Promise<SeedSummary | null> {
  return db.transaction(async (tx) => {
    await tx.execute(sql`select pg_advisory_xact_lock(${SEED_LOCK_KEY})`);
    const [{ total }] = await tx.select({ total: count() }).from(organisations);
    if (total > 0) return null;
    return seedDemo(tx);
  });
}

/** Whether the demo organisations are present (by slug). */
export async function demoPresent(db: Queryable): Promise<boolean> {
  const rows = await db
    .select({ id: organisations.id })
    .from(organisations)
    .where(
      inArray(
        organisations.slug,
        DEMO_ORGANISATIONS.map((organisation) => organisation.slug),
      ),
    );
  return rows.length > 0;
}

/**
 * Deletes the demo organisations (their members, scenarios, runs, maps, invitations and audit log
 * go with them by cascade) and the demo people, then loads the demo again — all in one transaction.
 * Organisations created by real users are left alone.
 */
export async function resetDemo(db: Queryable): Promise<SeedSummary> {
  return db.transaction(async (tx) => {
    await tx.execute(sql`select pg_advisory_xact_lock(${SEED_LOCK_KEY})`);
    await tx.delete(organisations).where(
      inArray(
        organisations.slug,
        DEMO_ORGANISATIONS.map((organisation) => organisation.slug),
      ),
    );
    await tx.delete(users).where(
      inArray(
        users.githubId,
        DEMO_PEOPLE.map((person) => person.githubId),
      ),
    );
    return seedDemo(tx);
  });
}
