/** The cautions every page that shows or exports results carries (see PRODUCT.md, "Cautions to show"). */
export const PLANNING_CAUTIONS = [
  "Results are planning estimates for populations from a queueing model, not decisions about individual patients.",
  "Clinical prioritisation stays with clinicians; local access policy, contracts and patients' legal right to choose prevail.",
  "Read every figure beside its assumptions and data date, and weigh efficiency together with equity.",
] as const;

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
