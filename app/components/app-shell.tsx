import { Form, NavLink } from "react-router";
import { PlanningCautions } from "./planning-cautions";

export interface ShellNavItem {
  to: string;
  label: string;
}

/** Equilibra's mark: two pans in balance over a single point — our own drawing. */
export function EquilibraMark({ size = 28 }: { size?: number }) {
  return (
    <svg width={size} height={size} viewBox="0 0 32 32" aria-hidden="true">
      <circle cx="16" cy="16" r="15" fill="var(--color-accent)" />
      <path d="M7 13h18" stroke="white" strokeWidth="2" strokeLinecap="round" />
      <path d="M16 9v16M12 25h8" stroke="white" strokeWidth="2" strokeLinecap="round" />
      <path d="M7 13l-3 6h6zM25 13l-3 6h6z" fill="white" />
    </svg>
  );
}

export function AppShell({
  organisationName,
  userLabel,
  roleLabel,
  nav,
  children,
}: {
  organisationName?: string;
  userLabel?: string;
  roleLabel?: string;
  nav: ShellNavItem[];
  children: React.ReactNode;
}) {
  return (
    <div className="flex min-h-screen flex-col">
      <header className="no-print border-b border-rule bg-white">
        <div className="mx-auto flex max-w-7xl flex-wrap items-center gap-x-6 gap-y-2 px-6 py-3">
          <a href="/" className="flex items-center gap-2 text-lg font-semibold text-ink">
            <EquilibraMark />
            Equilibra
          </a>
          {organisationName && <span className="text-sm text-ink-soft">{organisationName}</span>}
          <nav aria-label="Main" className="flex flex-wrap gap-1 text-sm">
            {nav.map((item) => (
              <NavLink
                key={item.to}
                to={item.to}
                className={({ isActive }) =>
                  `rounded px-3 py-1.5 ${isActive ? "bg-accent-soft font-semibold text-accent" : "text-ink hover:bg-accent-soft"}`
                }
              >
                {item.label}
              </NavLink>
            ))}
          </nav>
          {userLabel && (
            <div className="ml-auto flex items-center gap-3 text-sm">
              <span>
                {userLabel}
                {roleLabel && <span className="text-ink-soft"> · {roleLabel}</span>}
              </span>
              <Form method="post" action="/sign-out">
                <button type="submit" className="rounded border border-rule px-3 py-1 hover:bg-accent-soft">
                  Sign out
                </button>
              </Form>
            </div>
          )}
        </div>
      </header>
      <main className="mx-auto w-full max-w-7xl flex-1 px-6 py-6">{children}</main>
      <footer className="border-t border-rule bg-white">
        <div className="mx-auto max-w-7xl px-6 py-4">
          <PlanningCautions compact />
        </div>
      </footer>
    </div>
  );
}
