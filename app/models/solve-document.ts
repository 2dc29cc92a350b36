/**
 * One exchange-format document validated and solved, with the two ways a model can have no answer
 * turned into statuses: 400 (the input is not valid, one issue per field path) and 422 (no steady
 * state, one issue per line short of capacity).
 *
 * Engine code only (no database, no router): the solve pool's worker threads run this module
 * (`solve-worker.ts`), and tests call it in-thread as the reference for the pool's answers. Imports
 * are relative because a worker loads its modules through tsx, which would read the `~/` alias from
 * whichever tsconfig.json sits in the server's working directory.
 */
import { NoSteadyStateError, ScenarioInputError, type RuleKey } from "../engine/problem";
import { parseScenario } from "../engine/scenario";
import { solveScenario, type ScenarioResult } from "../engine/solve-scenario";

/** What a solve produced, or why the model has no answer (an input error or no steady state). */
export type SolveOutcome =
  | { ok: true; result: ScenarioResult; durationMs: number }
  | { ok: false; status: 400 | 422; error: string; issues: { path: string; message: string }[] };

/** `SolveOutcome` with the result already as JSON text, for answering over HTTP as it is. */
export type SolveJsonOutcome = Exclude<SolveOutcome, { ok: true }> | { ok: true; resultJson: string; durationMs: number };

export interface SolveChoices {
  /** Only these rules (default: every rule that applies). */
  rules?: RuleKey[];
  /** Solve the scenario's periods too (default true); the stationary problem is always solved. */
  periods?: boolean;
}

/**
 * Validates and solves an exchange-format document on the calling thread; never throws for bad
 * input. The server goes through `solveDocumentInPool` (runs.server.ts) instead, so that a solve
 * never blocks the web server's event loop.
 */
export function solveDocument(input: unknown, choices: SolveChoices = {}): SolveOutcome {
  let scenario;
  try {
    scenario = parseScenario(input);
  } catch (error) {
    if (error instanceof ScenarioInputError) return { ok: false, status: 400, error: "The scenario is not valid.", issues: error.issues };
    throw error;
  }
  const started = performance.now();
  try {
    const result = solveScenario(scenario, { rules: choices.rules, periods: choices.periods });
    return { ok: true, result, durationMs: performance.now() - started };
  } catch (error) {
    if (error instanceof NoSteadyStateError) {
      return {
        ok: false,
        status: 422,
        error: error.message,
        issues: error.shortfalls.map((shortfall) => ({
          path: `serviceLines.${shortfall.lineId}`,
          message: `demand ${shortfall.demand.toFixed(2)}/week exceeds capacity ${shortfall.capacity.toFixed(2)}/week at ${shortfall.siteIds.join(", ")} by ${shortfall.shortfall.toFixed(2)} with no outside option`,
        })),
      };
    }
    throw error;
  }
}

/**
 * `solveDocument` with the result serialised where it was computed: a worker hands the web server
 * one string (copied flat) instead of an object graph of hundreds of kilobytes that the server
 * would rebuild and then serialise again on its event loop.
 */
export function solveDocumentToJson(input: unknown, choices: SolveChoices = {}): SolveJsonOutcome {
  const outcome = solveDocument(input, choices);
  return outcome.ok ? { ok: true, resultJson: JSON.stringify(outcome.result), durationMs: outcome.durationMs } : outcome;
}
