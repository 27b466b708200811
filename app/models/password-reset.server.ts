// Password reset tokens: random, stored hashed, single use, short-lived. Using one sets the password, ends
// every session of the account and voids any other reset link still outstanding.
import { and, count, eq, gt, isNull } from "drizzle-orm";
import { passwordResets, sessions, users } from "~/db/schema";
import { db } from "~/services/db.server";
import { hashPassword } from "~/services/password.server";
import { hashToken, randomToken } from "~/services/secrets.server";

export const RESET_MINUTES = 60;
/** At most this many reset e-mails per account per hour, so the form cannot be used to flood an inbox. */
export const RESETS_PER_HOUR = 3;

/** Creates a reset token for the account, or null when the hourly allowance is used up. */
export async function createPasswordReset(userId: string): Promise<string | null> {
  const hourAgo = new Date(Date.now() - 3_600_000);
  const [recent] = await db()
    .select({ n: count() })
    .from(passwordResets)
    .where(and(eq(passwordResets.userId, userId), gt(passwordResets.createdAt, hourAgo)));
  if (recent.n >= RESETS_PER_HOUR) return null;
  const token = randomToken(32);
  await db()
    .insert(passwordResets)
    .values({ userId, tokenHash: hashToken(token), expiresAt: new Date(Date.now() + RESET_MINUTES * 60_000) });
  return token;
}

/** The account a live reset token belongs to (not used, not expired), or null. */
export async function findOpenReset(token: string): Promise<{ resetId: string; userId: string; email: string } | null> {
  if (!/^[A-Za-z0-9_-]{43}$/.test(token)) return null;
  const rows = await db()
    .select({ reset: passwordResets, email: users.email })
    .from(passwordResets)
    .innerJoin(users, eq(users.id, passwordResets.userId))
    .where(and(eq(passwordResets.tokenHash, hashToken(token)), isNull(passwordResets.usedAt), gt(passwordResets.expiresAt, new Date())))
    .limit(1);
  const row = rows[0];
  return row ? { resetId: row.reset.id, userId: row.reset.userId, email: row.email } : null;
}

/**
 * Uses a reset token: sets the new password, clears any sign-in lock, ends all sessions and voids the
 * account's other reset links, all in one transaction. Returns the user id, or null if the token was not live
 * (including when another request used it a moment earlier).
 */
export async function consumePasswordReset(token: string, newPassword: string): Promise<string | null> {
  const open = await findOpenReset(token);
  if (!open) return null;
  const passwordHash = await hashPassword(newPassword);
  return db().transaction(async (tx) => {
    const claimed = await tx
      .update(passwordResets)
      .set({ usedAt: new Date() })
      .where(and(eq(passwordResets.id, open.resetId), isNull(passwordResets.usedAt), gt(passwordResets.expiresAt, new Date())))
      .returning({ userId: passwordResets.userId });
    if (!claimed[0]) return null;
    const userId = claimed[0].userId;
    await tx.update(users).set({ passwordHash, failedSignIns: 0, lockedUntil: null }).where(eq(users.id, userId));
    await tx.update(sessions).set({ revokedAt: new Date() }).where(and(eq(sessions.userId, userId), isNull(sessions.revokedAt)));
    await tx.update(passwordResets).set({ usedAt: new Date() }).where(and(eq(passwordResets.userId, userId), isNull(passwordResets.usedAt)));
    return userId;
  });
}
