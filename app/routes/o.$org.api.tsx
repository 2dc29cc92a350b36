/**
 * The API, documented for the people who will call it: every endpoint with a request and a
 * response example, written for this organisation's own slug. Every member can read it.
 */
import { Link } from "react-router";
import { requireMembership } from "~/auth/guards.server";
import { config } from "~/config.server";
import type { Route } from "./+types/o.$org.api";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireMembership(request, params.org);
  return { slug: organisation.slug, baseUrl: config().appUrl };
}

interface Endpoint {
  method: string;
  path: string;
  who: string;
  what: string;
  request?: string;
  response: string;
}

function endpoints(slug: string): Endpoint[] {
  const scenario = `{
  "schema": "equilibra/scenario@1", "name": "Two practices, one site",
  "kmPerWeek": 15, "circuity": 1.3, "choiceModel": { "kind": "wardrop" },
  "serviceLines": [ { "id": "ortho", "name": "Orthopaedics", "standardWeeks": 18 } ],
  "sources": [
    { "id": "ZZP001", "lat": 49.81, "lon": -30.29, "demand": { "ortho": 4.2 }, "outsideCost": { "ortho": 30 }, "outsideSpread": 0.4 },
    { "id": "ZZP002", "lat": 49.86, "lon": -30.12, "demand": { "ortho": 2.5 } } ],
  "providers": [
    { "id": "ZZS1", "lat": 49.83, "lon": -30.2, "sector": "public", "lines": { "ortho": { "teams": 3, "ratePerTeam": 3, "serviceCv": 1 } } } ]
}`;
  return [
    {
      method: "POST",
      path: "/api/v1/solve",
      who: "any signed-in person or live token",
      what: "Solves an exchange-format scenario under every rule; nothing is stored.",
      request: scenario,
      response: `200 {
  "schema": "equilibra/result@1", "priceOfAnarchy": 1.0,
  "lines": { "ortho": { "priceOfAnarchy": 1.0, "rules": {
    "choice": { "converged": true, "iterations": 7, "relativeGap": 1e-10, "totalCost": 21.9,
                "servedPerWeek": 6.6, "balkedPerWeek": 0.1, "meanWaitWeeks": 2.4, "meanKm": 6.8,
                "shareWithinStandard": 1.0,
                "providers": [ { "id": "ZZS1", "inflow": 6.6, "utilisation": 0.73, "meanWaitWeeks": 2.4, "shareWithinStandard": 1.0 } ],
                "sources": [ { "id": "ZZP001", "balked": 0.1, "meanWaitWeeks": 2.4, "meanKm": 2.9, "flows": { "ZZS1": 4.1 } } ] },
    "optimum": { … }, "nearest": { … }, "capacityShare": { … } } } },
  "assumptions": { "kmPerWeek": 15, … }, "cautions": [ … ], "warnings": [] }
400 { "error": { "status": 400, "message": "The scenario is not valid.",
                 "issues": [ { "path": "sources[1].demand.ortho", "message": "must be a number ≥ 0 (referrals/week); got -2" } ] } }
422 { "error": { "status": 422, "message": "No steady state for service line \\"ortho\\": …" } }
503 Retry-After: 4
    { "error": { "status": 503, "message": "The server is busy: all 3 solve workers are working and 64 solves are waiting. Try again in about 4 s." } }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/scenarios`,
      who: "every member",
      what: "The organisation's scenarios (add ?archived=1 to include archived ones).",
      response: `200 { "scenarios": [ { "id": 12, "name": "Baseline", "dataDate": "2026-04-01", "parentId": null,
                   "archivedAt": null, "sourceCount": 40, "siteCount": 7, "lineCount": 4, … } ] }`,
    },
    {
      method: "POST",
      path: `/api/v1/o/${slug}/scenarios`,
      who: "planners and administrators",
      what: "Creates a scenario from a document, bare or wrapped with a name and the scenario it derives from.",
      request: `{ "scenario": { "schema": "equilibra/scenario@1", … }, "name": "Winter what-if", "parentId": 12 }`,
      response: `201 { "id": 13, "url": "/o/${slug}/scenarios/13" }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/scenarios/12`,
      who: "every member",
      what: "One scenario: its details and its inputs as an exchange-format document.",
      response: `200 { "id": 12, "name": "Baseline", "description": "…", "dataDate": "2026-04-01", "scenario": { "schema": "equilibra/scenario@1", … } }`,
    },
    {
      method: "PUT",
      path: `/api/v1/o/${slug}/scenarios/12`,
      who: "planners and administrators",
      what: "Replaces the inputs with a complete document in one transaction: a bad document changes nothing.",
      request: `{ "schema": "equilibra/scenario@1", … }`,
      response: `200 { "id": 12, "updated": true }
400 { "error": { "status": 400, "message": "The scenario is not valid; nothing was changed.", "issues": [ … ] } }`,
    },
    {
      method: "PATCH",
      path: `/api/v1/o/${slug}/scenarios/12`,
      who: "planners and administrators",
      what: "Renames, describes, dates, archives or restores a scenario.",
      request: `{ "name": "Baseline 2026/27", "dataDate": "2026-04-01", "archived": false }`,
      response: `200 { "id": 12, "updated": true }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/scenarios/12/export?format=csv&file=practices.csv`,
      who: "every member",
      what: "Downloads the inputs: format=json (default) or format=csv with file= practices.csv, sites.csv, capacities.csv, service-lines.csv or travel-km.csv. Re-importing an export gives the same scenario.",
      response: `200 text/csv
id,name,lat,lon,deprivationDecile,population,outsideSpread,demand.ortho,outsideCost.ortho
ZZP001,Harbour Lane Surgery,49.81,-30.29,2,12000,0.4,4.2,30`,
    },
    {
      method: "POST",
      path: `/api/v1/o/${slug}/scenarios/12/import`,
      who: "planners and administrators",
      what: "Replaces the inputs from files (multipart/form-data: practices, sites, capacities, optional travelKm and serviceLines as CSV, or scenario as JSON). With preview=1 nothing is stored. Files up to 2 MB each.",
      request: `curl -H "Authorization: Bearer $TOKEN" -F practices=@practices.csv -F sites=@sites.csv -F capacities=@capacities.csv \\
     ${"{base}"}/api/v1/o/${slug}/scenarios/12/import`,
      response: `200 { "stored": true, "preview": false, "rowCounts": { "practices": 40, "sites": 7, "capacities": 21 }, "errors": [] }
400 { "stored": false, "preview": false, "rowCounts": { … },
      "errors": [ { "file": "practices.csv", "line": 7, "field": "demand.ortho", "message": "must be a number ≥ 0 (referrals/week); got \\"-3\\"" } ] }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/scenarios/12/runs`,
      who: "every member",
      what: "The scenario's runs, newest first.",
      response: `200 { "runs": [ { "id": 31, "label": "baseline", "converged": true, "durationMs": 412.5, "createdByLogin": "a-planner",
                "createdAt": "2026-05-03T09:12:44.000Z", "priceOfAnarchy": 1.046 } ] }`,
    },
    {
      method: "POST",
      path: `/api/v1/o/${slug}/scenarios/12/runs`,
      who: "planners and administrators",
      what: "Solves the scenario as stored now and keeps the run: inputs snapshot, result, diagnostics, who and when.",
      request: `{ "label": "baseline" }`,
      response: `201 { "run": { "id": 32, "converged": true, … }, "url": "/o/${slug}/scenarios/12?run=32" }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/runs/32`,
      who: "planners, administrators and readers; access officers once it is published; provider managers use the site outlook",
      what: "One run with its input snapshot and result; ?format=csv&file=results-sites.csv (or results-practices.csv) for CSV headed by the assumptions and cautions.",
      response: `200 { "run": { "id": 32, "scenarioId": 12, "input": { "schema": "equilibra/scenario@1", … }, "result": { "schema": "equilibra/result@1", … } } }`,
    },
    {
      method: "PUT",
      path: `/api/v1/o/${slug}/runs/32/publication`,
      who: "planners and administrators (GET: every member who may see the run)",
      what: "Publishes a run to provider managers and patient-access officers; DELETE withdraws it. Both are written to the audit log.",
      response: `200 { "published": true, "publishedAt": "2026-11-30T09:12:00.000Z" }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/outlook/sites?run=32&rule=choice&line=ortho&target=0.92`,
      who: "planners, administrators, provider managers (published runs, their own sites only)",
      what: "Expected weekly inflow per site, line and period by priority class, with utilisation, waits, share within the standard and the teams needed to reach the target share; &format=csv for CSV. /outlook/sites/ZZS2 gives one site (404 outside your sites).",
      response: `200 { "run": { "id": 32, "publishedAt": "…", "dataDate": "2026-04-01" }, "assumptions": { … }, "cautions": [ … ],
  "outlook": { "targetShareWithin": 0.92, "periods": [ { "id": "jan", "label": "January", "weeks": 4.4 } … ],
    "rows": [ { "siteId": "ZZS2", "lineId": "ortho", "periodId": "jan", "rule": "choice", "urgentInflow": 3.1, "routineInflow": 17.4,
                "utilisation": 0.86, "meanWaitWeeks": 5.2, "shareWithinStandard": 0.97, "teamsAvailable": 4, "teamsNeeded": 5 } … ] } }`,
    },
    {
      method: "GET",
      path: `/api/v1/o/${slug}/outlook/balking?run=32&rule=choice`,
      who: "planners, administrators, patient-access officers (published runs)",
      what: "Referrals per week expected to leave for private care by practice, line and deprivation decile, and the practices pushed furthest or losing most; &format=csv for CSV. /outlook/balking/sensitivity?run=32&line=ortho&privateCost=0.5,1,1.5&capacity=1,1.1 re-solves each point.",
      response: `200 { "run": { … }, "assumptions": { … }, "cautions": [ … ],
  "outlook": { "rule": "choice", "totalBalkedPerWeek": 69.3, "totalDemandPerWeek": 812.5,
    "practices": [ { "sourceId": "ZZP014", "deprivationDecile": 2, "balkedPerWeek": 1.8, "balkedShare": 0.09, "meanKm": 22.4 } … ],
    "byDecile": [ { "decile": 1, "practices": 5, "balkedPerWeek": 6.2, "balkedShare": 0.07 } … ], "furthest": [ … ], "mostBalking": [ … ] } }`,
    },
    {
      method: "POST",
      path: `/api/v1/o/${slug}/scenarios/12/advisor`,
      who: "planners and administrators",
      what: "Where N extra teams help most: greedy placement with each step re-solved, under choice and under central allocation, confirmed by an exact integer placement when the problem is small.",
      request: `{ "extraTeams": 3, "lines": ["ortho"], "siteLimits": { "ZZS2": 1 } }`,
      response: `200 { "scenarioId": 12, "advice": { … the greedy steps per rule with each step's gain in total cost, the first step's ranking of every site line, and the exact check … } }`,
    },
  ];
}

export default function ApiPage({ loaderData }: Route.ComponentProps) {
  const { slug, baseUrl } = loaderData;
  return (
    <div className="max-w-4xl space-y-6">
      <h1 className="text-2xl font-semibold">API</h1>
      <p className="text-sm">
        JSON over HTTPS under <code>{baseUrl}/api/v1/</code>. Authenticate with your browser session or a personal token sent as <code>Authorization: Bearer &lt;token&gt;</code> (
        <Link className="text-accent underline" to={`/o/${slug}/settings/tokens`}>
          create one
        </Link>
        ). A token acts with your current role in this organisation and reaches only this organisation: anything else answers 404. Errors always look like{" "}
        <code>{`{ "error": { "status", "message", "issues"? } }`}</code>: 401 without a valid credential, 403 when your role does not allow the call, 404 when there is
        nothing to reach, 400 for invalid input (each issue names its path), 413 above 12 MB.
      </p>
      <p className="text-sm">
        Results are planning estimates for populations, not decisions about individual patients; every result carries its assumptions and these cautions. Figures in
        the examples below are illustrative.
      </p>
      {endpoints(slug).map((endpoint) => (
        <section key={`${endpoint.method} ${endpoint.path}`} className="rounded border border-rule bg-white p-4" aria-label={`${endpoint.method} ${endpoint.path}`}>
          <h2 className="font-mono text-sm font-semibold">
            <span className="mr-2 rounded bg-accent-soft px-1.5 py-0.5 text-accent">{endpoint.method}</span>
            {endpoint.path}
          </h2>
          <p className="mt-1 text-sm">
            {endpoint.what} <span className="text-ink-soft">Who: {endpoint.who}.</span>
          </p>
          {endpoint.request && (
            <>
              <p className="mt-2 text-xs font-semibold uppercase tracking-wide text-ink-soft">Request</p>
              <pre className="overflow-x-auto rounded bg-paper p-2 text-xs">{endpoint.request.replace("{base}", baseUrl)}</pre>
            </>
          )}
          <p className="mt-2 text-xs font-semibold uppercase tracking-wide text-ink-soft">Response</p>
          <pre className="overflow-x-auto rounded bg-paper p-2 text-xs">{endpoint.response}</pre>
        </section>
      ))}
      <section className="rounded border border-rule bg-white p-4 text-sm">
        <h2 className="font-semibold">Example with curl</h2>
        <pre className="mt-2 overflow-x-auto rounded bg-paper p-2 text-xs">{`TOKEN=eqb_…   # from Settings → API tokens
curl -s -H "Authorization: Bearer $TOKEN" ${baseUrl}/api/v1/o/${slug}/scenarios
curl -s -H "Authorization: Bearer $TOKEN" -H "Content-Type: application/json" \\
     --data @scenario.json ${baseUrl}/api/v1/solve`}</pre>
      </section>
    </div>
  );
}

export function meta() {
  return [{ title: "API · Equilibra" }];
}
