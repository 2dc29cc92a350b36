/**
 * A solve worker for tests: answers the app's jobs exactly as `app/models/solve-worker.ts` does, plus
 * two that misbehave on request, so the pool's failure handling can be tested without timing:
 *
 * - `crash`: the thread exits with the given code in the middle of its job;
 * - `hold`: the job waits until the test sets the shared gate to 1, then answers "released".
 *
 * Imports are relative: the pool loads workers through tsx, not through vitest.
 */
import { answerJobs, runSolveJob, type SolveJobs } from "../../../app/models/solve-jobs";

answerJobs((kind, request) => {
  if (kind === "crash") process.exit((request as { exitCode: number }).exitCode);
  if (kind === "hold") {
    const { gate } = request as { gate: Int32Array };
    // Wait in short slices so that terminating the thread (the pool's timeout) is seen promptly.
    while (Atomics.load(gate, 0) === 0) Atomics.wait(gate, 0, 0, 50);
    return "released";
  }
  return runSolveJob(kind as keyof SolveJobs, request as SolveJobs[keyof SolveJobs]["request"]);
});
