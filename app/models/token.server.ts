// API tokens for pipelines. The secret is shown once at creation; only its SHA-256 is stored, with a short
// visible prefix so people can tell their tokens apart in a list.
import { and, desc, eq, isNull } from "drizzle-orm";
import { apiTokens, users } from "~/db/schema";
import type { TokenScope } from "~/lib/roles";
import { db } from "~/services/db.server";
import { hashToken, randomToken } from "~/services/secrets.server";
import { toPublicUser, type PublicUser } from "./user.server";

export type ApiToken = typeof apiTokens.$inferSelect;
export type ListedToken = Omit<ApiToken, "tokenHash">;

const TOKEN_PATTERN = /^tw_[A-Za-z0-9_-]{43}$/;
const PREFIX_LENGTH = 10; // "tw_" + 7 characters of the secret
// Last-used is informational; once a minute keeps a busy pipeline from writing on every request.
const TOUCH_AFTER_MS = 60_000;

export async function createToken(input: {
  userId: string;
  name: string;
  scope: TokenScope;
  expiresAt: Date | null;
}): Promise<{ token: string; record: ListedToken }> {
  const token = `tw_${randomToken(32)}`;
  const [row] = await db()
    .insert(apiTokens)
    .values({
      userId: input.userId,
      name: input.name.trim(),
      scope: input.scope,
      tokenHash: hashToken(token),
      prefix: token.slice(0, PREFIX_LENGTH),
      expiresAt: input.expiresAt,
    })
    .returning();
  const { tokenHash: _hash, ...record } = row;
  return { token, record };
}

export type VerifiedToken = { tokenId: string; scope: TokenScope; user: PublicUser };

/** Resolves a presented bearer token, or null when it is malformed, unknown, revoked or expired. */
export async function verifyBearer(token: string): Promise<VerifiedToken | null> {
  if (!TOKEN_PATTERN.test(token)) return null;
  const rows = await db()
    .select({ token: apiTokens, user: users })
    .from(apiTokens)
    .innerJoin(users, eq(users.id, apiTokens.userId))
    .where(eq(apiTokens.tokenHash, hashToken(token)))
    .limit(1);
  const row = rows[0];
  if (!row || row.token.revokedAt) return null;
  const now = Date.now();
  if (row.token.expiresAt && row.token.expiresAt.getTime() <= now) return null;
  if (!row.token.lastUsedAt || now - row.token.lastUsedAt.getTime() > TOUCH_AFTER_MS) {
    await db().update(apiTokens).set({ lastUsedAt: new Date(now) }).where(eq(apiTokens.id, row.token.id));
  }
  return { tokenId: row.token.id, scope: row.token.scope, user: toPublicUser(row.user) };
}

export async function listTokens(userId: string): Promise<ListedToken[]> {
  const rows = await db()
    .select()
    .from(apiTokens)
    .where(and(eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    .orderBy(desc(apiTokens.createdAt));
  return rows.map(({ tokenHash: _hash, ...rest }) => rest);
}

/** Revokes one of the person's own tokens; returns the revoked token or null if it was not theirs. */
export async function revokeToken(userId: string, tokenId: string): Promise<ListedToken | null> {
  const rows = await db()
    .update(apiTokens)
    .set({ revokedAt: new Date() })
    .where(and(eq(apiTokens.id, tokenId), eq(apiTokens.userId, userId), isNull(apiTokens.revokedAt)))
    .returning();
  if (!rows[0]) return null;
  const { tokenHash: _hash, ...rest } = rows[0];
  return rest;
}
