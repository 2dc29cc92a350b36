/**
 * What-ifs: move a slider (willingness to travel, private-care cost, extra teams at a site) and the
 * engine re-solves in a Web Worker in the browser — no round trip. The figures replace the stored
 * run's in the comparison and on the map until the planner goes back to the run; a what-if worth
 * keeping is saved as a copy of the scenario (the original is never changed here).
 */
import { useCallback, useEffect, useMemo, useState } from "react";
import { useFetcher, useNavigate } from "react-router";
import { isResultDocument, type ResultDocument } from "~/models/result-document";
import { applyWhatIf, baselineWhatIf, type ScenarioDoc, type WhatIf } from "~/models/scenario-document";
import type { WorkerResponse } from "~/engine/worker";
import { useEngineWorker } from "./use-engine-worker";

interface SaveReply {
  id?: number;
  url?: string;
  error?: { message: string; issues?: { path: string; message: string }[] };
}

export function WhatIfPanel({
  doc,
  scenarioId,
  createUrl,
  canSave,
  onResult,
}: {
  doc: ScenarioDoc;
  scenarioId: number;
  createUrl: string;
  canSave: boolean;
  onResult: (result: ResultDocument | null, elapsedMs?: number) => void;
}) {
  const [whatIf, setWhatIf] = useState<WhatIf>(() => baselineWhatIf(doc));
  const [active, setActive] = useState(false);
  // The answer goes up in the same task as the panel's status, so both show in one render.
  const showAnswer = useCallback(
    (response: WorkerResponse, elapsedMs: number) =>
      onResult(response.ok && isResultDocument(response.result) ? (response.result as unknown as ResultDocument) : null, elapsedMs),
    [onResult],
  );
  const { state, solve, warmUp, reset } = useEngineWorker(showAnswer);
  const adjusted = useMemo(() => applyWhatIf(doc, whatIf), [doc, whatIf]);
  const fetcher = useFetcher<SaveReply>();
  const navigate = useNavigate();
  const [name, setName] = useState(`${doc.name ?? "Scenario"} — what-if`);

  useEffect(() => {
    if (fetcher.state === "idle" && fetcher.data?.url) navigate(fetcher.data.url);
  }, [fetcher.state, fetcher.data, navigate]);

  // Each change goes to the worker straight from the input event: the worker queue keeps only the
  // newest position while a solve runs, so no settling delay is needed.
  const set = (change: Partial<WhatIf>) => {
    const next = { ...whatIf, ...change };
    setActive(true);
    setWhatIf(next);
    solve(applyWhatIf(doc, next));
  };
  const extra = whatIf.extraTeams ?? { siteId: doc.providers[0]?.id ?? "", lineId: doc.serviceLines[0]?.id ?? "", teams: 0 };
  const failure = state.status === "done" && !state.response.ok ? state.response : null;

  return (
    // Reaching for a slider (pointer or keyboard) warms the engine up: a cold first solve takes
    // several times longer than the next ones.
    <div className="space-y-4" data-testid="what-if-panel" onPointerEnter={() => warmUp(adjusted)} onFocus={() => warmUp(adjusted)}>
      <div className="grid gap-4 md:grid-cols-3">
        <label className="text-sm">
          <span className="font-semibold">Willingness to travel (κ)</span>
          <span className="block text-xs text-ink-soft">km a patient would travel to wait one week less</span>
          <Slider
            range={[5, 50, 1]}
            value={whatIf.kmPerWeek}
            onChange={(kmPerWeek) => set({ kmPerWeek })}
            label="Willingness to travel, km per week"
            shown={`${whatIf.kmPerWeek} km/week`}
          />
        </label>
        <label className="text-sm">
          <span className="font-semibold">Private-care cost</span>
          <span className="block text-xs text-ink-soft">every practice's outside-option cost, relative to the scenario</span>
          <Slider
            range={[0.5, 1.5, 0.05]}
            value={whatIf.outsideCostFactor}
            onChange={(outsideCostFactor) => set({ outsideCostFactor })}
            label="Private-care cost, share of the scenario's"
            shown={`${Math.round(whatIf.outsideCostFactor * 100)}% of the scenario's`}
          />
        </label>
        <fieldset className="text-sm">
          <legend className="font-semibold">Extra teams at a site</legend>
          <span className="block text-xs text-ink-soft">added to the site's teams on one line</span>
          <div className="mt-1 flex flex-wrap gap-2">
            <select aria-label="Site for extra teams" value={extra.siteId} onChange={(event) => set({ extraTeams: { ...extra, siteId: event.target.value } })} className="rounded border border-rule px-1 py-0.5">
              {doc.providers.map((site) => (
                <option key={site.id} value={site.id}>
                  {site.name ?? site.id}
                </option>
              ))}
            </select>
            <select aria-label="Line for extra teams" value={extra.lineId} onChange={(event) => set({ extraTeams: { ...extra, lineId: event.target.value } })} className="rounded border border-rule px-1 py-0.5">
              {doc.serviceLines.map((line) => (
                <option key={line.id} value={line.id}>
                  {line.name ?? line.id}
                </option>
              ))}
            </select>
          </div>
          <Slider range={[0, 10, 1]} value={extra.teams} onChange={(teams) => set({ extraTeams: { ...extra, teams } })} label="Extra teams" shown={`+${extra.teams} teams`} />
        </fieldset>
      </div>
      <div className="flex flex-wrap items-center gap-3 text-sm">
        <span role="status" data-testid="what-if-status" data-solved={state.status === "done" ? String(state.response.id) : ""}>
          {!active
            ? "Move a slider to re-solve in your browser."
            : state.status === "solving"
              ? "Solving…"
              : state.status === "done" && state.response.ok
                ? `What-if solved in ${state.elapsedMs.toFixed(0)} ms; the comparison and map below show it (the constrained plan is left out of what-ifs).`
                : ""}
        </span>
        {failure && (
          <span role="alert" className="text-bad">
            {failure.message}
          </span>
        )}
        {active && (
          <button
            type="button"
            className="rounded border border-rule px-3 py-1 hover:bg-accent-soft"
            onClick={() => {
              setActive(false);
              setWhatIf(baselineWhatIf(doc));
              reset();
              onResult(null);
            }}
          >
            Back to the stored run
          </button>
        )}
      </div>
      {active && canSave && (
        <form
          className="flex flex-wrap items-end gap-2 text-sm"
          onSubmit={(event) => {
            event.preventDefault();
            fetcher.submit({ scenario: adjusted, name, parentId: scenarioId } as never, { method: "post", action: createUrl, encType: "application/json" });
          }}
        >
          <label>
            Name of the copy
            <input value={name} onChange={(event) => setName(event.target.value)} className="ml-2 w-72 rounded border border-rule px-2 py-1" />
          </label>
          <button type="submit" disabled={fetcher.state !== "idle"} className="rounded bg-accent px-3 py-1 text-white">
            Save what-if as a scenario copy
          </button>
          {fetcher.data?.error && (
            <span role="alert" className="text-bad">
              {fetcher.data.error.message}
            </span>
          )}
        </form>
      )}
    </div>
  );
}

/** A what-if slider (range as [min, max, step]) with its value shown beneath in its unit. */
function Slider({ range: [min, max, step], value, onChange, label, shown }: {
  range: [number, number, number];
  value: number;
  onChange: (value: number) => void;
  label: string;
  shown: string;
}) {
  return (
    <>
      <input
        type="range"
        min={min}
        max={max}
        step={step}
        value={value}
        onChange={(event) => onChange(Number(event.target.value))}
        aria-label={label}
        className="w-full"
      />
      <span className="num block">{shown}</span>
    </>
  );
}
