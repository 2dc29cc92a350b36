/**
 * The audit log, for administrators: who published, exported, changed roles or used API tokens,
 * and when — filterable by kind — and every API token with its holder and last use.
 */
import { Link } from "react-router";
import { requireRole } from "~/auth/guards.server";
import { AUDIT_KINDS, isAuditKind, listAuditEntries, listTokenUse } from "~/models/audit-log-view.server";
import type { Route } from "./+types/o.$org.audit";

export async function loader({ request, params }: Route.LoaderArgs) {
  const { organisation } = await requireRole(request, params.org, ["administrator"]);
  const kindParam = new URL(request.url).searchParams.get("kind");
  const kind = isAuditKind(kindParam) ? kindParam : undefined;
  const [entries, tokens] = await Promise.all([listAuditEntries(organisation.id, { kind }), listTokenUse(organisation.id)]);
  return {
    slug: organisation.slug,
    kind: kind ?? null,
    kinds: Object.entries(AUDIT_KINDS).map(([key, value]) => ({ key, label: value.label })),
    entries: entries.map((entry) => ({ ...entry, at: entry.at.toISOString() })),
    tokens: tokens.map((token) => ({
      ...token,
      createdAt: token.createdAt.toISOString(),
      lastUsedAt: token.lastUsedAt?.toISOString() ?? null,
      revokedAt: token.revokedAt?.toISOString() ?? null,
    })),
  };
}

function when(iso: string | null): string {
  return iso ? iso.replace("T", " ").slice(0, 16) : "—";
}

function describe(detail: Record<string, unknown>): string {
  return Object.entries(detail)
    .filter(([, value]) => value !== null && value !== undefined && value !== "")
    .map(([key, value]) => `${key}: ${typeof value === "object" ? JSON.stringify(value) : String(value)}`)
    .join("; ");
}

export default function AuditPage({ loaderData }: Route.ComponentProps) {
  const { slug, kind, kinds, entries, tokens } = loaderData;
  return (
    <div className="mx-auto max-w-6xl space-y-6 px-6 py-6">
      <header>
        <h1 className="text-2xl font-semibold">Audit log</h1>
        <p className="text-sm text-ink-soft">Who changed, published or exported what, newest first (the latest 300 entries).</p>
      </header>
      <nav aria-label="Kinds of entry" className="flex flex-wrap items-center gap-2 text-sm">
        <Link to={`/o/${slug}/audit`} className={`rounded px-3 py-1 ${kind === null ? "bg-accent-soft font-semibold text-accent" : "border border-rule"}`}>
          Everything
        </Link>
        {kinds.map((entry) => (
          <Link
            key={entry.key}
            to={`/o/${slug}/audit?kind=${entry.key}`}
            className={`rounded px-3 py-1 ${kind === entry.key ? "bg-accent-soft font-semibold text-accent" : "border border-rule"}`}
          >
            {entry.label}
          </Link>
        ))}
      </nav>
      <div className="overflow-x-auto rounded border border-rule bg-white">
        <table className="min-w-full text-sm" aria-label="Audit entries">
          <thead className="bg-accent-soft/60 text-left">
            <tr>
              <th className="px-3 py-2">When (UTC)</th>
              <th className="px-3 py-2">Who</th>
              <th className="px-3 py-2">Action</th>
              <th className="px-3 py-2">On</th>
              <th className="px-3 py-2">Detail</th>
            </tr>
          </thead>
          <tbody>
            {entries.length === 0 ? (
              <tr>
                <td colSpan={5} className="px-3 py-4 text-ink-soft">
                  Nothing recorded{kind ? " of this kind" : ""} yet.
                </td>
              </tr>
            ) : (
              entries.map((entry) => (
                <tr key={entry.id} className="border-t border-rule" data-testid="audit-entry">
                  <td className="whitespace-nowrap px-3 py-2">{when(entry.at)}</td>
                  <td className="px-3 py-2">{entry.who ?? "the system"}</td>
                  <td className="px-3 py-2 font-mono text-xs">{entry.action}</td>
                  <td className="px-3 py-2 font-mono text-xs">{entry.target ?? "—"}</td>
                  <td className="px-3 py-2 text-xs">{describe(entry.detail)}</td>
                </tr>
              ))
            )}
          </tbody>
        </table>
      </div>
      <section className="space-y-2" aria-label="API tokens">
        <h2 className="text-lg font-semibold">API tokens</h2>
        <div className="overflow-x-auto rounded border border-rule bg-white">
          <table className="min-w-full text-sm" aria-label="API token use">
            <thead className="bg-accent-soft/60 text-left">
              <tr>
                <th className="px-3 py-2">Token</th>
                <th className="px-3 py-2">Holder</th>
                <th className="px-3 py-2">Created</th>
                <th className="px-3 py-2">Last used</th>
                <th className="px-3 py-2">Revoked</th>
              </tr>
            </thead>
            <tbody>
              {tokens.length === 0 ? (
                <tr>
                  <td colSpan={5} className="px-3 py-4 text-ink-soft">
                    No API tokens.
                  </td>
                </tr>
              ) : (
                tokens.map((token) => (
                  <tr key={token.id} className="border-t border-rule">
                    <td className="px-3 py-2">{token.name}</td>
                    <td className="px-3 py-2">{token.holder}</td>
                    <td className="px-3 py-2">{when(token.createdAt)}</td>
                    <td className="px-3 py-2">{when(token.lastUsedAt)}</td>
                    <td className="px-3 py-2">{when(token.revokedAt)}</td>
                  </tr>
                ))
              )}
            </tbody>
          </table>
        </div>
      </section>
    </div>
  );
}

export function meta() {
  return [{ title: "Audit log · Equilibra" }];
}
