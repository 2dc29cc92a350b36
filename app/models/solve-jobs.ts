/**
 * The work the solve pool's threads do (`solve-pool.server.ts`), as named jobs with plain-data
 * requests and answers, and how an error thrown by a job crosses the thread boundary.
 *
 * Messages between threads are structured clones: class instances arrive as plain objects without
 * their prototype, so an engine error is sent as its name and fields and rebuilt as the same class
 * on the other side (`instanceof` keeps working in the routes). Results are plain data (records,
 * arrays, numbers — Infinity and NaN survive a structured clone, unlike JSON).
 *
 * Engine code only, imported relatively: see `solve-document.ts`.
 */
import { parentPort } from "node:worker_threads";
import { adviseCapacity, type CapacityAdvice, type CapacityAdvisorOptions } from "../engine/capacity-advisor";
import { NoSteadyStateError, ScenarioInputError } from "../engine/problem";
import { parseScenario } from "../engine/scenario";
import { balkingSensitivity, type BalkingSensitivity, type SensitivityOptions } from "../engine/sensitivity";
import { solveDocument, solveDocumentToJson, type SolveChoices, type SolveJsonOutcome, type SolveOutcome } from "./solve-document";

/** Every job a worker answers: its request and its answer (a type, so that it fits `JobMap`). */
export type SolveJobs = {
  /** An exchange-format document validated and solved (`solveDocument`). */
  solve: { request: { input: unknown; choices: SolveChoices }; answer: SolveOutcome };
  /** The same with the result as JSON text (`solveDocumentToJson`), for `POST /api/v1/solve`. */
  solveToJson: { request: { input: unknown; choices: SolveChoices }; answer: SolveJsonOutcome };
  /** The balking sensitivity of a scenario document (a run's input snapshot). */
  sensitivity: { request: { document: unknown; options: SensitivityOptions }; answer: BalkingSensitivity };
  /** The capacity advisor on a scenario document. */
  advice: { request: { document: unknown; options: CapacityAdvisorOptions }; answer: CapacityAdvice };
};

/** Any map of job names to request and answer, so tests can run workers with jobs of their own. */
export type JobMap = { [kind: string]: { request: unknown; answer: unknown } };

export interface JobMessage<Jobs extends JobMap = SolveJobs, Kind extends keyof Jobs & string = keyof Jobs & string> {
  id: number;
  kind: Kind;
  request: Jobs[Kind]["request"];
}

/** An error thrown by a job, as data. */
export interface ThrownError {
  name: string;
  message: string;
  issues?: ScenarioInputError["issues"];
  shortfalls?: NoSteadyStateError["shortfalls"];
}

export type JobReply = { id: number; answer: unknown } | { id: number; thrown: ThrownError };

/** Answers one job on the calling thread. */
export function runSolveJob<Kind extends keyof SolveJobs>(kind: Kind, request: SolveJobs[Kind]["request"]): SolveJobs[Kind]["answer"];
export function runSolveJob(kind: keyof SolveJobs, request: SolveJobs[keyof SolveJobs]["request"]): SolveJobs[keyof SolveJobs]["answer"] {
  switch (kind) {
    case "solve": {
      const { input, choices } = request as SolveJobs["solve"]["request"];
      return solveDocument(input, choices);
    }
    case "solveToJson": {
      const { input, choices } = request as SolveJobs["solveToJson"]["request"];
      return solveDocumentToJson(input, choices);
    }
    case "sensitivity": {
      const { document, options } = request as SolveJobs["sensitivity"]["request"];
      return balkingSensitivity(parseScenario(document), options);
    }
    case "advice": {
      const { document, options } = request as SolveJobs["advice"]["request"];
      return adviseCapacity(parseScenario(document), options);
    }
    default:
      throw new Error(`The solve worker has no job named "${String(kind)}".`);
  }
}

export function describeThrown(error: unknown): ThrownError {
  if (error instanceof ScenarioInputError) return { name: error.name, message: error.message, issues: error.issues };
  if (error instanceof NoSteadyStateError) return { name: error.name, message: error.message, shortfalls: error.shortfalls };
  if (error instanceof Error) return { name: error.name, message: error.message };
  return { name: "Error", message: String(error) };
}

/** The error a job threw, as the class the callers test for (RangeError is the engine's bad-option error). */
export function rebuildThrown(thrown: ThrownError): Error {
  if (thrown.name === "ScenarioInputError" && thrown.issues) return new ScenarioInputError(thrown.issues);
  if (thrown.name === "NoSteadyStateError" && thrown.shortfalls) return new NoSteadyStateError(thrown.shortfalls);
  if (thrown.name === "RangeError") return new RangeError(thrown.message);
  const error = new Error(thrown.message);
  error.name = thrown.name;
  return error;
}

/**
 * Makes the current worker thread answer job messages with `answer` until it is terminated. A job
 * that throws is answered with its error as data; the thread stays up for the next job.
 */
export function answerJobs(answer: (kind: string, request: unknown) => unknown): void {
  const port = parentPort;
  if (!port) throw new Error("A solve worker must run as a worker thread (see app/models/solve-pool.server.ts).");
  port.on("message", (message: JobMessage<JobMap, string>) => {
    let reply: JobReply;
    try {
      reply = { id: message.id, answer: answer(message.kind, message.request) };
    } catch (error) {
      reply = { id: message.id, thrown: describeThrown(error) };
    }
    try {
      port.postMessage(reply);
    } catch (error) {
      // An answer that cannot be cloned (a function, say) is a defect: report it rather than go silent.
      port.postMessage({ id: message.id, thrown: describeThrown(error) } satisfies JobReply);
    }
  });
}
