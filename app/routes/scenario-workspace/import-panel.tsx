/**
 * Import into the open scenario: CSV files (practices, sites, capacities, optional km matrix and
 * service lines) or one exchange-format JSON file. The browser reads the files with the same
 * module the server uses and shows every row error before anything is sent; only a clean preview
 * can be stored, and the server checks it again and stores it in one transaction.
 */
import { useEffect, useState } from "react";
import { useFetcher } from "react-router";
import { ImportErrorList } from "~/components/import-errors";
import { ScenarioInputError } from "~/engine/problem";
import { parseScenario } from "~/engine/scenario";
import { CSV_FILE_KINDS, CSV_FILE_NAMES, importCsvFiles, type CsvFileKind, type CsvRowError } from "~/models/csv-import";
import type { ScenarioDoc } from "~/models/scenario-document";

type Picked = Partial<Record<CsvFileKind | "scenario", File>>;

interface Preview {
  errors: CsvRowError[];
  rowCounts: Partial<Record<string, number>>;
  ready: boolean;
}

interface ImportReply {
  stored?: boolean;
  errors?: CsvRowError[];
  error?: { message: string };
}

async function previewFiles(picked: Picked, doc: ScenarioDoc): Promise<Preview> {
  if (picked.scenario) {
    try {
      parseScenario(JSON.parse(await picked.scenario.text()));
      return { errors: [], rowCounts: {}, ready: true };
    } catch (error) {
      if (error instanceof ScenarioInputError) {
        return { errors: error.issues.map((issue) => ({ file: picked.scenario?.name ?? "scenario.json", line: null, field: issue.path, message: issue.message })), rowCounts: {}, ready: false };
      }
      return { errors: [{ file: picked.scenario.name, line: null, field: "", message: `is not valid JSON: ${(error as Error).message}` }], rowCounts: {}, ready: false };
    }
  }
  const files: Partial<Record<CsvFileKind, string>> = {};
  for (const kind of CSV_FILE_KINDS) {
    const file = picked[kind];
    if (file) files[kind] = await file.text();
  }
  const result = importCsvFiles(files, {
    name: doc.name,
    kmPerWeek: doc.kmPerWeek,
    circuity: doc.circuity,
    choiceModel: doc.choiceModel,
    periods: doc.periods,
    plan: doc.plan,
    serviceLines: doc.serviceLines,
    providers: doc.providers,
  });
  return { errors: result.errors, rowCounts: result.rowCounts, ready: result.errors.length === 0 && Boolean(result.scenario) };
}

export function ImportPanel({ doc, importUrl }: { doc: ScenarioDoc; importUrl: string }) {
  const [picked, setPicked] = useState<Picked>({});
  const [preview, setPreview] = useState<Preview | null>(null);
  const [inputKey, setInputKey] = useState(0);
  const fetcher = useFetcher<ImportReply>();

  useEffect(() => {
    let cancelled = false;
    if (Object.keys(picked).length === 0) {
      setPreview(null);
      return;
    }
    void previewFiles(picked, doc).then((next) => {
      if (!cancelled) setPreview(next);
    });
    return () => {
      cancelled = true;
    };
  }, [picked, doc]);

  const reply = fetcher.state === "idle" ? fetcher.data : undefined;
  useEffect(() => {
    if (reply?.stored) {
      setPicked({});
      setInputKey((key) => key + 1);
    }
  }, [reply]);

  const pick = (field: CsvFileKind | "scenario") => (event: React.ChangeEvent<HTMLInputElement>) => {
    const file = event.target.files?.[0];
    setPicked((current) => {
      const next = { ...current };
      if (file) next[field] = file;
      else delete next[field];
      return next;
    });
  };

  const store = () => {
    const form = new FormData();
    for (const [field, file] of Object.entries(picked)) if (file) form.append(field, file, file.name);
    fetcher.submit(form, { method: "post", action: importUrl, encType: "multipart/form-data" });
  };

  return (
    <div className="space-y-3" data-testid="import-panel">
      <p className="text-sm text-ink-soft">
        Replaces this scenario's practices, sites and capacities; the assumptions, periods and runs stay. CSV layouts: practices.csv <code>id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.&lt;line&gt;,outsideCost.&lt;line&gt;</code>; sites.csv{" "}
        <code>id,name,lat,lon,sector</code>; capacities.csv <code>site,line,teams,ratePerTeam,serviceCv,minWeekly,maxWeekly</code>; travel-km.csv <code>source,site,km</code> or a matrix. 2 MB per file at most.
      </p>
      <div key={inputKey} className="grid gap-3 sm:grid-cols-3">
        {(["practices", "sites", "capacities", "travelKm", "serviceLines"] as const).map((kind) => (
          <label key={kind} className="text-sm">
            {CSV_FILE_NAMES[kind]}
            {kind === "travelKm" || kind === "serviceLines" ? <span className="text-ink-soft"> (optional)</span> : null}
            <input type="file" accept=".csv,text/csv" onChange={pick(kind)} aria-label={`Import ${CSV_FILE_NAMES[kind]}`} className="mt-1 block text-sm" />
          </label>
        ))}
        <label className="text-sm">
          or a scenario JSON file
          <input type="file" accept=".json,application/json" onChange={pick("scenario")} aria-label="Import scenario JSON" className="mt-1 block text-sm" />
        </label>
      </div>
      {preview && (
        <div className="space-y-2" data-testid="import-preview">
          {preview.errors.length > 0 ? (
            <ImportErrorList errors={preview.errors} />
          ) : (
            <p role="status" className="rounded border border-good bg-accent-soft px-3 py-2 text-sm">
              Ready to import:{" "}
              {Object.entries(preview.rowCounts)
                .map(([kind, count]) => `${count} rows in ${CSV_FILE_NAMES[kind as CsvFileKind]}`)
                .join(", ") || "the scenario file"}
              . No row has an error.
            </p>
          )}
          <button
            type="button"
            disabled={!preview.ready || fetcher.state !== "idle"}
            onClick={store}
            className="rounded bg-accent px-4 py-1.5 text-white disabled:cursor-not-allowed disabled:opacity-40"
          >
            {fetcher.state !== "idle" ? "Importing…" : "Store the import"}
          </button>
        </div>
      )}
      {reply?.stored && (
        <p role="status" className="rounded border border-good bg-accent-soft px-3 py-2 text-sm">
          Imported. Run the scenario to see results for the new inputs.
        </p>
      )}
      {reply && !reply.stored && (reply.errors?.length ?? 0) > 0 && <ImportErrorList errors={reply.errors ?? []} />}
      {reply?.error && (
        <p role="alert" className="text-sm text-bad">
          {reply.error.message}
        </p>
      )}
    </div>
  );
}
