/**
 * GET /api/v1/o/:org/outlook/balking/sensitivity?run=&line=&privateCost=0.5,1,1.5&capacity=1,1.1,1.2&rules=choice,optimum
 * — total balking against the private cost and against added capacity, each point re-solved.
 */
import { z } from "zod";
import { apiError, API_NOT_FOUND, requireApiMember } from "~/auth/api-guards.server";
import { openOutlookRun, runContextOf, sensitivityFor } from "~/models/outlooks.server";
import { SolvePoolError } from "~/models/solve-pool.server";
import { BALKING_OUTLOOK_ROLES, readApiQuery } from "./outlook-query.server";
import { poolRefusal } from "./solve-refusal.server";
import type { Route } from "./+types/api.v1.o.$org.outlook.balking.sensitivity";

/** More points than this is a batch job, not a request. */
const MAX_POINTS = 12;

const factorList = (name: string) =>
  z
    .string()
    .optional()
    .transform((text, context) => {
      if (!text) return undefined;
      const values = text.split(",").map((part) => Number(part.trim()));
      if (values.length > MAX_POINTS) context.addIssue({ code: "custom", message: `${name} takes at most ${MAX_POINTS} factors` });
      values.forEach((value, index) => {
        if (!(Number.isFinite(value) && value > 0)) context.addIssue({ code: "custom", message: `${name}[${index}] must be a factor > 0` });
      });
      return values;
    });

const sensitivityQuery = z.object({
  run: z.string().regex(/^\d+$/, { error: "run must be a run number, e.g. run=12" }).transform(Number).optional(),
  line: z.string().optional(),
  privateCost: factorList("privateCost"),
  capacity: factorList("capacity"),
  rules: z
    .string()
    .optional()
    .transform((text) => (text ? text.split(",").map((part) => part.trim()) : undefined))
    .pipe(z.array(z.enum(["choice", "optimum"], { error: "rules must list choice and/or optimum" })).optional()),
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireApiMember(request, params.org, BALKING_OUTLOOK_ROLES);
  const query = readApiQuery(sensitivityQuery, new URL(request.url));
  const opened = await openOutlookRun({ organisationId: organisation.id, membership }, query.run ?? null, { periods: false });
  if (!opened) return apiError(404, query.run !== undefined ? API_NOT_FOUND : "No run has been published to you yet.");
  if (query.line !== undefined && !opened.scenario.serviceLines.some((line) => line.id === query.line)) {
    return apiError(400, "The query string is not valid.", [{ path: "line", message: `this run has no service line "${query.line}"` }]);
  }
  let sensitivity;
  try {
    sensitivity = await sensitivityFor(opened, {
      lines: query.line ? [query.line] : undefined,
      privateCostFactors: query.privateCost,
      capacityFactors: query.capacity,
      rules: query.rules ?? ["choice", "optimum"],
    });
  } catch (error) {
    if (error instanceof SolvePoolError) return poolRefusal(error);
    throw error;
  }
  const context = runContextOf(opened);
  return Response.json({
    run: { id: context.runId, scenarioName: context.scenarioName, label: context.runLabel, dataDate: context.dataDate },
    assumptions: context.assumptions,
    cautions: opened.run.result.cautions,
    sensitivity,
  });
}
