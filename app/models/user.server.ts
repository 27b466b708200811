import { eq } from "drizzle-orm";
import { users } from "~/db/schema";
import { db } from "~/services/db.server";
import { hashPassword } from "~/services/password.server";

export type User = typeof users.$inferSelect;
export type PublicUser = { id: string; email: string; name: string };

export function normalizeEmail(email: string): string {
  return email.trim().toLowerCase();
}

export function toPublicUser(u: Pick<User, "id" | "email" | "name">): PublicUser {
  return { id: u.id, email: u.email, name: u.name };
}

export async function getUserById(id: string): Promise<User | undefined> {
  return db().query.users.findFirst({ where: eq(users.id, id) });
}

export async function getUserByEmail(email: string): Promise<User | undefined> {
  return db().query.users.findFirst({ where: eq(users.email, normalizeEmail(email)) });
}

export class EmailTakenError extends Error {
  constructor() {
    super("An account with this e-mail already exists");
  }
}

export async function createUser(input: { email: string; name: string; password: string }): Promise<User> {
  const passwordHash = await hashPassword(input.password);
  const rows = await db()
    .insert(users)
    .values({ email: normalizeEmail(input.email), name: input.name.trim(), passwordHash })
    .onConflictDoNothing({ target: users.email })
    .returning();
  if (!rows[0]) throw new EmailTakenError();
  return rows[0];
}

export async function updateUserName(userId: string, name: string): Promise<void> {
  await db().update(users).set({ name: name.trim() }).where(eq(users.id, userId));
}

export async function updateUserEmail(userId: string, email: string): Promise<void> {
  const taken = await getUserByEmail(email);
  if (taken && taken.id !== userId) throw new EmailTakenError();
  await db().update(users).set({ email: normalizeEmail(email) }).where(eq(users.id, userId));
}

export async function setUserPassword(userId: string, password: string): Promise<void> {
  const passwordHash = await hashPassword(password);
  await db().update(users).set({ passwordHash, failedSignIns: 0, lockedUntil: null }).where(eq(users.id, userId));
}
