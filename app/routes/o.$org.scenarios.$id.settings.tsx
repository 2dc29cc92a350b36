/**
 * A scenario's settings: description, data date and the model's assumptions (willingness to
 * travel, circuity, choice model and θ, the constrained plan's limits). Planners and
 * administrators only; anyone else gets 403.
 */
import { data, Form, Link, redirect, useNavigation } from "react-router";
import { z } from "zod";
import { EDITOR_ROLES } from "~/auth/api-guards.server";
import { requireRole } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { getDb } from "~/db/client.server";
import { ScenarioInputError } from "~/engine/problem";
import { planRefusal, scenarioSize } from "~/models/plan-gates.server";
import { setAssumptions, type ScenarioDoc } from "~/models/scenario-document";
import { replaceScenarioInputs, updateScenarioDetails } from "~/models/scenario-edits.server";
import { exportScenario, getScenario } from "~/models/scenarios.server";
import type { Route } from "./+types/o.$org.scenarios.$id.settings";

const optionalNumber = (message: string, ok: (value: number) => boolean) =>
  z
    .string()
    .trim()
    .transform((text, ctx) => {
      if (text === "") return undefined;
      const value = Number(text);
      if (!Number.isFinite(value) || !ok(value)) {
        ctx.addIssue({ code: "custom", message });
        return z.NEVER;
      }
      return value;
    });

const settingsSchema = z
  .object({
    description: z.string().max(10_000, "Keep the description under 10,000 characters."),
    dataDate: z
      .string()
      .trim()
      .refine((text) => text === "" || /^\d{4}-\d{2}-\d{2}$/.test(text), "Give the data date as YYYY-MM-DD, e.g. 2026-04-01."),
    kmPerWeek: z.coerce.number({ error: "Enter a number of km per week." }).positive("Willingness to travel must be more than 0 km per week.").max(1000, "More than 1,000 km per week is not plausible."),
    circuity: z.coerce.number({ error: "Enter a ratio such as 1.3." }).min(1, "Circuity is road km per straight-line km: at least 1.").max(5, "Circuity above 5 is not plausible."),
    choiceKind: z.enum(["wardrop", "logit"], { error: "Choose Wardrop or logit." }),
    logitScale: optionalNumber("θ must be a number greater than 0.", (v) => v > 0),
    planMaxUtilisation: optionalNumber("The utilisation ceiling must be a percentage between 1 and 99.", (v) => v >= 1 && v <= 99),
    planMaxKm: optionalNumber("The longest journey must be a number of km greater than 0.", (v) => v > 0),
  })
  .superRefine((value, ctx) => {
    if (value.choiceKind === "logit" && value.logitScale === undefined) ctx.addIssue({ code: "custom", path: ["logitScale"], message: "The logit model needs θ, e.g. 2." });
  });

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, EDITOR_ROLES);
  const id = /^\d+$/.test(params.id) ? Number(params.id) : Number.NaN;
  const db = await getDb();
  const scenario = await getScenario(db, organisation.id, id);
  if (!scenario) throw notFound();
  const document = (await exportScenario(db, organisation.id, id)) as ScenarioDoc;
  return {
    slug: organisation.slug,
    scenario: { id: scenario.id, name: scenario.name, description: scenario.description, dataDate: scenario.dataDate ?? "" },
    assumptions: { kmPerWeek: document.kmPerWeek, circuity: document.circuity, choiceModel: document.choiceModel, plan: document.plan ?? null },
  };
}

export async function action({ request, params }: Route.ActionArgs) {
  const { organisation, user } = await requireRole(request, params.org, EDITOR_ROLES);
  const id = /^\d+$/.test(params.id) ? Number(params.id) : Number.NaN;
  const db = await getDb();
  const document = (await exportScenario(db, organisation.id, id)) as ScenarioDoc | null;
  if (!document) throw notFound();
  const form = Object.fromEntries([...(await request.formData()).entries()].map(([key, value]) => [key, typeof value === "string" ? value : ""]));
  const parsed = settingsSchema.safeParse(form);
  if (!parsed.success) return data({ fieldErrors: z.flattenError(parsed.error).fieldErrors as Record<string, string[] | undefined>, formError: null }, { status: 400 });
  const value = parsed.data;
  const plan = {
    ...(value.planMaxUtilisation !== undefined ? { maxUtilisation: value.planMaxUtilisation / 100 } : {}),
    ...(value.planMaxKm !== undefined ? { maxKm: value.planMaxKm } : {}),
  };
  const next = setAssumptions(document, {
    kmPerWeek: value.kmPerWeek,
    circuity: value.circuity,
    choiceModel: value.choiceKind === "logit" ? { kind: "logit", scale: value.logitScale as number } : { kind: "wardrop" },
    plan,
  });
  const refusal = await planRefusal(organisation, ["problemSize"], scenarioSize(next));
  if (refusal) return data({ fieldErrors: {}, formError: refusal.message }, { status: 403 });
  try {
    await replaceScenarioInputs(organisation.id, id, next, { userId: user.id, reason: "settings" });
  } catch (error) {
    if (!(error instanceof ScenarioInputError)) throw error;
    return data({ fieldErrors: {}, formError: error.message }, { status: 400 });
  }
  await updateScenarioDetails(organisation.id, id, { description: value.description, dataDate: value.dataDate || null }, user.id);
  return redirect(`/o/${organisation.slug}/scenarios/${id}`);
}

function FieldError({ errors }: { errors?: string[] }) {
  if (!errors?.length) return null;
  return (
    <span role="alert" className="block text-xs text-bad">
      {errors.join(" ")}
    </span>
  );
}

export default function ScenarioSettings({ loaderData, actionData }: Route.ComponentProps) {
  const { slug, scenario, assumptions } = loaderData;
  const errors: Record<string, string[] | undefined> = actionData?.fieldErrors ?? {};
  const busy = useNavigation().state === "submitting";
  const input = "mt-1 block w-40 rounded border border-rule px-2 py-1 text-right";
  return (
    <div className="max-w-3xl space-y-6">
      <p className="text-sm">
        <Link className="text-accent underline" to={`/o/${slug}/scenarios/${scenario.id}`}>
          Back to {scenario.name}
        </Link>
      </p>
      <h1 className="text-2xl font-semibold">Settings and assumptions</h1>
      {actionData?.formError && (
        <p role="alert" className="rounded border border-bad bg-warn-soft px-3 py-2 text-sm">
          {actionData.formError}
        </p>
      )}
      <Form method="post" className="space-y-6">
        <fieldset className="space-y-3 rounded border border-rule bg-white p-4">
          <legend className="px-1 font-semibold">About the scenario</legend>
          <label className="block text-sm">
            Description
            <textarea name="description" defaultValue={scenario.description} rows={3} className="mt-1 block w-full rounded border border-rule px-2 py-1" />
            <FieldError errors={errors.description} />
          </label>
          <label className="block text-sm">
            Data date <span className="text-ink-soft">(the date the inputs describe; shown beside every result)</span>
            <input name="dataDate" defaultValue={scenario.dataDate} placeholder="2026-04-01" className="mt-1 block w-40 rounded border border-rule px-2 py-1" />
            <FieldError errors={errors.dataDate} />
          </label>
        </fieldset>
        <fieldset className="grid gap-4 rounded border border-rule bg-white p-4 sm:grid-cols-2">
          <legend className="px-1 font-semibold">Assumptions</legend>
          <label className="text-sm">
            Willingness to travel (κ), <span className="text-ink-soft">km per week of waiting</span>
            <input name="kmPerWeek" defaultValue={assumptions.kmPerWeek} inputMode="decimal" className={input} />
            <span className="block text-xs text-ink-soft">No settled published value: calibrate to the observed share bypassing their nearest site; read results at 5 and 50 too.</span>
            <FieldError errors={errors.kmPerWeek} />
          </label>
          <label className="text-sm">
            Circuity, <span className="text-ink-soft">road km per straight-line km</span>
            <input name="circuity" defaultValue={assumptions.circuity} inputMode="decimal" className={input} />
            <span className="block text-xs text-ink-soft">Used where no km matrix was uploaded; about 1.3 in towns, 1.5 in rural or coastal areas.</span>
            <FieldError errors={errors.circuity} />
          </label>
          <label className="text-sm">
            Choice model
            <select name="choiceKind" defaultValue={assumptions.choiceModel.kind} className="mt-1 block rounded border border-rule px-2 py-1">
              <option value="wardrop">Wardrop (every used option costs the same)</option>
              <option value="logit">Logit (choices with some randomness)</option>
            </select>
            <FieldError errors={errors.choiceKind} />
          </label>
          <label className="text-sm">
            Logit scale θ, <span className="text-ink-soft">per week-equivalent</span>
            <input name="logitScale" defaultValue={assumptions.choiceModel.kind === "logit" ? assumptions.choiceModel.scale : ""} inputMode="decimal" className={input} />
            <span className="block text-xs text-ink-soft">Only for the logit model; larger θ means patients nearly always take the cheapest option.</span>
            <FieldError errors={errors.logitScale} />
          </label>
          <label className="text-sm">
            Plan: utilisation ceiling, <span className="text-ink-soft">% of capacity</span>
            <input name="planMaxUtilisation" defaultValue={assumptions.plan?.maxUtilisation !== undefined ? Math.round(assumptions.plan.maxUtilisation * 1000) / 10 : ""} inputMode="decimal" className={input} />
            <span className="block text-xs text-ink-soft">Leave both plan fields empty to leave the constrained plan out of runs.</span>
            <FieldError errors={errors.planMaxUtilisation} />
          </label>
          <label className="text-sm">
            Plan: longest journey, <span className="text-ink-soft">km</span>
            <input name="planMaxKm" defaultValue={assumptions.plan?.maxKm ?? ""} inputMode="decimal" className={input} />
            <FieldError errors={errors.planMaxKm} />
          </label>
        </fieldset>
        <button type="submit" disabled={busy} className="rounded bg-accent px-4 py-1.5 text-white">
          {busy ? "Saving…" : "Save settings"}
        </button>
      </Form>
    </div>
  );
}

export function meta() {
  return [{ title: "Scenario settings · Equilibra" }];
}
