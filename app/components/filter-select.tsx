/** A labelled select for GET filter forms (run, rule, service line, period) on the outlook pages. */
export function FilterSelect({
  label,
  name,
  value,
  options,
  allLabel,
}: {
  label: string;
  name: string;
  value: string | number | undefined;
  options: { value: string | number; label: string }[];
  /** When given, a first option with an empty value standing for "no filter". */
  allLabel?: string;
}) {
  return (
    <label className="flex flex-col">
      {label}
      <select name={name} defaultValue={value ?? ""} className="rounded border border-rule px-2 py-1">
        {allLabel !== undefined && <option value="">{allLabel}</option>}
        {options.map((option) => (
          <option key={option.value} value={option.value}>
            {option.label}
          </option>
        ))}
      </select>
    </label>
  );
}

/** The target share within the standard and the standard itself, for the teams-needed figure. */
export function TeamsTargetFields({ target, standard }: { target: string | number; standard: string | number | undefined }) {
  return (
    <>
      <label className="flex flex-col">
        Target share within the standard (%)
        <input name="target" type="number" min="1" max="99.9" step="0.1" defaultValue={target} className="w-28 rounded border border-rule px-2 py-1 num" />
      </label>
      <label className="flex flex-col">
        Standard (weeks; blank = the line's own)
        <input name="standard" type="number" min="0" step="0.5" defaultValue={standard ?? ""} className="w-28 rounded border border-rule px-2 py-1 num" />
      </label>
    </>
  );
}
