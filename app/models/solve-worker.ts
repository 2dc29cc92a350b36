/**
 * The entry of each solve worker thread (`solve-pool.server.ts` starts it through tsx): answers
 * solve, sensitivity and advice jobs with the engine, one at a time, until terminated.
 */
import { answerJobs, runSolveJob, type SolveJobs } from "./solve-jobs";

answerJobs((kind, request) => runSolveJob(kind as keyof SolveJobs, request as SolveJobs[keyof SolveJobs]["request"]));
