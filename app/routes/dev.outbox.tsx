// Development-only: every e-mail the local SMTP fake received. 404 when a real mail relay is configured.
import { data } from "react-router";
import { Panel } from "~/components/ui";
import { listOutbox, outboxEnabled } from "~/services/outbox.server";
import type { Route } from "./+types/dev.outbox";

export const meta: Route.MetaFunction = () => [{ title: "Outbox (local mail) · Tracewell" }];

export async function loader() {
  if (!outboxEnabled()) throw data("Not found", { status: 404 });
  return { messages: await listOutbox() };
}

const linkPattern = /(https?:\/\/[^\s<>"]+)/g;

function Linkified({ text }: { text: string }) {
  const parts = text.split(linkPattern);
  return (
    <>
      {parts.map((p, i) =>
        i % 2 === 1 ? (
          <a key={i} href={p} className="text-accent underline">
            {p}
          </a>
        ) : (
          <span key={i}>{p}</span>
        ),
      )}
    </>
  );
}

export default function Outbox({ loaderData }: Route.ComponentProps) {
  return (
    <main className="mx-auto max-w-4xl p-8">
      <h1 className="text-xl font-bold">Local outbox</h1>
      <p className="mt-1 text-sm text-ink-muted">
        Messages caught by the development mail fake. Nothing here was delivered to anyone.
      </p>
      <div className="mt-6 flex flex-col gap-4">
        {loaderData.messages.length === 0 ? <p className="text-ink-faint">No messages yet.</p> : null}
        {loaderData.messages.map((m) => (
          <Panel key={m.id} title={m.subject} actions={<span className="text-xs text-ink-faint">{new Date(m.receivedAt).toLocaleString()}</span>}>
            <p className="text-xs text-ink-muted">
              to {m.to} · from {m.from}
            </p>
            <pre className="mt-3 font-sans text-sm whitespace-pre-wrap">
              <Linkified text={m.text} />
            </pre>
          </Panel>
        ))}
      </div>
    </main>
  );
}
