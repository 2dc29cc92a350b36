/**
 * The organisation's scenarios: open one, and — for planners and administrators — create one from
 * an exchange-format JSON file or a set of CSV files, duplicate one as a what-if copy, rename,
 * archive and restore. Everyone in the organisation can read.
 */
import { data, Form, Link, useActionData, useNavigation } from "react-router";
import { z } from "zod";
import { EDITOR_ROLES } from "~/auth/api-guards.server";
import { requireMembership, requireRole } from "~/auth/guards.server";
import { getDb } from "~/db/client.server";
import { ScenarioInputError } from "~/engine/problem";
import { recordAudit } from "~/models/audit.server";
import { planRefusal, scenarioSize, type PlanRefusal } from "~/models/plan-gates.server";
import { CSV_FILE_KINDS, CSV_FILE_NAMES, importCsvFiles, MAX_CSV_BYTES, type CsvFiles, type CsvRowError } from "~/models/csv-import";
import { archiveScenario, duplicateScenario, importScenario, listScenarios, renameScenario } from "~/models/scenarios.server";
import { ImportErrorList } from "~/components/import-errors";
import type { Route } from "./+types/o.$org.scenarios";

const idField = z.coerce.number({ error: "The scenario is missing." }).int().positive("The scenario is not valid.");
const nameField = z.string().trim().min(1, "Give the scenario a name.").max(200, "Keep the name under 200 characters.");

const formSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("create"), name: nameField }),
  z.object({ intent: z.literal("duplicate"), scenarioId: idField, name: nameField.optional() }),
  z.object({ intent: z.literal("rename"), scenarioId: idField, name: nameField }),
  z.object({ intent: z.literal("archive"), scenarioId: idField }),
  z.object({ intent: z.literal("restore"), scenarioId: idField }),
]);

interface ActionData {
  intent: string | null;
  target: number | null;
  message: string | null;
  errors: CsvRowError[];
  /** True when the message is a refusal (a plan limit): shown as an alert. */
  refused: boolean;
}

function reply(body: Partial<ActionData>, status = 200) {
  return data<ActionData>({ intent: null, target: null, message: null, errors: [], refused: false, ...body }, { status });
}

/** A plan limit refused the action: nothing was stored; the message names the limit. */
function refuse(intent: string, refusal: PlanRefusal) {
  return reply({ intent, message: refusal.message, refused: true }, 403);
}

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation, membership } = await requireMembership(request, params.org);
  const showArchived = new URL(request.url).searchParams.get("archived") === "1";
  const scenarios = await listScenarios(await getDb(), organisation.id, { includeArchived: showArchived });
  return {
    organisation: { name: organisation.name, slug: organisation.slug },
    canEdit: EDITOR_ROLES.includes(membership.role),
    showArchived,
    scenarios: scenarios.map((scenario) => ({
      id: scenario.id,
      name: scenario.name,
      description: scenario.description,
      dataDate: scenario.dataDate,
      parentId: scenario.parentId,
      archived: scenario.archivedAt !== null,
      updatedAt: scenario.updatedAt.toISOString(),
      sourceCount: scenario.sourceCount,
      siteCount: scenario.siteCount,
      lineCount: scenario.lineCount,
    })),
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireRole(request, params.org, EDITOR_ROLES);
  const form = await request.formData();
  const parsed = formSchema.safeParse(Object.fromEntries([...form.entries()].filter(([, value]) => typeof value === "string")));
  if (!parsed.success) return reply({ intent: String(form.get("intent") ?? ""), message: parsed.error.issues.map((issue) => issue.message).join(" ") }, 400);
  const db = await getDb();
  const input = parsed.data;
  switch (input.intent) {
    case "create": {
      const read = await readUpload(form);
      if ("errors" in read) return reply({ intent: "create", message: "Nothing was stored: fix the rows below and upload again.", errors: read.errors }, 400);
      const refusal = await planRefusal(organisation, ["scenarios", "problemSize"], scenarioSize(read.document));
      if (refusal) return refuse("create", refusal);
      try {
        const id = await importScenario(db, organisation.id, read.document, { name: input.name, createdBy: user.id });
        await recordAudit(organisation.id, user.id, "scenario.created", `scenario:${id}`, { via: read.via });
        return reply({ intent: "create", target: id, message: `Created “${input.name}”.` });
      } catch (error) {
        if (!(error instanceof ScenarioInputError)) throw error;
        return reply(
          {
            intent: "create",
            message: "Nothing was stored: the scenario is not valid.",
            errors: error.issues.map((issue) => ({ file: read.via === "json" ? "scenario.json" : "scenario", line: null, field: issue.path, message: issue.message })),
          },
          400,
        );
      }
    }
    case "duplicate": {
      const refusal = await planRefusal(organisation, ["scenarios"]);
      if (refusal) return refuse("duplicate", refusal);
      const id = await duplicateScenario(db, organisation.id, input.scenarioId, { name: input.name, createdBy: user.id });
      if (id === null) throw new Response("No such scenario in this organisation.", { status: 404 });
      await recordAudit(organisation.id, user.id, "scenario.duplicated", `scenario:${id}`, { from: input.scenarioId });
      return reply({ intent: "duplicate", target: id, message: "Copied: the copy records which scenario it came from." });
    }
    case "rename": {
      if (!(await renameScenario(db, organisation.id, input.scenarioId, input.name))) throw new Response("No such scenario in this organisation.", { status: 404 });
      return reply({ intent: "rename", target: input.scenarioId, message: "Renamed." });
    }
    case "archive":
    case "restore": {
      // Restoring counts against the scenario limit again; archiving never does.
      const refusal = input.intent === "restore" ? await planRefusal(organisation, ["scenarios"]) : null;
      if (refusal) return refuse("restore", refusal);
      if (!(await archiveScenario(db, organisation.id, input.scenarioId, input.intent === "archive"))) {
        throw new Response("No such scenario in this organisation.", { status: 404 });
      }
      await recordAudit(organisation.id, user.id, `scenario.${input.intent}d`, `scenario:${input.scenarioId}`);
      return reply({ intent: input.intent, target: input.scenarioId, message: input.intent === "archive" ? "Archived: its runs are kept." : "Restored." });
    }
  }
}

/** The uploaded files as an exchange-format document, or every row error found in them. */
async function readUpload(form: FormData): Promise<{ document: unknown; via: "json" | "csv" } | { errors: CsvRowError[] }> {
  const errors: CsvRowError[] = [];
  const text = async (field: string, fileName: string): Promise<string | undefined> => {
    const value = form.get(field);
    if (!(value instanceof File) || value.size === 0) return undefined;
    if (value.size > MAX_CSV_BYTES) {
      errors.push({ file: fileName, line: null, field: "", message: `${fileName} is ${(value.size / 1048576).toFixed(1)} MB; the limit is ${(MAX_CSV_BYTES / 1048576).toFixed(1)} MB per file.` });
      return undefined;
    }
    return value.text();
  };
  const json = await text("scenario", "scenario.json");
  if (errors.length > 0) return { errors };
  if (json !== undefined) {
    try {
      return { document: JSON.parse(json), via: "json" };
    } catch (error) {
      return { errors: [{ file: "scenario.json", line: null, field: "", message: `is not valid JSON: ${(error as Error).message}` }] };
    }
  }
  const files: CsvFiles = {};
  for (const kind of CSV_FILE_KINDS) {
    const content = await text(kind, CSV_FILE_NAMES[kind]);
    if (content !== undefined) files[kind] = content;
  }
  if (errors.length > 0) return { errors };
  if (Object.keys(files).length === 0) {
    return { errors: [{ file: "", line: null, field: "", message: "Choose an exchange-format JSON file, or the practices, sites and capacities CSV files." }] };
  }
  const preview = importCsvFiles(files);
  return preview.scenario ? { document: preview.scenario, via: "csv" } : { errors: preview.errors };
}

export default function ScenariosPage({ loaderData }: Route.ComponentProps) {
  const { organisation, canEdit, scenarios, showArchived } = loaderData;
  const actionData = useActionData<typeof action>();
  const navigation = useNavigation();
  const busy = navigation.state === "submitting";
  const base = `/o/${organisation.slug}/scenarios`;
  return (
    <div className="space-y-8">
      <header className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-2xl font-semibold">Scenarios</h1>
          <p className="text-sm text-ink-soft">
            {organisation.name}: each scenario keeps its inputs and its runs. {canEdit ? "Copy one to try a what-if without touching the original." : "You can open and export every scenario; planners and administrators change them."}
          </p>
        </div>
        <Link to={showArchived ? base : `${base}?archived=1`} className="text-sm text-accent underline">
          {showArchived ? "Hide archived scenarios" : "Show archived scenarios"}
        </Link>
      </header>

      {actionData?.message && (
        <p role={actionData.errors.length > 0 || actionData.refused ? "alert" : "status"} className={`rounded border px-3 py-2 text-sm ${actionData.errors.length > 0 || actionData.refused ? "border-bad bg-warn-soft" : "border-good bg-accent-soft"}`}>
          {actionData.message}
          {actionData.intent === "create" && actionData.target && (
            <>
              {" "}
              <Link className="underline" to={`${base}/${actionData.target}`}>
                Open it
              </Link>
            </>
          )}
        </p>
      )}
      {actionData && actionData.errors.length > 0 && <ImportErrorList errors={actionData.errors} />}

      <section aria-label="Scenario list">
        {scenarios.length === 0 ? (
          <p className="text-ink-soft">No scenarios yet.{canEdit ? " Create one below from a JSON file or CSV files." : ""}</p>
        ) : (
          <ul className="divide-y divide-rule rounded border border-rule bg-white">
            {scenarios.map((scenario) => (
              <li key={scenario.id} className="flex flex-wrap items-center gap-4 px-4 py-3" data-testid={`scenario-${scenario.id}`}>
                <div className="min-w-64 flex-1">
                  <Link to={`${base}/${scenario.id}`} className="font-semibold text-accent underline">
                    {scenario.name}
                  </Link>
                  {scenario.archived && <span className="ml-2 rounded bg-warn-soft px-1.5 text-xs text-warn">archived</span>}
                  {scenario.parentId && <span className="ml-2 text-xs text-ink-soft">what-if copy of #{scenario.parentId}</span>}
                  <p className="text-xs text-ink-soft">
                    {scenario.sourceCount} practices · {scenario.siteCount} sites · {scenario.lineCount} service lines · data date {scenario.dataDate ?? "not stated"}
                  </p>
                </div>
                {canEdit && (
                  <div className="flex flex-wrap items-center gap-2 text-sm">
                    <Form method="post" className="flex items-center gap-1">
                      <input type="hidden" name="intent" value="rename" />
                      <input type="hidden" name="scenarioId" value={scenario.id} />
                      <label className="sr-only" htmlFor={`rename-${scenario.id}`}>
                        New name for {scenario.name}
                      </label>
                      <input id={`rename-${scenario.id}`} name="name" defaultValue={scenario.name} className="w-48 rounded border border-rule px-2 py-1" />
                      <button disabled={busy} className="rounded border border-rule px-2 py-1 hover:bg-accent-soft">
                        Rename
                      </button>
                    </Form>
                    <Form method="post">
                      <input type="hidden" name="intent" value="duplicate" />
                      <input type="hidden" name="scenarioId" value={scenario.id} />
                      <button disabled={busy} className="rounded border border-rule px-2 py-1 hover:bg-accent-soft">
                        Duplicate as what-if
                      </button>
                    </Form>
                    <Form method="post">
                      <input type="hidden" name="intent" value={scenario.archived ? "restore" : "archive"} />
                      <input type="hidden" name="scenarioId" value={scenario.id} />
                      <button disabled={busy} className="rounded border border-rule px-2 py-1 hover:bg-accent-soft">
                        {scenario.archived ? "Restore" : "Archive"}
                      </button>
                    </Form>
                  </div>
                )}
              </li>
            ))}
          </ul>
        )}
      </section>

      {canEdit && (
        <section aria-labelledby="create-heading" className="rounded border border-rule bg-white p-4">
          <h2 id="create-heading" className="text-lg font-semibold">
            Create a scenario
          </h2>
          <p className="text-sm text-ink-soft">
            Upload an exchange-format JSON file (<code>equilibra/scenario@1</code>), or CSV files: practices, sites and capacities, with an optional km matrix and service lines. The
            layouts are described on the <Link className="underline" to={`/o/${organisation.slug}/api`}>API page</Link>. Nothing is stored unless every row is valid.
          </p>
          <Form method="post" encType="multipart/form-data" className="mt-3 grid gap-3 sm:grid-cols-2">
            <input type="hidden" name="intent" value="create" />
            <label className="text-sm sm:col-span-2">
              Name
              <input name="name" required className="mt-1 block w-full max-w-md rounded border border-rule px-2 py-1" />
            </label>
            <label className="text-sm">
              Scenario JSON
              <input type="file" name="scenario" accept=".json,application/json" className="mt-1 block text-sm" />
            </label>
            {(["practices", "sites", "capacities", "travelKm", "serviceLines"] as const).map((kind) => (
              <label key={kind} className="text-sm">
                {CSV_FILE_NAMES[kind]}
                <input type="file" name={kind} accept=".csv,text/csv" className="mt-1 block text-sm" />
              </label>
            ))}
            <div className="sm:col-span-2">
              <button disabled={busy} className="rounded bg-accent px-4 py-1.5 text-white">
                {busy && navigation.formData?.get("intent") === "create" ? "Creating…" : "Create scenario"}
              </button>
            </div>
          </Form>
        </section>
      )}
    </div>
  );
}

export function meta() {
  return [{ title: "Scenarios · Equilibra" }];
}
