/**
 * The members page: role changes and removals are audited; the last administrator can be neither
 * demoted nor removed; provider managers are scoped to sites the organisation has; bad input names
 * the field that is wrong.
 */
import { and, desc, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { auditLog, memberships, scenarios, sites } from "~/db/schema";
import { getMembership } from "~/models/organisations.server";
import { useTestDatabase } from "../support/database";
import { AppClient } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createTenant, sessionCookieValue, type Tenant } from "./support/fixtures";

const database = useTestDatabase();
useAuthEnvironment();

async function adminClient(tenant: Tenant): Promise<AppClient> {
  const client = new AppClient(TEST_APP_URL);
  client.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(tenant.members.administrator.user.id));
  return client;
}

const membersPath = (tenant: Tenant) => `/o/${tenant.organisation.slug}/members`;

async function latestAudit(organisationId: number) {
  const [entry] = await database.db
    .select()
    .from(auditLog)
    .where(eq(auditLog.organisationId, organisationId))
    .orderBy(desc(auditLog.id))
    .limit(1);
  return entry;
}

describe("the members page", () => {
  it("lists members and open invitations to an administrator", async () => {
    const tenant = await createTenant("List");
    const page = await (await adminClient(tenant)).get(membersPath(tenant));
    expect(page.status).toBe(200);
    const data = page.data as { members: Array<{ role: string; siteCodes: string[] }>; ownMembershipId: number };
    expect(data.members.map((member) => member.role).sort()).toEqual(["access_officer", "administrator", "planner", "provider_manager", "reader"]);
    expect(data.ownMembershipId).toBe(tenant.members.administrator.membershipId);
  });

  it("changes a role and records who changed what", async () => {
    const tenant = await createTenant("Change");
    const outcome = await (await adminClient(tenant)).post(membersPath(tenant), {
      intent: "changeRole",
      membershipId: String(tenant.members.reader.membershipId),
      role: "planner",
    });
    expect(outcome.status).toBe(200);
    expect((await getMembership(tenant.organisation.id, tenant.members.reader.user.id))?.role).toBe("planner");
    expect(await latestAudit(tenant.organisation.id)).toMatchObject({
      action: "member.role_changed",
      userId: tenant.members.administrator.user.id,
      target: `membership:${tenant.members.reader.membershipId}`,
      detail: { from: "reader", to: "planner", userId: tenant.members.reader.user.id },
    });
  });

  it("removes a member and records it", async () => {
    const tenant = await createTenant("Remove");
    const outcome = await (await adminClient(tenant)).post(membersPath(tenant), { intent: "remove", membershipId: String(tenant.members.planner.membershipId) });
    expect(outcome.status).toBe(200);
    expect(await getMembership(tenant.organisation.id, tenant.members.planner.user.id)).toBeUndefined();
    expect(await latestAudit(tenant.organisation.id)).toMatchObject({ action: "member.removed", detail: { role: "planner" } });
  });

  it("refuses to demote or remove the last administrator, and allows it once there is another", async () => {
    const tenant = await createTenant("Last");
    const client = await adminClient(tenant);
    const own = String(tenant.members.administrator.membershipId);
    const auditBefore = await latestAudit(tenant.organisation.id);

    const demote = await client.post(membersPath(tenant), { intent: "changeRole", membershipId: own, role: "planner" });
    expect(demote.status).toBe(409);
    expect(demote.data).toMatchObject({ formError: expect.stringContaining("only administrator") });
    const remove = await client.post(membersPath(tenant), { intent: "remove", membershipId: own });
    expect(remove.status).toBe(409);
    expect((await getMembership(tenant.organisation.id, tenant.members.administrator.user.id))?.role).toBe("administrator");
    expect((await latestAudit(tenant.organisation.id)).id).toBe(auditBefore.id); // nothing recorded for refusals

    // With a second administrator, the first may step down.
    await client.post(membersPath(tenant), { intent: "changeRole", membershipId: String(tenant.members.planner.membershipId), role: "administrator" });
    const stepDown = await client.post(membersPath(tenant), { intent: "changeRole", membershipId: own, role: "reader" });
    expect(stepDown.status).toBe(200);
    // …and then the new administrator is the last one.
    const second = new AppClient(TEST_APP_URL);
    second.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(tenant.members.planner.user.id));
    const last = await second.post(membersPath(tenant), { intent: "remove", membershipId: String(tenant.members.planner.membershipId) });
    expect(last.status).toBe(409);
    const administrators = await database.db
      .select()
      .from(memberships)
      .where(and(eq(memberships.organisationId, tenant.organisation.id), eq(memberships.role, "administrator")));
    expect(administrators).toHaveLength(1);
  });

  it("the former administrator loses the page at once", async () => {
    const tenant = await createTenant("Demoted");
    const client = await adminClient(tenant);
    await client.post(membersPath(tenant), { intent: "changeRole", membershipId: String(tenant.members.planner.membershipId), role: "administrator" });
    await client.post(membersPath(tenant), { intent: "changeRole", membershipId: String(tenant.members.administrator.membershipId), role: "reader" });
    expect((await client.get(membersPath(tenant))).status).toBe(403);
  });

  it("scopes a provider manager to the organisation's site codes and clears sites for other roles", async () => {
    const tenant = await createTenant("Sites");
    const [scenario] = await database.db.insert(scenarios).values({ organisationId: tenant.organisation.id, name: "Baseline" }).returning();
    await database.db.insert(sites).values([
      { scenarioId: scenario.id, code: "ZZS1", name: "Site one", lat: 0, lon: 0 },
      { scenarioId: scenario.id, code: "ZZS2", name: "Site two", lat: 0, lon: 0 },
    ]);
    const client = await adminClient(tenant);
    const target = String(tenant.members.reader.membershipId);

    const missing = await client.post(membersPath(tenant), { intent: "changeRole", membershipId: target, role: "provider_manager", siteCodes: "" });
    expect(missing.status).toBe(400);
    expect(missing.data).toMatchObject({ fieldErrors: { siteCodes: [expect.stringContaining("at least one site code")] } });

    const unknown = await client.post(membersPath(tenant), { intent: "changeRole", membershipId: target, role: "provider_manager", siteCodes: "ZZS2, ZZS9" });
    expect(unknown.status).toBe(400);
    expect(unknown.data).toMatchObject({ fieldErrors: { siteCodes: ["Unknown site code ZZS9: this organisation's sites are ZZS1, ZZS2."] } });
    expect((await getMembership(tenant.organisation.id, tenant.members.reader.user.id))?.role).toBe("reader");

    const ok = await client.post(membersPath(tenant), { intent: "changeRole", membershipId: target, role: "provider_manager", siteCodes: "zzs2; ZZS1 zzs2" });
    expect(ok.status).toBe(200);
    expect(await getMembership(tenant.organisation.id, tenant.members.reader.user.id)).toMatchObject({ role: "provider_manager", siteCodes: ["ZZS2", "ZZS1"] });

    await client.post(membersPath(tenant), { intent: "changeRole", membershipId: target, role: "planner", siteCodes: "ZZS1" });
    expect(await getMembership(tenant.organisation.id, tenant.members.reader.user.id)).toMatchObject({ role: "planner", siteCodes: [] });
  });

  it("names the field that is wrong in an invitation, and refuses to invite a member", async () => {
    const tenant = await createTenant("Invalid");
    const client = await adminClient(tenant);
    const badEmail = await client.post(membersPath(tenant), { intent: "invite", email: "not-an-address", role: "reader" });
    expect(badEmail.status).toBe(400);
    expect(badEmail.data).toMatchObject({ intent: "invite", fieldErrors: { email: [expect.stringContaining("e-mail address")] } });

    const badRole = await client.post(membersPath(tenant), { intent: "invite", email: "a@example.org", role: "owner" });
    expect(badRole.status).toBe(400);
    expect(badRole.data).toMatchObject({ fieldErrors: { role: [expect.stringContaining("Choose a role")] } });

    const member = await client.post(membersPath(tenant), { intent: "invite", email: tenant.members.planner.user.email!, role: "reader" });
    expect(member.status).toBe(409);
    expect(member.data).toMatchObject({ fieldErrors: { email: [expect.stringContaining("already a member")] } });

    const unknownIntent = await client.post(membersPath(tenant), { intent: "promoteEveryone" });
    expect(unknownIntent.status).toBe(400);
    expect(unknownIntent.data).toMatchObject({ formError: expect.any(String) });
  });

  it("answers 404 for a member id that does not exist", async () => {
    const tenant = await createTenant("Missing");
    const outcome = await (await adminClient(tenant)).post(membersPath(tenant), { intent: "remove", membershipId: "99999999" });
    expect(outcome.status).toBe(404);
  });
});
