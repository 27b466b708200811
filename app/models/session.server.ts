// Server-side records of signed-in browsers. The cookie only carries the id, so revoking a row signs that
// browser out at its next request.
import { and, desc, eq, gt, isNull, ne } from "drizzle-orm";
import { sessions, users } from "~/db/schema";
import { db } from "~/services/db.server";
import { toPublicUser, type PublicUser } from "./user.server";

/** A session unused for this long ends by itself. */
export const SESSION_IDLE_DAYS = 30;
// Writing last-seen on every request would turn each page view into a write; a few minutes is precise enough.
const TOUCH_AFTER_MS = 5 * 60_000;

export type SessionRow = typeof sessions.$inferSelect;

export async function createSession(userId: string, meta: { userAgent: string | null; address: string | null }): Promise<string> {
  const [row] = await db()
    .insert(sessions)
    .values({ userId, userAgent: meta.userAgent?.slice(0, 300) ?? null, address: meta.address })
    .returning({ id: sessions.id });
  return row.id;
}

export async function getLiveSession(sessionId: string): Promise<{ session: SessionRow; user: PublicUser } | null> {
  const idleCutoff = new Date(Date.now() - SESSION_IDLE_DAYS * 86_400_000);
  const rows = await db()
    .select({ session: sessions, user: users })
    .from(sessions)
    .innerJoin(users, eq(users.id, sessions.userId))
    .where(and(eq(sessions.id, sessionId), isNull(sessions.revokedAt), gt(sessions.lastSeenAt, idleCutoff)))
    .limit(1);
  const row = rows[0];
  if (!row) return null;
  if (Date.now() - row.session.lastSeenAt.getTime() > TOUCH_AFTER_MS) {
    await db().update(sessions).set({ lastSeenAt: new Date() }).where(eq(sessions.id, sessionId));
  }
  return { session: row.session, user: toPublicUser(row.user) };
}

export async function listLiveSessions(userId: string): Promise<SessionRow[]> {
  const idleCutoff = new Date(Date.now() - SESSION_IDLE_DAYS * 86_400_000);
  return db()
    .select()
    .from(sessions)
    .where(and(eq(sessions.userId, userId), isNull(sessions.revokedAt), gt(sessions.lastSeenAt, idleCutoff)))
    .orderBy(desc(sessions.lastSeenAt));
}

/** Revokes one of the person's own sessions; returns false if it was not theirs or already ended. */
export async function revokeSession(userId: string, sessionId: string): Promise<boolean> {
  const rows = await db()
    .update(sessions)
    .set({ revokedAt: new Date() })
    .where(and(eq(sessions.id, sessionId), eq(sessions.userId, userId), isNull(sessions.revokedAt)))
    .returning({ id: sessions.id });
  return rows.length > 0;
}

/** Ends every session of the account except `keepSessionId` (all of them when it is null). */
export async function revokeOtherSessions(userId: string, keepSessionId: string | null): Promise<number> {
  const where = keepSessionId
    ? and(eq(sessions.userId, userId), isNull(sessions.revokedAt), ne(sessions.id, keepSessionId))
    : and(eq(sessions.userId, userId), isNull(sessions.revokedAt));
  const rows = await db().update(sessions).set({ revokedAt: new Date() }).where(where).returning({ id: sessions.id });
  return rows.length;
}
