/**
 * POST /api/v1/o/:org/scenarios/:id/import — replace the scenario's inputs from uploaded files
 * (multipart/form-data): either CSV files in fields `practices`, `sites`, `capacities` and optionally
 * `travelKm`, `serviceLines`, or one exchange-format JSON file in `scenario`.
 * With `preview=1` nothing is stored: the answer lists every row error (file, line, field, message)
 * and the rows read. Without it, the import is stored only when there is no error at all, in one
 * transaction — a bad file changes nothing. Planners and administrators only.
 */
import { apiError, EDITOR_ROLES, requireApiMember } from "~/auth/api-guards.server";
import { getDb } from "~/db/client.server";
import { ScenarioInputError } from "~/engine/problem";
import { parseScenario } from "~/engine/scenario";
import { CSV_FILE_KINDS, CSV_FILE_NAMES, importCsvFiles, MAX_CSV_BYTES, type CsvFiles, type CsvRowError } from "~/models/csv-import";
import { scenarioSize } from "~/models/plan-gates.server";
import { exportScenario } from "~/models/scenarios.server";
import { replaceScenarioInputs } from "~/models/scenario-edits.server";
import { idParam, MAX_BODY_BYTES, requireApiPlan, tooLarge } from "./api-support.server";
import type { Route } from "./+types/api.v1.o.$org.scenarios.$id.import";

export interface ImportAnswer {
  stored: boolean;
  preview: boolean;
  rowCounts: Partial<Record<string, number>>;
  errors: CsvRowError[];
}

function answer(body: ImportAnswer, status = 200): Response {
  return Response.json(body, { status });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return apiError(405, "Use POST here.");
  const { organisation, user } = await requireApiMember(request, params.org, EDITOR_ROLES);
  const id = idParam(params.id, "scenario");
  const declared = Number(request.headers.get("Content-Length") ?? "0");
  if (declared > MAX_BODY_BYTES) return tooLarge(declared);
  const db = await getDb();
  const current = await exportScenario(db, organisation.id, id);
  if (!current) return apiError(404, "No such scenario in this organisation.");

  let form: FormData;
  try {
    form = await request.formData();
  } catch {
    return apiError(400, "Send the files as multipart/form-data.");
  }
  const preview = form.get("preview") === "1";
  const errors: CsvRowError[] = [];
  const readText = async (field: string, fileName: string): Promise<string | undefined> => {
    const value = form.get(field);
    if (value === null) return undefined;
    if (typeof value === "string") return value;
    if (value.size > MAX_CSV_BYTES) {
      errors.push({ file: fileName, line: null, field: "", message: `${fileName} is ${(value.size / 1024 / 1024).toFixed(1)} MB; the limit is ${(MAX_CSV_BYTES / 1024 / 1024).toFixed(1)} MB per file.` });
      return undefined;
    }
    return value.size === 0 ? undefined : value.text();
  };

  let document: unknown;
  let rowCounts: ImportAnswer["rowCounts"] = {};
  const jsonText = await readText("scenario", "scenario.json");
  if (jsonText !== undefined) {
    try {
      document = { ...JSON.parse(jsonText), name: current.name };
    } catch (error) {
      errors.push({ file: "scenario.json", line: null, field: "", message: `is not valid JSON: ${(error as Error).message}` });
    }
  } else {
    const files: CsvFiles = {};
    for (const kind of CSV_FILE_KINDS) {
      const text = await readText(kind, CSV_FILE_NAMES[kind]);
      if (text !== undefined) files[kind] = text;
    }
    if (errors.length === 0) {
      const result = importCsvFiles(files, {
        name: current.name,
        kmPerWeek: current.kmPerWeek,
        circuity: current.circuity,
        choiceModel: current.choiceModel,
        periods: current.periods,
        plan: current.plan,
        serviceLines: current.serviceLines,
        providers: current.providers,
      });
      rowCounts = result.rowCounts;
      errors.push(...result.errors);
      document = result.scenario ? { ...result.scenario, ...(current.dataDate ? { dataDate: current.dataDate } : {}) } : undefined;
    }
  }
  if (errors.length > 0 || document === undefined) return answer({ stored: false, preview, rowCounts, errors }, preview ? 200 : 400);

  if (preview) {
    // The JSON path has not been through the engine's checks yet: run them without storing.
    try {
      parseScenario(document);
    } catch (error) {
      if (!(error instanceof ScenarioInputError)) throw error;
      return answer({ stored: false, preview, rowCounts, errors: issuesAsErrors(error) });
    }
    return answer({ stored: false, preview, rowCounts, errors: [] });
  }
  await requireApiPlan(organisation, ["problemSize"], scenarioSize(document));
  try {
    await replaceScenarioInputs(organisation.id, id, document, { userId: user.id, reason: jsonText !== undefined ? "json import" : "csv import" });
  } catch (error) {
    if (!(error instanceof ScenarioInputError)) throw error;
    return answer({ stored: false, preview, rowCounts, errors: issuesAsErrors(error) }, 400);
  }
  return answer({ stored: true, preview, rowCounts, errors: [] });
}

function issuesAsErrors(error: ScenarioInputError): CsvRowError[] {
  return error.issues.map((issue) => ({ file: "scenario.json", line: null, field: issue.path, message: issue.message }));
}
