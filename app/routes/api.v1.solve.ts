/**
 * POST /api/v1/solve — an exchange-format scenario in, the result (`equilibra/result@1`) out.
 * Nothing is stored. Any signed-in person or live API token may solve.
 */
import { requireApiUser, apiError } from "~/auth/api-guards.server";
import { solveDocument } from "~/models/runs.server";
import { methodNotAllowed, readJsonBody } from "./api-support.server";
import type { Route } from "./+types/api.v1.solve";

export async function action({ request }: Route.ActionArgs) {
  if (request.method !== "POST") return methodNotAllowed(["POST"]);
  await requireApiUser(request);
  const body = await readJsonBody(request);
  const outcome = solveDocument(body);
  if (!outcome.ok) return apiError(outcome.status, outcome.error, outcome.issues);
  return Response.json(outcome.result, { headers: { "X-Solve-Milliseconds": outcome.durationMs.toFixed(1) } });
}

export async function loader() {
  return methodNotAllowed(["POST"]);
}
