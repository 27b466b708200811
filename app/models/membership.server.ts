// Members and roles. Every change that could leave a project without an owner locks the project's owner rows
// first, so two owners demoting each other at the same moment cannot both succeed.
import { and, asc, eq, sql } from "drizzle-orm";
import { memberships, users } from "~/db/schema";
import type { Role } from "~/lib/roles";
import { db } from "~/services/db.server";
import { logActivity } from "./activity.server";

export type Member = { userId: string; name: string; email: string; role: Role; joinedAt: Date };

export async function listMembers(projectId: string): Promise<Member[]> {
  const rows = await db()
    .select({ userId: users.id, name: users.name, email: users.email, role: memberships.role, joinedAt: memberships.createdAt })
    .from(memberships)
    .innerJoin(users, eq(users.id, memberships.userId))
    .where(eq(memberships.projectId, projectId))
    .orderBy(asc(users.name));
  return rows;
}

export async function getMembership(projectId: string, userId: string): Promise<{ role: Role } | undefined> {
  return db().query.memberships.findFirst({
    where: and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)),
    columns: { role: true },
  });
}

export type MembershipChange = { ok: true } | { ok: false; reason: "last-owner" | "not-member" };

type Tx = Parameters<Parameters<ReturnType<typeof db>["transaction"]>[0]>[0];

async function lockOwners(tx: Tx, projectId: string): Promise<string[]> {
  const rows = await tx.execute<{ user_id: string }>(
    sql`select user_id from memberships where project_id = ${projectId} and role = 'owner' for update`,
  );
  return rows.rows.map((r) => r.user_id);
}

export async function changeRole(projectId: string, userId: string, role: Role, actorId: string): Promise<MembershipChange> {
  return db().transaction(async (tx) => {
    const owners = await lockOwners(tx, projectId);
    const current = await tx.query.memberships.findFirst({ where: and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)) });
    if (!current) return { ok: false, reason: "not-member" } as const;
    if (current.role === role) return { ok: true } as const;
    if (current.role === "owner" && owners.length <= 1) return { ok: false, reason: "last-owner" } as const;
    await tx.update(memberships).set({ role }).where(and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)));
    await logActivity(projectId, actorId, "member.role_changed", { userId, from: current.role, to: role }, tx);
    return { ok: true } as const;
  });
}

/** Removes a member (kind "member.removed") or lets one leave (actor = member, kind "member.left"). */
export async function removeMember(projectId: string, userId: string, actorId: string): Promise<MembershipChange> {
  return db().transaction(async (tx) => {
    const owners = await lockOwners(tx, projectId);
    const current = await tx.query.memberships.findFirst({ where: and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)) });
    if (!current) return { ok: false, reason: "not-member" } as const;
    if (current.role === "owner" && owners.length <= 1) return { ok: false, reason: "last-owner" } as const;
    await tx.delete(memberships).where(and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)));
    const person = await tx.query.users.findFirst({ where: eq(users.id, userId), columns: { email: true, name: true } });
    await logActivity(
      projectId,
      actorId,
      actorId === userId ? "member.left" : "member.removed",
      { userId, email: person?.email, name: person?.name, role: current.role },
      tx,
    );
    return { ok: true } as const;
  });
}

/** Adds someone (or raises nothing: an existing membership keeps its role). Used by invitations and seeding. */
export async function addMember(projectId: string, userId: string, role: Role, executor: Pick<Tx, "insert"> = db()): Promise<boolean> {
  const rows = await executor.insert(memberships).values({ projectId, userId, role }).onConflictDoNothing().returning({ userId: memberships.userId });
  return rows.length > 0;
}
