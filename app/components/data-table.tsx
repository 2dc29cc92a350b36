/**
 * A table of scenario inputs or results (@tanstack/react-table 8): sort by any column, filter by
 * text, edit a cell in place with validation, a totals row over the rows shown, units in the
 * headers and numbers right-aligned in tabular figures.
 *
 * Presentational: the caller owns the rows and decides what an accepted edit does (usually a
 * fetcher submission); the table only checks the text with the column's zod schema first.
 */
import { useMemo, useState } from "react";
import {
  flexRender,
  getCoreRowModel,
  getFilteredRowModel,
  getSortedRowModel,
  useReactTable,
  type ColumnDef,
  type FilterFn,
  type SortingState,
} from "@tanstack/react-table";
import type { z } from "zod";

export type CellValue = string | number | null | undefined;

export interface DataColumn<T> {
  id: string;
  header: string;
  /** Shown under the header, e.g. "referrals/week". */
  unit?: string;
  numeric?: boolean;
  value: (row: T) => CellValue;
  /** Display text; numbers default to up to 2 decimals. */
  format?: (value: CellValue, row: T) => string;
  /** The totals row: a sum or mean of the rows shown, or nothing. */
  total?: "sum" | "mean";
  /** When set (and the table is editable), the cell can be edited; the schema parses the typed text. */
  edit?: z.ZodType<string | number | null, string>;
  /** Highlight a cell (e.g. utilisation ≥ 85%). */
  tone?: (value: CellValue, row: T) => "warning" | undefined;
}

export interface DataTableProps<T> {
  /** Names the table for screen readers and tests. */
  label: string;
  rows: T[];
  columns: DataColumn<T>[];
  rowId: (row: T) => string;
  editable?: boolean;
  onEdit?: (rowId: string, columnId: string, value: string | number | null) => void;
  /** Extra cell at the end of each row (e.g. a remove button). */
  rowActions?: (row: T) => React.ReactNode;
  emptyMessage?: string;
}

// `toLocaleString` with options builds a new Intl.NumberFormat on every call (tens of microseconds):
// over a few thousand table cells that was most of the workspace's server render.
const formatters = new Map<number, Intl.NumberFormat>();

export function formatNumber(value: number, decimals = 2): string {
  let formatter = formatters.get(decimals);
  if (!formatter) {
    formatter = new Intl.NumberFormat("en-GB", { maximumFractionDigits: decimals, minimumFractionDigits: 0 });
    formatters.set(decimals, formatter);
  }
  return formatter.format(value);
}

function defaultFormat(value: CellValue): string {
  if (value === null || value === undefined || value === "") return "–";
  return typeof value === "number" ? formatNumber(value) : value;
}

const textFilter: FilterFn<unknown> = (row, columnId, filterValue: string) => {
  const value = row.getValue<CellValue>(columnId);
  return value !== null && value !== undefined && String(value).toLowerCase().includes(filterValue.toLowerCase());
};

export function DataTable<T>({ label, rows, columns, rowId, editable = false, onEdit, rowActions, emptyMessage }: DataTableProps<T>) {
  const [sorting, setSorting] = useState<SortingState>([]);
  const [filter, setFilter] = useState("");
  const [editing, setEditing] = useState<{ rowId: string; columnId: string; text: string; error?: string } | null>(null);

  const columnDefs = useMemo<ColumnDef<T, CellValue>[]>(
    () =>
      columns.map((column) => ({
        id: column.id,
        accessorFn: (row: T) => column.value(row),
        header: column.header,
        sortUndefined: "last",
        // Text columns match the filter; numeric ones would match digits by accident.
        enableGlobalFilter: !column.numeric,
        sortingFn: column.numeric ? "basic" : "alphanumeric",
      })),
    [columns],
  );

  const table = useReactTable<T>({
    data: rows,
    columns: columnDefs,
    state: { sorting, globalFilter: filter },
    onSortingChange: setSorting,
    onGlobalFilterChange: setFilter,
    globalFilterFn: textFilter as FilterFn<T>,
    getRowId: (row) => rowId(row),
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
    getFilteredRowModel: getFilteredRowModel(),
  });

  const shownRows = table.getRowModel().rows;
  const hasTotals = columns.some((column) => column.total);
  const slug = label.toLowerCase().replace(/[^a-z0-9]+/g, "-");

  function commit() {
    if (!editing) return;
    const column = columns.find((candidate) => candidate.id === editing.columnId);
    if (!column?.edit) return;
    const parsed = column.edit.safeParse(editing.text);
    if (!parsed.success) {
      setEditing({ ...editing, error: parsed.error.issues[0]?.message ?? "is not valid" });
      return;
    }
    onEdit?.(editing.rowId, editing.columnId, parsed.data);
    setEditing(null);
  }

  return (
    <div className="space-y-2" data-testid={`table-${slug}`}>
      <div className="flex items-center gap-3">
        <label className="text-sm">
          <span className="sr-only">Filter {label}</span>
          <input
            type="search"
            value={filter}
            onChange={(event) => setFilter(event.target.value)}
            placeholder="Filter by name or code"
            aria-label={`Filter ${label}`}
            className="w-64 rounded border border-rule bg-white px-2 py-1"
          />
        </label>
        <span className="text-xs text-ink-soft">
          {shownRows.length} of {rows.length} rows
        </span>
      </div>
      <div className="overflow-x-auto rounded border border-rule bg-white">
        <table className="min-w-full border-collapse text-sm" aria-label={label}>
          <thead className="bg-accent-soft/60">
            {table.getHeaderGroups().map((group) => (
              <tr key={group.id}>
                {group.headers.map((header) => {
                  const column = columns.find((candidate) => candidate.id === header.column.id) as DataColumn<T>;
                  const sorted = header.column.getIsSorted();
                  return (
                    <th
                      key={header.id}
                      scope="col"
                      aria-sort={sorted === "asc" ? "ascending" : sorted === "desc" ? "descending" : "none"}
                      className={`border-b border-rule px-2 py-1.5 align-bottom font-semibold ${column.numeric ? "text-right" : "text-left"}`}
                    >
                      <button type="button" onClick={header.column.getToggleSortingHandler()} className="inline-flex flex-col hover:underline" style={{ alignItems: column.numeric ? "flex-end" : "flex-start" }}>
                        <span>
                          {flexRender(header.column.columnDef.header, header.getContext())}
                          {sorted === "asc" ? " ▲" : sorted === "desc" ? " ▼" : ""}
                        </span>
                        {column.unit && <span className="text-xs font-normal text-ink-soft">{column.unit}</span>}
                      </button>
                    </th>
                  );
                })}
                {rowActions && <th className="border-b border-rule px-2" aria-label="Actions" />}
              </tr>
            ))}
          </thead>
          <tbody>
            {shownRows.length === 0 && (
              <tr>
                <td colSpan={columns.length + (rowActions ? 1 : 0)} className="px-2 py-3 text-ink-soft">
                  {rows.length === 0 ? (emptyMessage ?? "Nothing here yet.") : "No row matches the filter."}
                </td>
              </tr>
            )}
            {shownRows.map((row) => (
              <tr key={row.id} className="border-b border-rule/60 last:border-0 hover:bg-paper">
                {row.getVisibleCells().map((cell) => {
                  const column = columns.find((candidate) => candidate.id === cell.column.id) as DataColumn<T>;
                  const value = cell.getValue() as CellValue;
                  const text = column.format ? column.format(value, row.original) : defaultFormat(value);
                  const tone = column.tone?.(value, row.original);
                  const isEditing = editing?.rowId === row.id && editing.columnId === column.id;
                  const canEdit = editable && Boolean(column.edit) && Boolean(onEdit);
                  return (
                    <td
                      key={cell.id}
                      className={`px-2 py-1 ${column.numeric ? "num" : ""} ${tone === "warning" ? "bg-warn-soft font-semibold text-warn" : ""}`}
                    >
                      {isEditing ? (
                        <span className="inline-flex flex-col items-end">
                          <input
                            autoFocus
                            aria-label={`${column.header} for ${row.id}`}
                            aria-invalid={Boolean(editing.error)}
                            value={editing.text}
                            onChange={(event) => setEditing({ ...editing, text: event.target.value, error: undefined })}
                            onKeyDown={(event) => {
                              if (event.key === "Enter") commit();
                              if (event.key === "Escape") setEditing(null);
                            }}
                            onBlur={commit}
                            className={`w-24 rounded border px-1 ${column.numeric ? "text-right" : ""} ${editing.error ? "border-bad" : "border-accent"}`}
                          />
                          {editing.error && (
                            <span role="alert" className="mt-0.5 max-w-48 text-xs text-bad">
                              {column.header} {editing.error}
                            </span>
                          )}
                        </span>
                      ) : canEdit ? (
                        <button
                          type="button"
                          className="w-full rounded px-1 text-inherit hover:bg-accent-soft"
                          style={{ textAlign: column.numeric ? "right" : "left" }}
                          aria-label={`Edit ${column.header} for ${row.id}: ${text}`}
                          onClick={() => setEditing({ rowId: row.id, columnId: column.id, text: value === null || value === undefined ? "" : String(value) })}
                        >
                          {text}
                        </button>
                      ) : (
                        text
                      )}
                    </td>
                  );
                })}
                {rowActions && <td className="px-2 py-1 text-right">{rowActions(row.original)}</td>}
              </tr>
            ))}
          </tbody>
          {hasTotals && shownRows.length > 0 && (
            <tfoot className="border-t-2 border-rule bg-paper font-semibold">
              <tr>
                {columns.map((column, index) => (
                  <td key={column.id} className={`px-2 py-1.5 ${column.numeric ? "num" : ""}`}>
                    {column.total ? formatTotal(column, shownRows.map((row) => row.original)) : index === 0 ? (filter ? "Total (rows shown)" : "Total") : ""}
                  </td>
                ))}
                {rowActions && <td />}
              </tr>
            </tfoot>
          )}
        </table>
      </div>
    </div>
  );
}

function formatTotal<T>(column: DataColumn<T>, rows: T[]): string {
  const values = rows.map((row) => column.value(row)).filter((value): value is number => typeof value === "number" && Number.isFinite(value));
  if (values.length === 0) return "–";
  const sum = values.reduce((total, value) => total + value, 0);
  const result = column.total === "mean" ? sum / values.length : sum;
  return column.format ? column.format(result, rows[0]) : formatNumber(result);
}
