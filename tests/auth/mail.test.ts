/**
 * Mail: without SMTP_URL, messages go to the database outbox and the development mailbox shows
 * them; with SMTP_URL, nodemailer delivers over SMTP (RFC 5321) — here to a minimal SMTP server on a
 * loopback port — and a failed delivery leaves no invitation open.
 */
import { once } from "node:events";
import { createServer, type AddressInfo, type Server } from "node:net";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { SESSION_COOKIE_NAME } from "~/auth/session.server";
import { invitations, mailOutbox } from "~/db/schema";
import { listOutbox, sendMail } from "~/services/mail.server";
import { useTestDatabase } from "../support/database";
import { AppClient } from "./support/app-client";
import { TEST_APP_URL, useAuthEnvironment } from "./support/environment";
import { createPerson, createTenant, sessionCookieValue } from "./support/fixtures";

const database = useTestDatabase();
const environment = useAuthEnvironment();

interface ReceivedMail {
  from: string;
  to: string[];
  data: string;
}

/** Just enough SMTP to accept messages: greeting, EHLO, MAIL, RCPT, DATA, QUIT. */
function startSmtpServer(received: ReceivedMail[]): Promise<Server> {
  const server = createServer((socket) => {
    let buffer = "";
    let current: ReceivedMail = { from: "", to: [], data: "" };
    let inData = false;
    socket.write("220 test.invalid ESMTP ready\r\n");
    socket.on("data", (chunk) => {
      buffer += chunk.toString("utf8");
      while (true) {
        if (inData) {
          const end = buffer.indexOf("\r\n.\r\n");
          if (end < 0) return;
          current.data = buffer.slice(0, end);
          buffer = buffer.slice(end + 5);
          received.push(current);
          current = { from: "", to: [], data: "" };
          inData = false;
          socket.write("250 2.0.0 queued\r\n");
          continue;
        }
        const lineEnd = buffer.indexOf("\r\n");
        if (lineEnd < 0) return;
        const line = buffer.slice(0, lineEnd);
        buffer = buffer.slice(lineEnd + 2);
        const verb = line.slice(0, 4).toUpperCase();
        if (verb === "EHLO" || verb === "HELO") socket.write("250-test.invalid\r\n250 8BITMIME\r\n");
        else if (verb === "MAIL") (current.from = line), socket.write("250 2.1.0 ok\r\n");
        else if (verb === "RCPT") current.to.push(line), socket.write("250 2.1.5 ok\r\n");
        else if (verb === "DATA") (inData = true), socket.write("354 end with <CRLF>.<CRLF>\r\n");
        else if (verb === "QUIT") socket.end("221 2.0.0 bye\r\n");
        else socket.write("250 ok\r\n");
      }
    });
  });
  server.listen(0, "127.0.0.1");
  return once(server, "listening").then(() => server);
}

async function adminClient(userId: number): Promise<AppClient> {
  const client = new AppClient(TEST_APP_URL);
  client.setCookie(SESSION_COOKIE_NAME, await sessionCookieValue(userId));
  return client;
}

describe("without an SMTP server", () => {
  it("keeps mail in the outbox, newest first", async () => {
    await sendMail({ to: "first@example.org", subject: "First", text: "one" });
    const delivery = await sendMail({ to: "second@example.org", subject: "Second", text: "two" });
    expect(delivery.via).toBe("outbox");
    const [newest, previous] = await listOutbox();
    expect([newest.subject, previous.subject]).toEqual(["Second", "First"]);
    expect((await listOutbox({ to: "first@example.org" })).map((message) => message.subject)).toEqual(["First"]);
  });

  it("shows the whole outbox on the development mailbox while the local identity provider is in use", async () => {
    await sendMail({ to: "someone@example.org", subject: "Visible to the demo", text: `Follow ${TEST_APP_URL}/invitations/abc` });
    const page = await new AppClient(TEST_APP_URL).get("/dev/mailbox");
    expect(page.status).toBe(200);
    expect(page.data).toMatchObject({ scope: "all" });
    expect(JSON.stringify(page.data)).toContain("Visible to the demo");
  });

  it("with real GitHub sign-in, shows each person only the mail addressed to them", async () => {
    environment.set({ GITHUB_CLIENT_ID: "Iv1.real", GITHUB_CLIENT_SECRET: "secret" });
    try {
      await sendMail({ to: "owner@example.org", subject: "For the owner", text: "secret link" });
      await sendMail({ to: "other@example.org", subject: "For someone else", text: "another secret link" });
      const signedOut = await new AppClient(TEST_APP_URL).get("/dev/mailbox");
      expect(signedOut.location).toMatch(/\/sign-in/);
      const owner = await createPerson({ email: "owner@example.org" });
      const page = await (await adminClient(owner.id)).get("/dev/mailbox");
      expect(page.data).toMatchObject({ scope: "yours" });
      expect(JSON.stringify(page.data)).toContain("For the owner");
      expect(JSON.stringify(page.data)).not.toContain("For someone else");
    } finally {
      environment.set({ GITHUB_CLIENT_ID: undefined, GITHUB_CLIENT_SECRET: undefined });
    }
  });
});

describe("with an SMTP server", () => {
  const received: ReceivedMail[] = [];
  let server: Server;
  beforeAll(async () => {
    server = await startSmtpServer(received);
    environment.set({ SMTP_URL: `smtp://127.0.0.1:${(server.address() as AddressInfo).port}` });
  });
  afterAll(async () => {
    environment.set({ SMTP_URL: undefined });
    server.close();
    await once(server, "close");
  });

  it("delivers an invitation over SMTP and keeps nothing in the outbox", async () => {
    const tenant = await createTenant("Smtp");
    const before = (await database.db.select().from(mailOutbox)).length;
    const outcome = await (await adminClient(tenant.members.administrator.user.id)).post(`/o/${tenant.organisation.slug}/members`, {
      intent: "invite",
      email: "smtp-invitee@example.org",
      role: "planner",
    });
    expect(outcome.status).toBe(200);
    expect(received).toHaveLength(1);
    expect(received[0].to).toEqual(["RCPT TO:<smtp-invitee@example.org>"]);
    expect(received[0].from).toContain("no-reply@equilibra.invalid");
    expect(received[0].data).toContain(`Subject: Invitation to join ${tenant.organisation.name}`);
    expect(received[0].data.replace(/=\r\n/g, "")).toMatch(/\/invitations\/[A-Za-z0-9_-]+/);
    expect((await database.db.select().from(mailOutbox)).length).toBe(before);
  });

  it("has no development mailbox", async () => {
    const outcome = await new AppClient(TEST_APP_URL).get("/dev/mailbox");
    expect(outcome.status).toBe(404);
  });

  it("withdraws the invitation again when the mail server cannot be reached", async () => {
    environment.set({ SMTP_URL: "smtp://127.0.0.1:9" });
    try {
      const tenant = await createTenant("Unsent");
      const outcome = await (await adminClient(tenant.members.administrator.user.id)).post(`/o/${tenant.organisation.slug}/members`, {
        intent: "invite",
        email: "unsent@example.org",
        role: "reader",
      });
      expect(outcome.status).toBe(502);
      expect(outcome.data).toMatchObject({ formError: expect.stringContaining("No invitation is open") });
      const rows = await database.db.select().from(invitations).where(eq(invitations.organisationId, tenant.organisation.id));
      expect(rows).toHaveLength(1);
      expect(rows[0].revokedAt).not.toBeNull();
    } finally {
      environment.set({ SMTP_URL: `smtp://127.0.0.1:${(server.address() as AddressInfo).port}` });
    }
  });
});
