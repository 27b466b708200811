// Activity tab (owners only): membership and security events, newest first.
import { Link } from "react-router";
import { z } from "zod";
import { Notice, Table, Td, Th } from "~/components/ui";
import { listActivity, type ActivityEntry } from "~/models/activity.server";
import { listMembers } from "~/models/membership.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId.activity";

export const meta: Route.MetaFunction = () => [{ title: "Activity · Tracewell" }];

const PAGE = 50;
const QuerySchema = z.object({ before: z.coerce.number().int().positive().optional() });

function str(v: unknown): string {
  return typeof v === "string" ? v : "";
}

/** One sentence per event, naming people where we still know them. */
function describe(e: ActivityEntry, names: Map<string, string>): string {
  const d = e.detail;
  const who = (id: unknown) => (typeof id === "string" ? (names.get(id) ?? "a former member") : "someone");
  switch (e.kind) {
    case "project.created":
      return `created the project "${str(d.name)}"`;
    case "project.renamed":
      return `renamed the project to "${str(d.name)}"`;
    case "member.invited":
      return `invited ${str(d.email)} as ${str(d.role)}`;
    case "invitation.revoked":
      return `withdrew the invitation to ${str(d.email)}`;
    case "member.joined":
      return `joined as ${str(d.role)}`;
    case "member.role_changed":
      return `changed ${who(d.userId)}'s role from ${str(d.from)} to ${str(d.to)}`;
    case "member.removed":
      return `removed ${str(d.name) || str(d.email)} (${str(d.role)})`;
    case "member.left":
      return "left the project";
    case "token.created":
      return `created the API token "${str(d.name)}" (${str(d.scope) === "render" ? "read and render" : "read"}${d.expiresAt ? `, expires ${new Date(str(d.expiresAt)).toLocaleDateString()}` : ", no expiry"})`;
    case "token.revoked":
      return `revoked the API token "${str(d.name)}"`;
    case "account.password_changed":
      return "changed their password";
    case "account.password_reset":
      return "reset their password by e-mail";
    default:
      return e.kind;
  }
}

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireAccess(request, { projectId: params.projectId }, "manage");
  const query = QuerySchema.safeParse(Object.fromEntries(new URL(request.url).searchParams));
  const before = query.success ? query.data.before : undefined;
  const [entries, members] = await Promise.all([listActivity(params.projectId, { before, limit: PAGE }), listMembers(params.projectId)]);
  const names = new Map(members.map((m) => [m.userId, m.name]));
  return {
    entries: entries.map((e) => ({
      id: e.id,
      at: e.createdAt.toISOString(),
      actor: e.actor ? e.actor.name : "Someone no longer on Tracewell",
      text: describe(e, names),
    })),
    olderFrom: entries.length === PAGE ? entries[entries.length - 1].id : null,
  };
}

export default function Activity({ loaderData }: Route.ComponentProps) {
  const { entries, olderFrom } = loaderData;
  return (
    <div className="flex max-w-5xl flex-col gap-4 p-6">
      <p className="text-sm text-ink-muted">Invitations, membership and role changes, and API tokens of this project's members. Only owners see this page.</p>
      {entries.length === 0 ? (
        <Notice>Nothing has happened yet.</Notice>
      ) : (
        <Table>
          <thead>
            <tr>
              <Th>When</Th>
              <Th>Who</Th>
              <Th>What</Th>
            </tr>
          </thead>
          <tbody>
            {entries.map((e) => (
              <tr key={e.id}>
                <Td className="whitespace-nowrap text-ink-muted">{new Date(e.at).toLocaleString()}</Td>
                <Td>{e.actor}</Td>
                <Td>{e.text}</Td>
              </tr>
            ))}
          </tbody>
        </Table>
      )}
      {olderFrom ? (
        <Link to={`?before=${olderFrom}`} className="text-sm text-accent underline">
          Older events
        </Link>
      ) : null}
    </div>
  );
}
