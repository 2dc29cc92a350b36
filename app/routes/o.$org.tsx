/**
 * The signed-in frame of one organisation: every page under /o/:org renders inside the shell.
 * The loader proves membership (404 for any organisation the person does not belong to); each child
 * route still checks its own role, since loaders run in parallel.
 */
import { Outlet } from "react-router";
import { requireMembership } from "~/auth/guards.server";
import { AppShell, type ShellNavItem } from "~/components/app-shell";
import type { Role } from "~/db/schema";
import { ROLE_LABELS } from "~/models/roles";
import { displayName } from "~/models/users.server";
import type { Route } from "./+types/o.$org";

/** Navigation entries and the roles that see them (the pages enforce the same on the server). */
const NAVIGATION: { path: string; label: string; roles: readonly Role[] | "all" }[] = [
  { path: "scenarios", label: "Scenarios", roles: "all" },
  { path: "outlook/sites", label: "Site inflow", roles: ["administrator", "planner", "provider_manager"] },
  { path: "outlook/balking", label: "Balking", roles: ["administrator", "planner", "access_officer"] },
  { path: "runs", label: "Runs", roles: "all" },
  { path: "members", label: "Members", roles: ["administrator"] },
  { path: "billing", label: "Plan & billing", roles: ["administrator"] },
  { path: "audit", label: "Audit log", roles: ["administrator"] },
  { path: "api", label: "API", roles: "all" },
];

export async function loader({ request, params }: Route.LoaderArgs) {
  const { user, organisation, membership } = await requireMembership(request, params.org);
  const nav: ShellNavItem[] = NAVIGATION.filter((item) => item.roles === "all" || item.roles.includes(membership.role)).map(
    (item) => ({ to: `/o/${organisation.slug}/${item.path}`, label: item.label }),
  );
  return {
    organisationName: organisation.name,
    userLabel: displayName(user),
    roleLabel: ROLE_LABELS[membership.role],
    nav,
  };
}

export default function OrganisationFrame({ loaderData }: Route.ComponentProps) {
  return (
    <AppShell organisationName={loaderData.organisationName} userLabel={loaderData.userLabel} roleLabel={loaderData.roleLabel} nav={loaderData.nav}>
      <Outlet />
    </AppShell>
  );
}
