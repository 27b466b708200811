// E-mail invitations. The link carries a random token; only its hash is stored. An invitation is accepted once,
// by the person signed in with the invited address.
import { and, desc, eq, gt, isNull } from "drizzle-orm";
import { invitations, projects, users } from "~/db/schema";
import type { Role } from "~/lib/roles";
import { db } from "~/services/db.server";
import { hashToken, randomToken } from "~/services/secrets.server";
import { logActivity } from "./activity.server";
import { addMember } from "./membership.server";
import { normalizeEmail } from "./user.server";

export const INVITATION_DAYS = 14;

export type Invitation = typeof invitations.$inferSelect;
export type PendingInvitation = Omit<Invitation, "tokenHash">;

export async function createInvitation(input: { projectId: string; email: string; role: Role; invitedBy: string }): Promise<{ token: string; invitation: PendingInvitation }> {
  const token = randomToken(32);
  const email = normalizeEmail(input.email);
  const invitation = await db().transaction(async (tx) => {
    // A newer invitation to the same address replaces older ones, so only one link is ever live.
    await tx
      .update(invitations)
      .set({ revokedAt: new Date() })
      .where(and(eq(invitations.projectId, input.projectId), eq(invitations.email, email), isNull(invitations.acceptedAt), isNull(invitations.revokedAt)));
    const [row] = await tx
      .insert(invitations)
      .values({
        projectId: input.projectId,
        email,
        role: input.role,
        tokenHash: hashToken(token),
        invitedBy: input.invitedBy,
        expiresAt: new Date(Date.now() + INVITATION_DAYS * 86_400_000),
      })
      .returning();
    await logActivity(input.projectId, input.invitedBy, "member.invited", { email, role: input.role }, tx);
    return row;
  });
  const { tokenHash: _hash, ...rest } = invitation;
  return { token, invitation: rest };
}

export async function listPendingInvitations(projectId: string): Promise<PendingInvitation[]> {
  const rows = await db()
    .select()
    .from(invitations)
    .where(and(eq(invitations.projectId, projectId), isNull(invitations.acceptedAt), isNull(invitations.revokedAt), gt(invitations.expiresAt, new Date())))
    .orderBy(desc(invitations.createdAt));
  return rows.map(({ tokenHash: _hash, ...rest }) => rest);
}

export async function revokeInvitation(projectId: string, invitationId: string, actorId: string): Promise<boolean> {
  const rows = await db()
    .update(invitations)
    .set({ revokedAt: new Date() })
    .where(and(eq(invitations.id, invitationId), eq(invitations.projectId, projectId), isNull(invitations.acceptedAt), isNull(invitations.revokedAt)))
    .returning();
  if (rows[0]) await logActivity(projectId, actorId, "invitation.revoked", { email: rows[0].email, role: rows[0].role });
  return rows.length > 0;
}

export type OpenInvitation = {
  id: string;
  email: string;
  role: Role;
  project: { id: string; name: string };
  invitedBy: string | null;
};

/** A live (not used, revoked or expired) invitation for a presented token, or null. */
export async function findOpenInvitation(token: string): Promise<OpenInvitation | null> {
  if (!/^[A-Za-z0-9_-]{43}$/.test(token)) return null;
  const rows = await db()
    .select({ inv: invitations, projectName: projects.name, inviterName: users.name })
    .from(invitations)
    .innerJoin(projects, eq(projects.id, invitations.projectId))
    .leftJoin(users, eq(users.id, invitations.invitedBy))
    .where(eq(invitations.tokenHash, hashToken(token)))
    .limit(1);
  const row = rows[0];
  if (!row || row.inv.acceptedAt || row.inv.revokedAt || row.inv.expiresAt.getTime() <= Date.now()) return null;
  return {
    id: row.inv.id,
    email: row.inv.email,
    role: row.inv.role,
    project: { id: row.inv.projectId, name: row.projectName },
    invitedBy: row.inviterName,
  };
}

/**
 * Accepts an invitation for `user`, whose address must be the invited one. Returns the project id, or null if
 * the invitation is no longer open (someone else used it first, or it was revoked meanwhile).
 */
export async function acceptInvitation(token: string, user: { id: string; email: string }): Promise<{ projectId: string; role: Role } | { error: "closed" | "wrong-person" }> {
  return db().transaction(async (tx) => {
    const [inv] = await tx
      .select()
      .from(invitations)
      .where(eq(invitations.tokenHash, hashToken(token)))
      .for("update")
      .limit(1);
    if (!inv || inv.acceptedAt || inv.revokedAt || inv.expiresAt.getTime() <= Date.now()) return { error: "closed" } as const;
    if (normalizeEmail(user.email) !== inv.email) return { error: "wrong-person" } as const;
    await tx.update(invitations).set({ acceptedAt: new Date() }).where(eq(invitations.id, inv.id));
    const added = await addMember(inv.projectId, user.id, inv.role, tx);
    await logActivity(inv.projectId, user.id, "member.joined", { email: inv.email, role: inv.role, alreadyMember: !added }, tx);
    return { projectId: inv.projectId, role: inv.role };
  });
}
