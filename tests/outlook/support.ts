/**
 * Scenarios and runs for the outlook tests: the workspace tests' small region with two seasonal
 * periods, and a one-site region whose inflow is exactly the SIPP example's λ = 9 then 10.
 */
import { createRun } from "~/models/runs.server";
import { importScenario } from "~/models/scenarios.server";
import type { Database } from "~/db/client.server";
import { smallScenario } from "../workspace/support/fixtures";

export function seasonalScenario(name: string): Record<string, unknown> {
  return {
    ...smallScenario(name),
    periods: [
      { id: "summer", label: "Summer", weeks: 30, demandFactor: 0.95, teamsFactor: 1 },
      { id: "winter", label: "Winter", weeks: 22, demandFactor: 1.1, teamsFactor: { ortho: 1, derm: 1 } },
    ],
  };
}

/** One practice with no private option, one site of 14 teams at μ = 1/week: every rule sends it all 9 (then 10) referrals/week. */
export function sippScenario(): Record<string, unknown> {
  return {
    schema: "equilibra/scenario@1",
    name: "SIPP check",
    dataDate: "2026-01-01",
    serviceLines: [{ id: "ortho", name: "Orthopaedics", standardWeeks: 18 }],
    sources: [{ id: "ZZP001", name: "Only practice", lat: 49.8, lon: -30.2, demand: { ortho: 9 } }],
    providers: [{ id: "ZZS1", name: "Only site", lat: 49.81, lon: -30.21, sector: "public", lines: { ortho: { teams: 14, ratePerTeam: 1 } } }],
    periods: [
      { id: "p1", label: "First half", weeks: 26, demandFactor: 1 },
      { id: "p2", label: "Second half", weeks: 26, demandFactor: 10 / 9 },
    ],
  };
}

export async function storedRun(db: Database, organisationId: number, userId: number, document: Record<string, unknown>): Promise<{ scenarioId: number; runId: number }> {
  const scenarioId = await importScenario(db, organisationId, document, { createdBy: userId });
  const outcome = await createRun(organisationId, scenarioId, { userId, label: "test run" });
  if (!outcome || !outcome.ok) throw new Error(`The test scenario did not solve: ${JSON.stringify(outcome)}`);
  return { scenarioId, runId: outcome.run.id };
}
