/**
 * Outgoing mail. With SMTP_URL set, nodemailer delivers through that server; without it, each
 * message is kept in the database outbox and shown on the development mailbox page (/dev/mailbox),
 * so invitations can be followed on a machine with no mail server.
 */
import { desc, eq } from "drizzle-orm";
import nodemailer from "nodemailer";
import { getAuthConfig } from "~/auth/auth-config.server";
import { getDb } from "~/db/client.server";
import { mailOutbox } from "~/db/schema";

export interface OutgoingMail {
  to: string;
  subject: string;
  text: string;
  html?: string;
}

export type OutboxMessage = typeof mailOutbox.$inferSelect;

export type MailDelivery = { via: "smtp"; messageId: string } | { via: "outbox"; outboxId: number };

/** Whether mail stays in the local outbox (no SMTP server configured). */
export function usesLocalOutbox(): boolean {
  return getAuthConfig().smtpUrl === undefined;
}

export async function sendMail(mail: OutgoingMail): Promise<MailDelivery> {
  const config = getAuthConfig();
  if (config.smtpUrl) {
    const transport = nodemailer.createTransport(config.smtpUrl);
    try {
      const info = await transport.sendMail({ from: config.mailFrom, ...mail });
      return { via: "smtp", messageId: String(info.messageId) };
    } finally {
      transport.close();
    }
  }
  const db = await getDb();
  const [row] = await db
    .insert(mailOutbox)
    .values({ to: mail.to, subject: mail.subject, text: mail.text, html: mail.html ?? null })
    .returning({ id: mailOutbox.id });
  return { via: "outbox", outboxId: row.id };
}

/** The outbox, newest first; `to` limits it to one address. */
export async function listOutbox(options: { to?: string; limit?: number } = {}): Promise<OutboxMessage[]> {
  const db = await getDb();
  const query = db.select().from(mailOutbox);
  const filtered = options.to ? query.where(eq(mailOutbox.to, options.to)) : query;
  return filtered.orderBy(desc(mailOutbox.createdAt), desc(mailOutbox.id)).limit(options.limit ?? 100);
}
