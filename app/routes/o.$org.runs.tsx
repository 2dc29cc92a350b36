/**
 * Runs to share: planners and administrators see every run and publish or withdraw each one;
 * everyone else sees the runs published to them, with links to the outlooks and the brief.
 */
import { Form, Link, useNavigation } from "react-router";
import { z } from "zod";
import { requireMembership, requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { PlanningCautions } from "~/components/planning-cautions";
import { listVisibleRuns, seesUnpublished, setRunPublished } from "~/models/publishing.server";
import { BALKING_OUTLOOK_ROLES, SITE_OUTLOOK_ROLES } from "./outlook-query.server";
import type { Route } from "./+types/o.$org.runs";

const publishForm = z.object({
  intent: z.enum(["publish", "unpublish"], { error: "Choose publish or unpublish." }),
  runId: z.coerce.number({ error: "The run is missing." }).int().positive({ error: "The run is not valid." }),
});

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireMembership(request, params.org);
  const runs = await listVisibleRuns({ organisationId: organisation.id, membership }, 100);
  return {
    slug: organisation.slug,
    canPublish: seesUnpublished(membership.role),
    seesSites: SITE_OUTLOOK_ROLES.includes(membership.role),
    seesBalking: BALKING_OUTLOOK_ROLES.includes(membership.role),
    seesBrief: membership.role !== "provider_manager",
    runs: runs.map((run) => ({
      ...run,
      createdAt: run.createdAt.toISOString(),
      publishedAt: run.publishedAt?.toISOString() ?? null,
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireRole(request, params.org, ["administrator", "planner"]);
  const parsed = publishForm.safeParse(Object.fromEntries(await request.formData()));
  if (!parsed.success) return { error: parsed.error.issues[0]?.message ?? "The form is not valid." };
  if (!(await setRunPublished(organisation.id, parsed.data.runId, user.id, parsed.data.intent === "publish"))) throw notFound();
  return { error: null };
}

export default function RunsPage({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, canPublish, seesSites, seesBalking, seesBrief, runs } = loaderData;
  const navigation = useNavigation();
  return (
    <div className="mx-auto max-w-6xl space-y-6 px-6 py-6">
      <header>
        <h1 className="text-2xl font-semibold">{canPublish ? "Runs and publishing" : "Published runs"}</h1>
        <p className="text-sm text-ink-soft">
          {canPublish
            ? "Publish a run to share its site inflow and balking outlooks with provider managers and patient-access officers. Provider managers see only their own sites."
            : "Runs a planner has shared with you."}
        </p>
      </header>
      {actionData?.error && (
        <p className="rounded bg-warn-soft p-2 text-sm" role="alert">
          {actionData.error}
        </p>
      )}
      {runs.length === 0 ? (
        <p className="rounded border border-rule bg-white p-4">{canPublish ? "No run yet: run a scenario in the workspace first." : "Nothing has been published to you yet."}</p>
      ) : (
        <div className="overflow-x-auto rounded border border-rule bg-white">
          <table className="min-w-full text-sm" aria-label="Runs">
            <thead className="bg-accent-soft/60 text-left">
              <tr>
                <th className="px-3 py-2">Scenario</th>
                <th className="px-3 py-2">Run</th>
                <th className="px-3 py-2">Solved</th>
                <th className="px-3 py-2">Published</th>
                <th className="px-3 py-2">Open</th>
                {canPublish && <th className="px-3 py-2">Share</th>}
              </tr>
            </thead>
            <tbody>
              {runs.map((run) => (
                <tr key={run.id} className="border-t border-rule" data-testid={`run-${run.id}`}>
                  <td className="px-3 py-2">{run.scenarioName}</td>
                  <td className="px-3 py-2">
                    {run.label ?? `Run ${run.id}`}
                    {!run.converged && <span className="ml-2 text-xs text-warn">not converged</span>}
                  </td>
                  <td className="px-3 py-2">{run.createdAt.slice(0, 10)}</td>
                  <td className="px-3 py-2">{run.publishedAt ? `${run.publishedAt.slice(0, 10)}${run.publishedByName ? ` by ${run.publishedByName}` : ""}` : "—"}</td>
                  <td className="space-x-3 px-3 py-2">
                    {seesSites && (
                      <Link to={`/o/${slug}/outlook/sites?run=${run.id}`} className="text-accent underline">
                        Site inflow
                      </Link>
                    )}
                    {seesBalking && (
                      <Link to={`/o/${slug}/outlook/balking?run=${run.id}`} className="text-accent underline">
                        Balking
                      </Link>
                    )}
                    {seesBrief && (
                      <Link to={`/o/${slug}/runs/${run.id}/brief`} className="text-accent underline">
                        Decision brief
                      </Link>
                    )}
                  </td>
                  {canPublish && (
                    <td className="px-3 py-2">
                      <Form method="post">
                        <input type="hidden" name="runId" value={run.id} />
                        <input type="hidden" name="intent" value={run.publishedAt ? "unpublish" : "publish"} />
                        <button type="submit" disabled={navigation.state !== "idle"} className="rounded border border-rule px-3 py-1 hover:bg-accent-soft">
                          {run.publishedAt ? "Withdraw" : "Publish"}
                        </button>
                      </Form>
                    </td>
                  )}
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      <PlanningCautions />
    </div>
  );
}

export function meta() {
  return [{ title: "Runs · Equilibra" }];
}
