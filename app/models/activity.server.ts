// The per-project log of membership and security events, read by owners on the Activity tab.
import { desc, eq, lt, and } from "drizzle-orm";
import { activity, users } from "~/db/schema";
import { db } from "~/services/db.server";

export type ActivityKind =
  | "project.created"
  | "project.renamed"
  | "member.invited"
  | "invitation.revoked"
  | "member.joined"
  | "member.role_changed"
  | "member.removed"
  | "member.left"
  | "token.created"
  | "token.revoked"
  | "account.password_changed"
  | "account.password_reset"
  | (string & {});

type Executor = Pick<ReturnType<typeof db>, "insert">;

export async function logActivity(
  projectId: string | null,
  actorId: string | null,
  kind: ActivityKind,
  detail: Record<string, unknown> = {},
  executor: Executor = db(),
): Promise<void> {
  await executor.insert(activity).values({ projectId, actorId, kind, detail });
}

export type ActivityEntry = {
  id: number;
  kind: string;
  detail: Record<string, unknown>;
  createdAt: Date;
  actor: { id: string; name: string; email: string } | null;
};

export async function listActivity(projectId: string, opts: { before?: number; limit?: number } = {}): Promise<ActivityEntry[]> {
  const limit = Math.min(opts.limit ?? 50, 200);
  const rows = await db()
    .select({ entry: activity, actorName: users.name, actorEmail: users.email })
    .from(activity)
    .leftJoin(users, eq(users.id, activity.actorId))
    .where(opts.before ? and(eq(activity.projectId, projectId), lt(activity.id, opts.before)) : eq(activity.projectId, projectId))
    .orderBy(desc(activity.id))
    .limit(limit);
  return rows.map((r) => ({
    id: r.entry.id,
    kind: r.entry.kind,
    detail: r.entry.detail,
    createdAt: r.entry.createdAt,
    actor: r.entry.actorId && r.actorName !== null && r.actorEmail !== null ? { id: r.entry.actorId, name: r.actorName, email: r.actorEmail } : null,
  }));
}
