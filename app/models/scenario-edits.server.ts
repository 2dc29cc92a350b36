/**
 * Changing a scenario's inputs from the workspace: an import (CSV or JSON) or an edit (a table
 * cell, a site moved on the map, an assumption) replaces the scenario's inputs with a complete
 * exchange-format document, validated by the engine's `parseScenario` like any other file.
 *
 * One transaction: the new inputs are written as a scratch scenario by `importScenario` (the one
 * writer of the format), the old rows are deleted, the new rows are moved under the scenario's id,
 * and the scratch row is dropped. A bad document throws before anything is written; a failure
 * midway rolls everything back. The scenario keeps its id, name and runs.
 */
import { eq } from "drizzle-orm";
import { getDb } from "~/db/client.server";
import { periods, scenarios, serviceLines, sites, sources, travelKm } from "~/db/schema";
import { recordAudit } from "./audit.server";
import { getScenario, importScenario } from "./scenarios.server";

const CHILD_TABLES = [serviceLines, sources, sites, periods, travelKm] as const;

/** Replaces the inputs; false when the scenario is not in this organisation. Throws `ScenarioInputError` for a bad document. */
export async function replaceScenarioInputs(
  organisationId: number,
  scenarioId: number,
  document: unknown,
  options: { userId: number | null; reason: string },
): Promise<boolean> {
  const db = await getDb();
  return db.transaction(async (tx) => {
    const existing = await getScenario(tx, organisationId, scenarioId);
    if (!existing) return false;
    const scratchId = await importScenario(tx, organisationId, document, { name: existing.name, createdBy: options.userId });
    const [scratch] = await tx.select().from(scenarios).where(eq(scenarios.id, scratchId));
    for (const table of CHILD_TABLES) await tx.delete(table).where(eq(table.scenarioId, scenarioId));
    for (const table of CHILD_TABLES) await tx.update(table).set({ scenarioId }).where(eq(table.scenarioId, scratchId));
    await tx
      .update(scenarios)
      .set({
        kmPerWeek: scratch.kmPerWeek,
        circuity: scratch.circuity,
        choiceModel: scratch.choiceModel,
        plan: scratch.plan,
        // A document without a description or data date keeps the scenario's own.
        description: scratch.description || existing.description,
        dataDate: scratch.dataDate ?? existing.dataDate,
        updatedAt: new Date(),
      })
      .where(eq(scenarios.id, scenarioId));
    await tx.delete(scenarios).where(eq(scenarios.id, scratchId));
    await recordAudit(organisationId, options.userId, "scenario.inputs_replaced", `scenario:${scenarioId}`, { reason: options.reason }, tx);
    return true;
  });
}

/** Name, description and data date: the scenario's own details, outside the exchange format's inputs. */
export async function updateScenarioDetails(
  organisationId: number,
  scenarioId: number,
  details: { description?: string; dataDate?: string | null },
  userId: number | null,
): Promise<boolean> {
  const db = await getDb();
  const existing = await getScenario(db, organisationId, scenarioId);
  if (!existing) return false;
  await db
    .update(scenarios)
    .set({
      ...(details.description !== undefined ? { description: details.description } : {}),
      ...(details.dataDate !== undefined ? { dataDate: details.dataDate } : {}),
      updatedAt: new Date(),
    })
    .where(eq(scenarios.id, scenarioId));
  await recordAudit(organisationId, userId, "scenario.details_changed", `scenario:${scenarioId}`, details);
  return true;
}
