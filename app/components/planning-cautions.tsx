import { PLANNING_CAUTIONS } from "~/engine/cautions";

export { PLANNING_CAUTIONS };

export function PlanningCautions({ compact = false }: { compact?: boolean }) {
  return (
    <aside aria-label="Planning cautions" className={compact ? "text-xs text-ink-soft" : "text-sm text-ink-soft"}>
      <p className="font-semibold text-ink">A model, not a clinical decision</p>
      <ul className="mt-1 list-disc space-y-0.5 pl-5">
        {PLANNING_CAUTIONS.map((caution) => (
          <li key={caution}>{caution}</li>
        ))}
      </ul>
    </aside>
  );
}
