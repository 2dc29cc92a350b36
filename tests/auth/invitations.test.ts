/**
 * Invitations end to end: an administrator invites an address from the members page, the mail lands
 * in the local outbox, the link joins the organisation once; reused, expired, withdrawn and
 * other-address links say so and join nothing.
 */
import { and, eq } from "drizzle-orm";
import { describe, expect, it } from "vitest";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { auditLog, invitations, mailOutbox, memberships } from "~/db/schema";
import { createInvitation } from "~/models/invitations.server";
import { useTestDatabase } from "../support/database";
import { AppClient } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createPerson, createTenant, sessionCookieValue, unique } from "./support/fixtures";

const database = useTestDatabase();
useAuthEnvironment();

async function signedIn(userId: number): Promise<AppClient> {
  const client = new AppClient(TEST_APP_URL);
  client.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(userId));
  return client;
}

/** The invitation link from the newest message to `to` in the outbox. */
async function linkInOutbox(to: string): Promise<string> {
  const messages = await database.db.select().from(mailOutbox).where(eq(mailOutbox.to, to));
  expect(messages.length).toBeGreaterThan(0);
  const text = messages.at(-1)!.text;
  const link = /https?:\/\/\S+\/invitations\/[A-Za-z0-9_-]+/.exec(text)?.[0];
  expect(link, text).toBeDefined();
  return link!;
}

async function membershipOf(organisationId: number, userId: number) {
  const [row] = await database.db
    .select()
    .from(memberships)
    .where(and(eq(memberships.organisationId, organisationId), eq(memberships.userId, userId)));
  return row;
}

describe("inviting and accepting", () => {
  it("sends the invitation to the outbox and joins the organisation with the invited role and sites", async () => {
    const tenant = await createTenant("Invite");
    const admin = await signedIn(tenant.members.administrator.user.id);
    const email = `${unique("mina")}@example.org`;
    const sent = await admin.post(`/o/${tenant.organisation.slug}/members`, {
      intent: "invite",
      email: email.toUpperCase(),
      role: "provider_manager",
      siteCodes: "zzs1",
    });
    expect(sent.status).toBe(200);
    expect(sent.data).toMatchObject({ notice: expect.stringContaining(`Invitation sent to ${email}`) });

    const link = await linkInOutbox(email);
    expect(link.startsWith(`${TEST_APP_URL}/invitations/`)).toBe(true);
    const [message] = await database.db.select().from(mailOutbox).where(eq(mailOutbox.to, email));
    expect(message.subject).toContain(tenant.organisation.name);
    expect(message.text).toContain("provider manager for the sites ZZS1");

    // The token is in the link only: the database keeps its hash.
    const token = link.split("/").at(-1)!;
    const stored = await database.db.select().from(invitations).where(eq(invitations.email, email));
    expect(stored).toHaveLength(1);
    expect(stored[0].tokenHash).not.toContain(token);

    const invitee = await createPerson({ email });
    const browser = await signedIn(invitee.id);
    const page = await browser.get(link);
    expect(page.status).toBe(200);
    expect(page.data).toMatchObject({ problem: null, invitation: { organisationName: tenant.organisation.name, siteCodes: ["ZZS1"] } });

    const accepted = await browser.post(link);
    expect(accepted.location).toBe(`${TEST_APP_URL}/o/${tenant.organisation.slug}`);
    expect(await membershipOf(tenant.organisation.id, invitee.id)).toMatchObject({ role: "provider_manager", siteCodes: ["ZZS1"] });

    const actions = (await database.db.select().from(auditLog).where(eq(auditLog.organisationId, tenant.organisation.id))).map((entry) => entry.action);
    expect(actions).toEqual(expect.arrayContaining(["organisation.created", "member.invited", "invitation.accepted"]));
  });

  it("asks a signed-out visitor to sign in and brings them back to the invitation", async () => {
    const outcome = await new AppClient(TEST_APP_URL).get("/invitations/abc123");
    expect(outcome.location).toBe(`${TEST_APP_URL}/sign-in?returnTo=%2Finvitations%2Fabc123`);
  });

  it("refuses a reused link: nothing joined the second time", async () => {
    const tenant = await createTenant("Reuse");
    const { token } = await createInvitation({
      organisationId: tenant.organisation.id,
      email: "reuse@example.org",
      role: "reader",
      siteCodes: [],
      invitedBy: tenant.members.administrator.user.id,
    });
    const first = await createPerson({ email: "reuse@example.org" });
    expect((await (await signedIn(first.id)).post(`/invitations/${token}`)).status).toBe(302);

    // Someone else with the same address (a second account) tries the same link.
    const second = await createPerson({ email: "Reuse@Example.org" });
    const client = await signedIn(second.id);
    const page = await client.get(`/invitations/${token}`);
    expect(page.status).toBe(410);
    expect(page.data).toMatchObject({ problem: expect.stringMatching(/already been used/) });
    const posted = await client.post(`/invitations/${token}`);
    expect(posted.status).toBe(410);
    expect(await membershipOf(tenant.organisation.id, second.id)).toBeUndefined();
  });

  it("refuses an expired link with the date it expired", async () => {
    const tenant = await createTenant("Expired");
    const { token } = await createInvitation({
      organisationId: tenant.organisation.id,
      email: "late@example.org",
      role: "planner",
      siteCodes: [],
      invitedBy: tenant.members.administrator.user.id,
      now: new Date("2020-03-01T12:00:00Z"),
    });
    const late = await createPerson({ email: "late@example.org" });
    const client = await signedIn(late.id);
    const posted = await client.post(`/invitations/${token}`);
    expect(posted.status).toBe(410);
    expect(posted.data).toMatchObject({ problem: expect.stringContaining("expired on 2020-03-08") });
    expect(await membershipOf(tenant.organisation.id, late.id)).toBeUndefined();
  });

  it("refuses a link sent to another address, without spelling that address out", async () => {
    const tenant = await createTenant("Elsewhere");
    const { token } = await createInvitation({
      organisationId: tenant.organisation.id,
      email: "intended@example.org",
      role: "planner",
      siteCodes: [],
      invitedBy: tenant.members.administrator.user.id,
    });
    const stranger = await createPerson({ email: "stranger@example.org" });
    const client = await signedIn(stranger.id);
    const posted = await client.post(`/invitations/${token}`);
    expect(posted.status).toBe(403);
    const problem = (posted.data as { problem: string }).problem;
    expect(problem).toContain("stranger@example.org");
    expect(problem).toContain("i•••@example.org");
    expect(problem).not.toContain("intended@");
    expect(await membershipOf(tenant.organisation.id, stranger.id)).toBeUndefined();

    const noEmail = await createPerson({ email: null });
    const refused = await (await signedIn(noEmail.id)).post(`/invitations/${token}`);
    expect(refused.status).toBe(403);
    expect(refused.data).toMatchObject({ problem: expect.stringContaining("no public e-mail address") });
  });

  it("refuses a withdrawn link and an unknown one", async () => {
    const tenant = await createTenant("Withdrawn");
    const { invitation, token } = await createInvitation({
      organisationId: tenant.organisation.id,
      email: "withdrawn@example.org",
      role: "planner",
      siteCodes: [],
      invitedBy: tenant.members.administrator.user.id,
    });
    const admin = await signedIn(tenant.members.administrator.user.id);
    const revoked = await admin.post(`/o/${tenant.organisation.slug}/members`, { intent: "revoke", invitationId: String(invitation.id) });
    expect(revoked.status).toBe(200);
    const person = await createPerson({ email: "withdrawn@example.org" });
    const client = await signedIn(person.id);
    const posted = await client.post(`/invitations/${token}`);
    expect(posted.status).toBe(410);
    expect(posted.data).toMatchObject({ problem: expect.stringContaining("withdrawn") });
    expect(await membershipOf(tenant.organisation.id, person.id)).toBeUndefined();

    const unknown = await client.get("/invitations/not-a-real-token");
    expect(unknown.status).toBe(404);
    expect(unknown.data).toMatchObject({ problem: expect.stringContaining("not valid") });
  });

  it("a second invitation to the same address replaces the first link", async () => {
    const tenant = await createTenant("Twice");
    const first = await createInvitation({ organisationId: tenant.organisation.id, email: "twice@example.org", role: "reader", siteCodes: [], invitedBy: tenant.members.administrator.user.id });
    const second = await createInvitation({ organisationId: tenant.organisation.id, email: "twice@example.org", role: "planner", siteCodes: [], invitedBy: tenant.members.administrator.user.id });
    const person = await createPerson({ email: "twice@example.org" });
    const client = await signedIn(person.id);
    expect((await client.post(`/invitations/${first.token}`)).status).toBe(410);
    expect((await client.post(`/invitations/${second.token}`)).status).toBe(302);
    expect(await membershipOf(tenant.organisation.id, person.id)).toMatchObject({ role: "planner" });
  });
});

describe("the welcome page", () => {
  it("creates an organisation with its creator as administrator, with a unique slug", async () => {
    const person = await createPerson();
    const client = await signedIn(person.id);
    const name = `Fenmarch ${unique("Health")}`;
    const created = await client.post("/welcome", { intent: "create", name });
    const slug = created.location!.split("/o/")[1];
    expect(slug).toMatch(/^fenmarch-health-/);
    const again = await client.post("/welcome", { intent: "create", name });
    expect(again.location).toBe(`${TEST_APP_URL}/o/${slug}-2`);
    const welcome = await client.get("/welcome");
    expect(welcome.data).toMatchObject({ organisations: [{ slug, role: "Administrator" }, { slug: `${slug}-2`, role: "Administrator" }] });
  });

  it("names the field when the organisation's name is unusable", async () => {
    const client = await signedIn((await createPerson()).id);
    const outcome = await client.post("/welcome", { intent: "create", name: " x " });
    expect(outcome.status).toBe(400);
    expect(outcome.data).toMatchObject({ fieldErrors: { name: [expect.stringContaining("at least 2 characters")] } });
  });

  it("lists open invitations to the person's address and accepts one", async () => {
    const tenant = await createTenant("Welcome");
    const email = `${unique("welcome")}@example.org`;
    const { invitation } = await createInvitation({ organisationId: tenant.organisation.id, email, role: "access_officer", siteCodes: [], invitedBy: tenant.members.administrator.user.id });
    const person = await createPerson({ email });
    const client = await signedIn(person.id);
    const page = await client.get("/welcome");
    expect(page.data).toMatchObject({ invitations: [{ id: invitation.id, organisationName: tenant.organisation.name }] });
    const accepted = await client.post("/welcome", { intent: "accept", invitationId: String(invitation.id) });
    expect(accepted.location).toBe(`${TEST_APP_URL}/o/${tenant.organisation.slug}`);
    expect(await membershipOf(tenant.organisation.id, person.id)).toMatchObject({ role: "access_officer" });
  });

  it("does not accept, by id, an invitation addressed to someone else", async () => {
    const tenant = await createTenant("Guess");
    const { invitation } = await createInvitation({ organisationId: tenant.organisation.id, email: "someone@example.org", role: "administrator", siteCodes: [], invitedBy: tenant.members.administrator.user.id });
    const guesser = await createPerson();
    const outcome = await (await signedIn(guesser.id)).post("/welcome", { intent: "accept", invitationId: String(invitation.id) });
    expect(outcome.status).toBe(404);
    expect(JSON.stringify(outcome.data)).not.toContain("someone@");
    expect(await membershipOf(tenant.organisation.id, guesser.id)).toBeUndefined();
  });
});
