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
