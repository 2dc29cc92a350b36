/** Every row error of an import, in file and line order, so a person can fix them all in one pass. */
export interface ImportError {
  file: string;
  line: number | null;
  field: string;
  message: string;
}

export function ImportErrorList({ errors, limit = 500 }: { errors: ImportError[]; limit?: number }) {
  if (errors.length === 0) return null;
  const sorted = [...errors].sort((a, b) => a.file.localeCompare(b.file) || (a.line ?? 0) - (b.line ?? 0));
  const shown = sorted.slice(0, limit);
  return (
    <div role="alert" aria-label="Import errors" className="rounded border border-bad bg-white" data-testid="import-errors">
      <p className="border-b border-rule bg-warn-soft px-3 py-2 text-sm font-semibold text-bad">
        {errors.length} problem{errors.length === 1 ? "" : "s"} found: nothing has been stored.
      </p>
      <table className="min-w-full text-sm">
        <thead>
          <tr className="text-left">
            <th scope="col" className="px-3 py-1">File</th>
            <th scope="col" className="px-3 py-1 text-right">Line</th>
            <th scope="col" className="px-3 py-1">Field</th>
            <th scope="col" className="px-3 py-1">Problem</th>
          </tr>
        </thead>
        <tbody>
          {shown.map((error, index) => (
            <tr key={index} className="border-t border-rule/60 align-top">
              <td className="px-3 py-1 font-mono text-xs">{error.file || "–"}</td>
              <td className="num px-3 py-1">{error.line ?? "–"}</td>
              <td className="px-3 py-1 font-mono text-xs">{error.field || "–"}</td>
              <td className="px-3 py-1">{error.message}</td>
            </tr>
          ))}
        </tbody>
      </table>
      {errors.length > shown.length && <p className="px-3 py-2 text-xs text-ink-soft">…and {errors.length - shown.length} more.</p>}
    </div>
  );
}
