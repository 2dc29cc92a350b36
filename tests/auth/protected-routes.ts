/**
 * Every protected route, for the role matrix (role-matrix.test.ts). Add a row when you add a loader,
 * action or API route scoped to an organisation: the matrix then checks it for every role, for
 * members of another organisation, for signed-out visitors and — with `foreign` — for ids that
 * belong to another organisation used under this organisation's slug.
 *
 * A world is two organisations ("home" and "other"), each with one member per role. Rows that need
 * their own records (a scenario, an invitation) create them in `setup`, once per organisation.
 */
import { ROLES, type Role } from "~/db/schema";
import { createInvitation, listPendingInvitations } from "~/models/invitations.server";
import { getMembership } from "~/models/organisations.server";
import { getDb } from "~/db/client.server";
import { exportScenario, getScenario, importScenario } from "~/models/scenarios.server";
import { smallScenario } from "../workspace/support/fixtures";
import type { RouteModule } from "./support/app-client";
import type { Tenant } from "./support/fixtures";

export interface MatrixTenant extends Tenant {
  /** Whatever a row's `setup` created in this organisation, by name. */
  extras: Record<string, number | string>;
}

export interface MatrixWorld {
  home: MatrixTenant;
  other: MatrixTenant;
}

export interface ProtectedRoute {
  /** Shown in test names. */
  name: string;
  /** The route's pattern as registered in app/routes.ts, with a leading slash. */
  pattern: string;
  module: () => Promise<RouteModule>;
  method: "GET" | "POST";
  /** Roles that may use it; every other role must get 403. */
  allowed: readonly Role[];
  /** The URL path in the home organisation. */
  path: (world: MatrixWorld) => string;
  form?: (world: MatrixWorld) => Record<string, string>;
  /** Creates the records this row needs in one organisation. */
  setup?: (tenant: MatrixTenant) => Promise<void>;
  /**
   * The same request naming the other organisation's records under the home slug. Expected: 404 for
   * every role, and `untouched` confirms the other organisation's records did not change.
   */
  foreign?: {
    path?: (world: MatrixWorld) => string;
    form?: (world: MatrixWorld) => Record<string, string>;
    untouched?: (world: MatrixWorld) => Promise<void>;
  };
}

export const ALL_ROLES: readonly Role[] = ROLES;
const ADMINISTRATOR: readonly Role[] = ["administrator"];

const membersPath = (world: MatrixWorld) => `/o/${world.home.organisation.slug}/members`;
const membersModule = () => import("~/routes/o.$org.members");

async function expectMembership(tenant: MatrixTenant, role: Role, expectedRole: Role) {
  const membership = await getMembership(tenant.organisation.id, tenant.members[role].user.id);
  if (!membership || membership.role !== expectedRole) {
    throw new Error(`The other organisation's ${role} membership changed: ${JSON.stringify(membership)}`);
  }
}

async function addInvitation(tenant: MatrixTenant) {
  const { invitation } = await createInvitation({
    organisationId: tenant.organisation.id,
    email: `invitee-${tenant.organisation.slug}@example.org`,
    role: "reader",
    siteCodes: [],
    invitedBy: tenant.members.administrator.user.id,
  });
  tenant.extras.invitationId = invitation.id;
}

const homePath = (suffix: string) => (world: MatrixWorld) => `/o/${world.home.organisation.slug}${suffix}`;

export const PROTECTED_ROUTES: ProtectedRoute[] = [
  {
    name: "organisation frame (membership check for every page inside it)",
    pattern: "/o/:org",
    module: () => import("~/routes/o.$org"),
    method: "GET",
    allowed: ALL_ROLES,
    path: homePath(""),
  },
  {
    name: "organisation start page (opens the scenario list)",
    pattern: "/o/:org",
    module: () => import("~/routes/o.$org._index"),
    method: "GET",
    allowed: ALL_ROLES,
    path: homePath(""),
  },
  {
    name: "billing: checkout cancelled",
    pattern: "/o/:org/billing/cancel",
    module: () => import("~/routes/o.$org.billing.cancel"),
    method: "GET",
    allowed: ADMINISTRATOR,
    path: homePath("/billing/cancel"),
  },
  {
    name: "billing: checkout returned without a session id",
    pattern: "/o/:org/billing/success",
    module: () => import("~/routes/o.$org.billing.success"),
    method: "GET",
    allowed: ADMINISTRATOR,
    path: homePath("/billing/success"),
  },
  {
    name: "members page",
    pattern: "/o/:org/members",
    module: membersModule,
    method: "GET",
    allowed: ADMINISTRATOR,
    path: membersPath,
  },
  {
    name: "invite a member",
    pattern: "/o/:org/members",
    module: membersModule,
    method: "POST",
    allowed: ADMINISTRATOR,
    path: membersPath,
    form: () => ({ intent: "invite", email: `matrix-${Math.random().toString(36).slice(2)}@example.org`, role: "reader" }),
  },
  {
    name: "change a member's role",
    pattern: "/o/:org/members",
    module: membersModule,
    method: "POST",
    allowed: ADMINISTRATOR,
    path: membersPath,
    form: (world) => ({ intent: "changeRole", membershipId: String(world.home.members.planner.membershipId), role: "reader" }),
    foreign: {
      form: (world) => ({ intent: "changeRole", membershipId: String(world.other.members.planner.membershipId), role: "reader" }),
      untouched: (world) => expectMembership(world.other, "planner", "planner"),
    },
  },
  {
    name: "remove a member",
    pattern: "/o/:org/members",
    module: membersModule,
    method: "POST",
    allowed: ADMINISTRATOR,
    path: membersPath,
    form: (world) => ({ intent: "remove", membershipId: String(world.home.members.reader.membershipId) }),
    foreign: {
      form: (world) => ({ intent: "remove", membershipId: String(world.other.members.reader.membershipId) }),
      untouched: (world) => expectMembership(world.other, "reader", "reader"),
    },
  },
  {
    name: "withdraw an invitation",
    pattern: "/o/:org/members",
    module: membersModule,
    method: "POST",
    allowed: ADMINISTRATOR,
    path: membersPath,
    setup: addInvitation,
    form: (world) => ({ intent: "revoke", invitationId: String(world.home.extras.invitationId) }),
    foreign: {
      form: (world) => ({ intent: "revoke", invitationId: String(world.other.extras.invitationId) }),
      untouched: async (world) => {
        const open = await listPendingInvitations(world.other.organisation.id);
        if (!open.some((invitation) => invitation.id === world.other.extras.invitationId)) {
          throw new Error("The other organisation's invitation was withdrawn.");
        }
      },
    },
  },
];

// --- The scenario workspace (owned with app/routes/o.$org.scenarios*.tsx, o.$org.api.tsx, o.$org.settings.tokens.tsx) ---

const EDITORS: readonly Role[] = ["administrator", "planner"];

async function addScenario(tenant: MatrixTenant) {
  tenant.extras.scenarioId = await importScenario(await getDb(), tenant.organisation.id, smallScenario(`Scenario of ${tenant.organisation.slug}`));
}

async function expectScenarioUnchanged(tenant: MatrixTenant) {
  const id = Number(tenant.extras.scenarioId);
  const row = await getScenario(await getDb(), tenant.organisation.id, id);
  const document = await exportScenario(await getDb(), tenant.organisation.id, id);
  if (!row || row.name !== `Scenario of ${tenant.organisation.slug}` || document?.kmPerWeek !== 15) {
    throw new Error(`The other organisation's scenario changed: ${JSON.stringify({ name: row?.name, kmPerWeek: document?.kmPerWeek })}`);
  }
}

const scenariosModule = () => import("~/routes/o.$org.scenarios");
const workspaceModule = () => import("~/routes/o.$org.scenarios.$id");
const settingsModule = () => import("~/routes/o.$org.scenarios.$id.settings");
const tokensModule = () => import("~/routes/o.$org.settings.tokens");
const scenarioPath = (suffix = "") => (world: MatrixWorld) => `/o/${world.home.organisation.slug}/scenarios/${world.home.extras.scenarioId}${suffix}`;
const foreignScenarioPath = (suffix = "") => (world: MatrixWorld) => `/o/${world.home.organisation.slug}/scenarios/${world.other.extras.scenarioId}${suffix}`;
const settingsForm = () => ({ description: "", dataDate: "2026-04-01", kmPerWeek: "20", circuity: "1.3", choiceKind: "wardrop", logitScale: "", planMaxUtilisation: "", planMaxKm: "" });

PROTECTED_ROUTES.push(
  { name: "scenario list", pattern: "/o/:org/scenarios", module: scenariosModule, method: "GET", allowed: ALL_ROLES, path: homePath("/scenarios") },
  {
    name: "rename a scenario",
    pattern: "/o/:org/scenarios",
    module: scenariosModule,
    method: "POST",
    allowed: EDITORS,
    path: homePath("/scenarios"),
    setup: addScenario,
    form: (world) => ({ intent: "rename", scenarioId: String(world.home.extras.scenarioId), name: `Scenario of ${world.home.organisation.slug}` }),
    foreign: {
      form: (world) => ({ intent: "rename", scenarioId: String(world.other.extras.scenarioId), name: "Renamed by a stranger" }),
      untouched: (world) => expectScenarioUnchanged(world.other),
    },
  },
  {
    name: "scenario workspace",
    pattern: "/o/:org/scenarios/:id",
    module: workspaceModule,
    method: "GET",
    allowed: ALL_ROLES,
    path: scenarioPath(),
    setup: addScenario,
    foreign: { path: foreignScenarioPath() },
  },
  {
    name: "scenario settings page",
    pattern: "/o/:org/scenarios/:id/settings",
    module: settingsModule,
    method: "GET",
    allowed: EDITORS,
    path: scenarioPath("/settings"),
    setup: addScenario,
    foreign: { path: foreignScenarioPath("/settings") },
  },
  {
    name: "change a scenario's assumptions",
    pattern: "/o/:org/scenarios/:id/settings",
    module: settingsModule,
    method: "POST",
    allowed: EDITORS,
    path: scenarioPath("/settings"),
    setup: addScenario,
    form: settingsForm,
    foreign: { path: foreignScenarioPath("/settings"), untouched: (world) => expectScenarioUnchanged(world.other) },
  },
  { name: "API documentation", pattern: "/o/:org/api", module: () => import("~/routes/o.$org.api"), method: "GET", allowed: ALL_ROLES, path: homePath("/api") },
  { name: "own API tokens", pattern: "/o/:org/settings/tokens", module: tokensModule, method: "GET", allowed: ALL_ROLES, path: homePath("/settings/tokens") },
  {
    name: "create an API token",
    pattern: "/o/:org/settings/tokens",
    module: tokensModule,
    method: "POST",
    allowed: ALL_ROLES,
    path: homePath("/settings/tokens"),
    form: () => ({ intent: "create", name: "matrix" }),
  },
);

// --- Outlooks, publishing, the decision brief, the capacity advisor and the audit log (issue 5) ---

/** A published run (for the outlooks and the brief) and an unpublished one (for publishing), from the small scenario. */
async function addRuns(tenant: MatrixTenant) {
  const { createRun } = await import("~/models/runs.server");
  const { setRunPublished } = await import("~/models/publishing.server");
  await addScenario(tenant);
  const planner = tenant.members.planner.user.id;
  const published = await createRun(tenant.organisation.id, Number(tenant.extras.scenarioId), { userId: planner, label: "published" });
  const draft = await createRun(tenant.organisation.id, Number(tenant.extras.scenarioId), { userId: planner, label: "draft" });
  if (!published?.ok || !draft?.ok) throw new Error("The matrix scenario did not solve");
  await setRunPublished(tenant.organisation.id, published.run.id, planner, true);
  tenant.extras.runId = published.run.id;
  tenant.extras.draftRunId = draft.run.id;
}

async function expectDraftUnpublished(tenant: MatrixTenant) {
  const { listVisibleRuns } = await import("~/models/publishing.server");
  const runs = await listVisibleRuns({ organisationId: tenant.organisation.id, membership: { role: "reader", siteCodes: [] } });
  if (runs.some((run) => run.id === Number(tenant.extras.draftRunId))) throw new Error("The other organisation's draft run was published");
}

async function expectNoRecommendation(tenant: MatrixTenant) {
  const { getRunBrief } = await import("~/models/run-briefs.server");
  const brief = await getRunBrief(tenant.organisation.id, Number(tenant.extras.runId));
  if (brief.recommendation !== "") throw new Error(`The other organisation's recommendation changed: ${brief.recommendation}`);
}

const SITE_OUTLOOK: readonly Role[] = ["administrator", "planner", "provider_manager"];
const BALKING_OUTLOOK: readonly Role[] = ["administrator", "planner", "access_officer"];
const BRIEF_READERS: readonly Role[] = ["administrator", "planner", "access_officer", "reader"];
const runsModule = () => import("~/routes/o.$org.runs");
const briefModule = () => import("~/routes/o.$org.runs.$runId.brief");
const runQuery = (tenant: "home" | "other") => (world: MatrixWorld) => `?run=${world[tenant].extras.runId}`;

PROTECTED_ROUTES.push(
  { name: "runs and publishing", pattern: "/o/:org/runs", module: runsModule, method: "GET", allowed: ALL_ROLES, path: homePath("/runs"), setup: addRuns },
  {
    name: "publish a run",
    pattern: "/o/:org/runs",
    module: runsModule,
    method: "POST",
    allowed: EDITORS,
    path: homePath("/runs"),
    setup: addRuns,
    form: (world) => ({ intent: "publish", runId: String(world.home.extras.draftRunId) }),
    foreign: {
      form: (world) => ({ intent: "publish", runId: String(world.other.extras.draftRunId) }),
      untouched: (world) => expectDraftUnpublished(world.other),
    },
  },
  {
    name: "decision brief",
    pattern: "/o/:org/runs/:runId/brief",
    module: briefModule,
    method: "GET",
    allowed: BRIEF_READERS,
    path: (world) => `/o/${world.home.organisation.slug}/runs/${world.home.extras.runId}/brief`,
    setup: addRuns,
    foreign: { path: (world) => `/o/${world.home.organisation.slug}/runs/${world.other.extras.runId}/brief` },
  },
  {
    name: "write the brief's recommendation",
    pattern: "/o/:org/runs/:runId/brief",
    module: briefModule,
    method: "POST",
    allowed: EDITORS,
    path: (world) => `/o/${world.home.organisation.slug}/runs/${world.home.extras.runId}/brief`,
    setup: addRuns,
    form: () => ({ intent: "recommendation", recommendation: "Matrix recommendation" }),
    foreign: {
      path: (world) => `/o/${world.home.organisation.slug}/runs/${world.other.extras.runId}/brief`,
      untouched: (world) => expectNoRecommendation(world.other),
    },
  },
  {
    name: "site inflow outlook",
    pattern: "/o/:org/outlook/sites",
    module: () => import("~/routes/o.$org.outlook.sites"),
    method: "GET",
    allowed: SITE_OUTLOOK,
    path: (world) => `/o/${world.home.organisation.slug}/outlook/sites${runQuery("home")(world)}`,
    setup: addRuns,
    foreign: { path: (world) => `/o/${world.home.organisation.slug}/outlook/sites${runQuery("other")(world)}` },
  },
  {
    name: "one site's outlook",
    pattern: "/o/:org/outlook/sites/:siteId",
    module: () => import("~/routes/o.$org.outlook.sites.$siteId"),
    method: "GET",
    allowed: SITE_OUTLOOK,
    // createTenant gives the provider manager site ZZS1.
    path: (world) => `/o/${world.home.organisation.slug}/outlook/sites/ZZS1${runQuery("home")(world)}`,
    setup: addRuns,
    foreign: { path: (world) => `/o/${world.home.organisation.slug}/outlook/sites/ZZS1${runQuery("other")(world)}` },
  },
  {
    name: "balking outlook",
    pattern: "/o/:org/outlook/balking",
    module: () => import("~/routes/o.$org.outlook.balking"),
    method: "GET",
    allowed: BALKING_OUTLOOK,
    path: (world) => `/o/${world.home.organisation.slug}/outlook/balking${runQuery("home")(world)}`,
    setup: addRuns,
    foreign: { path: (world) => `/o/${world.home.organisation.slug}/outlook/balking${runQuery("other")(world)}` },
  },
  {
    name: "capacity advisor",
    pattern: "/o/:org/scenarios/:id/advisor",
    module: () => import("~/routes/o.$org.scenarios.$id.advisor"),
    method: "GET",
    allowed: EDITORS,
    path: scenarioPath("/advisor"),
    setup: addScenario,
    foreign: { path: foreignScenarioPath("/advisor") },
  },
  { name: "audit log", pattern: "/o/:org/audit", module: () => import("~/routes/o.$org.audit"), method: "GET", allowed: ADMINISTRATOR, path: homePath("/audit") },
);

/**
 * Routes scoped to an organisation that have no row above yet, so the coverage check in
 * role-matrix.test.ts lets them pass for now. Owners: replace an entry here with rows above.
 * A route that is in neither list fails the check.
 */
export const ROUTES_AWAITING_MATRIX_ROWS: readonly string[] = [
  "/o/:org/billing", // needs the fake Stripe running for its invoice list
  // JSON API: signed-out callers get 401 JSON, not a redirect; covered by tests/workspace/api.test.ts.
  "/api/v1/o/:org/scenarios",
  "/api/v1/o/:org/scenarios/:id",
  "/api/v1/o/:org/scenarios/:id/export",
  "/api/v1/o/:org/scenarios/:id/import",
  "/api/v1/o/:org/scenarios/:id/runs",
  "/api/v1/o/:org/runs/:runId",
  // Outlook, publication and advisor API: roles, site scope and 404s covered by tests/outlook/scoping.test.ts and numbers.test.ts.
  "/api/v1/o/:org/runs/:runId/publication",
  "/api/v1/o/:org/outlook/sites",
  "/api/v1/o/:org/outlook/sites/:siteId",
  "/api/v1/o/:org/outlook/balking",
  "/api/v1/o/:org/outlook/balking/sensitivity",
  "/api/v1/o/:org/scenarios/:id/advisor",
];
