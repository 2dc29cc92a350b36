/**
 * The development mailbox: mail kept in the local outbox because no SMTP server is configured.
 * It does not exist once SMTP_URL is set. With the local fake identity provider (a demo on one
 * machine) it shows every message; with real GitHub sign-in it shows only mail to your own address,
 * because invitation links are secrets.
 */
import { data } from "react-router";
import { getAuthConfig } from "~/auth/auth-config.server";
import { requireUser } from "~/auth/guards.server";
import { notFound } from "~/auth/http-errors";
import { listOutbox, usesLocalOutbox } from "~/services/mail.server";
import type { Route } from "./+types/dev.mailbox";

export async function loader({ request }: Route.LoaderArgs) {
  if (!usesLocalOutbox()) throw notFound("There is no development mailbox: mail is delivered through the configured SMTP server.");
  let onlyTo: string | undefined;
  if (!getAuthConfig().github.usesLocalFake) {
    const user = await requireUser(request);
    if (!user.email) return data({ scope: "yours" as const, messages: [] });
    onlyTo = user.email;
  }
  const messages = await listOutbox({ to: onlyTo });
  return data({
    scope: onlyTo ? ("yours" as const) : ("all" as const),
    messages: messages.map((message) => ({
      id: message.id,
      to: message.to,
      subject: message.subject,
      text: message.text,
      sent: message.createdAt.toISOString().replace("T", " ").slice(0, 16),
    })),
  });
}

/** Shows the text with its links clickable, so an invitation can be followed from here. */
function MailText({ text }: { text: string }) {
  const parts = text.split(/(https?:\/\/\S+)/g);
  return (
    <pre className="mt-2 whitespace-pre-wrap font-sans text-sm">
      {parts.map((part, index) =>
        /^https?:\/\//.test(part) ? (
          <a key={index} href={part} className="text-accent underline">
            {part}
          </a>
        ) : (
          part
        ),
      )}
    </pre>
  );
}

export default function DevelopmentMailbox({ loaderData }: Route.ComponentProps) {
  const { scope, messages } = loaderData;
  return (
    <main className="mx-auto max-w-3xl px-6 py-10">
      <p className="text-sm font-semibold tracking-wide text-accent">Equilibra · development mailbox</p>
      <h1 className="mt-2 text-2xl font-semibold">Outbox</h1>
      <p className="mt-1 text-ink-soft">
        No mail server is configured (SMTP_URL is unset), so mail is kept here instead of being sent.
        {scope === "yours" && " Only mail addressed to you is shown."}
      </p>
      {messages.length === 0 ? (
        <p className="mt-6">The outbox is empty.</p>
      ) : (
        <ol className="mt-6 space-y-4">
          {messages.map((message) => (
            <li key={message.id} className="rounded border border-rule bg-white p-4">
              <p className="font-semibold">{message.subject}</p>
              <p className="text-sm text-ink-soft">
                To {message.to} · {message.sent} UTC
              </p>
              <MailText text={message.text} />
            </li>
          ))}
        </ol>
      )}
    </main>
  );
}

export function meta() {
  return [{ title: "Development mailbox · Equilibra" }];
}
