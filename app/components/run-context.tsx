/**
 * What every outlook and brief shows beside its figures: which run they come from, whether it is
 * published, the data date, the model's assumptions and the planning cautions.
 */
import { PlanningCautions } from "./planning-cautions";

export interface RunContextData {
  scenarioName: string;
  runId: number;
  runLabel: string | null;
  ranAt: string;
  publishedAt: string | null;
  publishedByName: string | null;
  dataDate: string | null;
  assumptions: {
    kmPerWeek: number;
    kmPerWeekNote?: string;
    circuity: number;
    travel?: string;
    choiceModel?: { kind: string; scale?: number };
    urgentReferrals?: string;
    periodTeams?: string;
    standardWeeks?: Record<string, number>;
  };
}

function day(iso: string): string {
  return new Date(iso).toISOString().slice(0, 10);
}

export function runTitle(context: Pick<RunContextData, "runId" | "runLabel" | "ranAt">): string {
  return `${context.runLabel ?? `Run ${context.runId}`} (${day(context.ranAt)})`;
}

export function RunContext({ context, compact = false }: { context: RunContextData; compact?: boolean }) {
  const { assumptions } = context;
  const standards = Object.entries(assumptions.standardWeeks ?? {})
    .map(([line, weeks]) => `${line} ${weeks} weeks`)
    .join(", ");
  return (
    <section aria-label="Assumptions and data date" className="rounded border border-rule bg-white p-4 text-sm break-inside-avoid">
      <p>
        <span className="font-semibold">{context.scenarioName}</span> · {runTitle(context)} ·{" "}
        {context.publishedAt ? (
          <span>
            published {day(context.publishedAt)}
            {context.publishedByName ? ` by ${context.publishedByName}` : ""}
          </span>
        ) : (
          <span className="text-warn">not published</span>
        )}
      </p>
      <p className="mt-1">
        <span className="font-semibold">Data date:</span> {context.dataDate ?? "not stated"}
      </p>
      <dl className="mt-2 grid grid-cols-1 gap-x-6 gap-y-1 md:grid-cols-2">
        <div>
          <dt className="inline font-semibold">κ: </dt>
          <dd className="inline">
            {assumptions.kmPerWeek} km a patient would travel to wait one week less
            {!compact && assumptions.kmPerWeekNote ? <span className="block text-xs text-ink-soft">{assumptions.kmPerWeekNote}</span> : null}
          </dd>
        </div>
        <div>
          <dt className="inline font-semibold">Travel: </dt>
          <dd className="inline">{assumptions.travel ?? `great-circle km × ${assumptions.circuity}`}</dd>
        </div>
        {assumptions.choiceModel && (
          <div>
            <dt className="inline font-semibold">Choice model: </dt>
            <dd className="inline">
              {assumptions.choiceModel.kind === "logit" ? `logit, θ = ${assumptions.choiceModel.scale} per week-equivalent` : "Wardrop equilibrium (every used option costs the same)"}
            </dd>
          </div>
        )}
        {standards && (
          <div>
            <dt className="inline font-semibold">Waiting standards: </dt>
            <dd className="inline">{standards}</dd>
          </div>
        )}
        {!compact && assumptions.urgentReferrals && (
          <div>
            <dt className="inline font-semibold">Urgent referrals: </dt>
            <dd className="inline">{assumptions.urgentReferrals}</dd>
          </div>
        )}
        {!compact && assumptions.periodTeams && (
          <div>
            <dt className="inline font-semibold">Periods: </dt>
            <dd className="inline">{assumptions.periodTeams}</dd>
          </div>
        )}
      </dl>
      <div className="mt-3">
        <PlanningCautions compact />
      </div>
    </section>
  );
}
