/**
 * On a PostgreSQL server, where transactions really run side by side: two administrators demoting or
 * removing each other at the same moment must not leave the organisation without one. The models
 * lock the administrator rows (SELECT … FOR UPDATE), so the second transaction re-reads after the
 * first commits (PostgreSQL 15 manual, 13.2.1 "Read Committed Isolation Level").
 */
import { and, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { memberships } from "~/db/schema";
import { changeMemberRole, removeMember } from "~/models/organisations.server";
import { postgresConfigured, useTestDatabase } from "../support/database";
import { createTenant } from "./support/fixtures";

const available = postgresConfigured();
const database = available ? useTestDatabase("postgres") : undefined;

async function administrators(organisationId: number) {
  return database!.db
    .select()
    .from(memberships)
    .where(and(eq(memberships.organisationId, organisationId), eq(memberships.role, "administrator")));
}

describe.skipIf(!available)("the last administrator under concurrent changes (PostgreSQL server)", () => {
  it.each([1, 2, 3, 4, 5])("two administrators demoting each other at once leave exactly one (round %i)", async () => {
    const tenant = await createTenant("Concurrent");
    const first = tenant.members.administrator;
    const second = tenant.members.planner;
    await changeMemberRole(tenant.organisation.id, second.membershipId, "administrator", [], first.user.id);

    const results = await Promise.all([
      changeMemberRole(tenant.organisation.id, second.membershipId, "reader", [], first.user.id),
      changeMemberRole(tenant.organisation.id, first.membershipId, "reader", [], second.user.id),
    ]);
    expect(results.filter((result) => result.ok)).toHaveLength(1);
    expect(results.filter((result) => !result.ok && result.reason === "last_administrator")).toHaveLength(1);
    expect(await administrators(tenant.organisation.id)).toHaveLength(1);
  });

  it("two administrators removing each other at once leave exactly one", async () => {
    const tenant = await createTenant("Removal");
    const first = tenant.members.administrator;
    const second = tenant.members.planner;
    await changeMemberRole(tenant.organisation.id, second.membershipId, "administrator", [], first.user.id);
    const results = await Promise.all([
      removeMember(tenant.organisation.id, second.membershipId, first.user.id),
      removeMember(tenant.organisation.id, first.membershipId, second.user.id),
    ]);
    expect(results.filter((result) => result.ok)).toHaveLength(1);
    expect(await administrators(tenant.organisation.id)).toHaveLength(1);
  });
});
