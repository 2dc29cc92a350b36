/**
 * The capacity advisor (planners, administrators): given N extra teams — optionally at most so
 * many per site, on chosen lines — which sites gain most. Each team is placed where it lowers total
 * cost most with the line re-solved (under patient choice and under a central hub), and on small
 * problems an exact integer placement confirms the greedy one. The page asks the API
 * (`POST /api/v1/o/:org/scenarios/:id/advisor`) through a fetcher and shows the ranked steps.
 */
import { useEffect, useState } from "react";
import { Link, useFetcher } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { getDb } from "~/db/client.server";
import { formatNumber } from "~/components/data-table";
import { PlanningCautions } from "~/components/planning-cautions";
import type { CapacityAdvice } from "~/engine/capacity-advisor";
import { exportScenario, getScenario } from "~/models/scenarios.server";
import type { Route } from "./+types/o.$org.scenarios.$id.advisor";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, ["administrator", "planner"]);
  const id = /^\d+$/.test(params.id) ? Number(params.id) : Number.NaN;
  const db = await getDb();
  const scenario = await getScenario(db, organisation.id, id);
  const document = scenario ? await exportScenario(db, organisation.id, id) : null;
  if (!scenario || !document) throw notFound();
  return {
    slug: organisation.slug,
    scenario: { id: scenario.id, name: scenario.name, dataDate: scenario.dataDate, kmPerWeek: document.kmPerWeek, circuity: document.circuity },
    lines: document.serviceLines.map((line) => ({ id: line.id, name: line.name ?? line.id })),
    sites: document.providers.map((provider) => ({ id: provider.id, name: provider.name ?? provider.id, lines: Object.keys(provider.lines) })),
  };
}

interface AdvisorReply {
  advice?: CapacityAdvice;
  error?: { message: string; issues?: { path: string; message: string }[] };
}

function fmt(value: number | null | undefined, decimals = 1): string {
  return value === null || value === undefined || !Number.isFinite(value) ? "–" : formatNumber(value, decimals);
}

const RULE_TITLES: Record<string, string> = { choice: "Under patient choice", optimum: "Under a central referral hub (optimum)" };

export default function AdvisorPage({ loaderData }: Route.ComponentProps) {
  const { slug, scenario, lines, sites } = loaderData;
  const fetcher = useFetcher<AdvisorReply>();
  const [extraTeams, setExtraTeams] = useState("2");
  const [chosenLines, setChosenLines] = useState<string[]>(lines.map((line) => line.id));
  const [limits, setLimits] = useState<Record<string, string>>({});
  // The form posts through a fetcher: until the page is hydrated the button waits.
  const [hydrated, setHydrated] = useState(false);
  useEffect(() => setHydrated(true), []);
  const busy = fetcher.state !== "idle";
  const reply = fetcher.data;
  const siteName = Object.fromEntries(sites.map((site) => [site.id, site.name]));
  const lineName = Object.fromEntries(lines.map((line) => [line.id, line.name]));

  function submit(event: React.FormEvent) {
    event.preventDefault();
    const siteLimits = Object.fromEntries(Object.entries(limits).filter(([, value]) => value.trim() !== "").map(([site, value]) => [site, Number(value)]));
    fetcher.submit(
      { extraTeams: Number(extraTeams), lines: chosenLines, siteLimits },
      { method: "post", action: `/api/v1/o/${slug}/scenarios/${scenario.id}/advisor`, encType: "application/json" },
    );
  }

  return (
    <div className="mx-auto max-w-6xl space-y-6 px-6 py-6">
      <header>
        <p className="text-sm">
          <Link to={`/o/${slug}/scenarios/${scenario.id}`} className="text-accent underline">
            ← {scenario.name}
          </Link>
        </p>
        <h1 className="text-2xl font-semibold">Capacity advisor</h1>
        <p className="text-sm text-ink-soft">
          Where would extra teams lower total cost (waiting + travel + private-care cost) most? Each team is placed in turn where it helps most,
          with the service line re-solved after each, so patients' responses to shorter waits are counted. Figures are for the scenario as it is
          stored now (data date {scenario.dataDate ?? "not stated"}; κ = {scenario.kmPerWeek} km per week of waiting; road km = straight-line × {scenario.circuity}).
        </p>
      </header>
      <form onSubmit={submit} className="space-y-4 rounded border border-rule bg-white p-4 text-sm">
        <label className="flex w-48 flex-col">
          Extra teams to place
          <input type="number" min={1} max={20} step={1} value={extraTeams} onChange={(event) => setExtraTeams(event.target.value)} className="rounded border border-rule px-2 py-1 num" name="extraTeams" />
        </label>
        <fieldset>
          <legend className="font-semibold">Service lines the teams may go to</legend>
          <div className="mt-1 flex flex-wrap gap-4">
            {lines.map((line) => (
              <label key={line.id} className="flex items-center gap-1">
                <input
                  type="checkbox"
                  checked={chosenLines.includes(line.id)}
                  onChange={(event) => setChosenLines(event.target.checked ? [...chosenLines, line.id] : chosenLines.filter((id) => id !== line.id))}
                />
                {line.name}
              </label>
            ))}
          </div>
        </fieldset>
        <fieldset>
          <legend className="font-semibold">Most extra teams per site (blank = no limit)</legend>
          <div className="mt-1 grid grid-cols-2 gap-2 md:grid-cols-4">
            {sites.map((site) => (
              <label key={site.id} className="flex flex-col">
                <span>
                  {site.name} <span className="text-xs text-ink-soft">{site.id}</span>
                </span>
                <input
                  type="number"
                  min={0}
                  step={1}
                  value={limits[site.id] ?? ""}
                  onChange={(event) => setLimits({ ...limits, [site.id]: event.target.value })}
                  aria-label={`Limit for ${site.id}`}
                  className="w-24 rounded border border-rule px-2 py-1 num"
                />
              </label>
            ))}
          </div>
        </fieldset>
        <button type="submit" disabled={!hydrated || busy || chosenLines.length === 0} className="rounded bg-accent px-4 py-1.5 font-semibold text-white">
          {busy ? "Solving…" : "Advise"}
        </button>
      </form>

      {reply?.error && (
        <div className="rounded bg-warn-soft p-3 text-sm" role="alert">
          <p>{reply.error.message}</p>
          {reply.error.issues && (
            <ul className="list-disc pl-5">
              {reply.error.issues.map((issue) => (
                <li key={`${issue.path}-${issue.message}`}>
                  {issue.path}: {issue.message}
                </li>
              ))}
            </ul>
          )}
        </div>
      )}

      {reply?.advice && (
        <div className="grid gap-6 md:grid-cols-2" data-testid="advice">
          {reply.advice.rules.map((result) => (
            <section key={result.rule} className="space-y-3 rounded border border-rule bg-white p-4 text-sm" aria-label={RULE_TITLES[result.rule]}>
              <h2 className="text-lg font-semibold">{RULE_TITLES[result.rule] ?? result.rule}</h2>
              <p>
                Total cost {fmt(result.baselineTotalCost)} → <span className="font-semibold">{fmt(result.totalCost)}</span> weeks-equivalent/week; balking{" "}
                {fmt(result.baselineBalkedPerWeek, 2)} → {fmt(result.steps.at(-1)?.balkedPerWeek, 2)} referrals/week.
              </p>
              <table className="w-full" aria-label={`Placement steps ${result.rule}`}>
                <thead className="border-b border-rule text-left">
                  <tr>
                    <th className="py-1">Step</th>
                    <th className="py-1">Site and line</th>
                    <th className="py-1 num">Teams after</th>
                    <th className="py-1 num">Gain (weeks-eq./week)</th>
                  </tr>
                </thead>
                <tbody>
                  {result.steps.map((step) => (
                    <tr key={step.step} className="border-b border-rule" data-testid={`step-${result.rule}-${step.step}`}>
                      <td className="py-1">{step.step}</td>
                      <td className="py-1">
                        {siteName[step.siteId] ?? step.siteId} · {lineName[step.lineId] ?? step.lineId}
                        {step.stageId ? <span className="text-xs text-ink-soft"> (stage {step.stageId})</span> : null}
                      </td>
                      <td className="py-1 num">{step.teamsAfter}</td>
                      <td className="py-1 num">{fmt(step.gain, 2)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
              <p className="text-xs">
                {result.exact.status === "solved"
                  ? result.exact.agreesWithGreedy
                    ? `Confirmed: an exact integer placement over every combination (${result.exact.placementsCompared} line placements solved) gives the same total cost.`
                    : `The exact integer placement does better: total cost ${fmt(result.exact.totalCost)} with ${Object.entries(result.exact.placement)
                        .map(([site, byLine]) => Object.entries(byLine).map(([line, count]) => `${count} at ${site} ${line}`).join(", "))
                        .join(", ")}.`
                  : `Not confirmed exactly: ${result.exact.reason}.`}
              </p>
              <details>
                <summary className="cursor-pointer">Where one team would help most (every site and line)</summary>
                <ol className="mt-1 list-decimal pl-5">
                  {result.firstStepRanking.map((candidate) => (
                    <li key={`${candidate.siteId}-${candidate.lineId}`}>
                      {siteName[candidate.siteId] ?? candidate.siteId} · {lineName[candidate.lineId] ?? candidate.lineId}: <span className="num">{fmt(candidate.gain, 2)}</span>
                    </li>
                  ))}
                </ol>
              </details>
              {result.warnings.length > 0 && (
                <ul className="list-disc pl-5 text-xs text-warn">
                  {result.warnings.map((warning) => (
                    <li key={warning}>{warning}</li>
                  ))}
                </ul>
              )}
            </section>
          ))}
        </div>
      )}
      <p className="text-xs text-ink-soft">
        Greedy placement is exact when each site's gains fall with every team it gets and sites do not interact; here patients move between
        sites, so the exact check runs whenever the number of combinations is small enough.
      </p>
      <PlanningCautions />
    </div>
  );
}

export function meta() {
  return [{ title: "Capacity advisor · Equilibra" }];
}
