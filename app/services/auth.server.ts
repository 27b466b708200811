// Sign-in through remix-auth's FormStrategy, with throttling: repeated failures for one account or from one
// address first earn short waits, then a temporary lock. Unknown e-mail addresses are throttled exactly like
// real accounts so the responses never tell whether an account exists. Passwords are never logged.
import { eq, sql } from "drizzle-orm";
import { Authenticator } from "remix-auth";
import { FormStrategy } from "remix-auth-form";
import { z } from "zod";
import { signInThrottles, users } from "~/db/schema";
import { getUserByEmail, normalizeEmail, toPublicUser, type PublicUser } from "~/models/user.server";
import { db } from "./db.server";
import { burnPasswordCheck, verifyPassword } from "./password.server";
import { clientAddress } from "./session.server";

export const SignInSchema = z.object({
  email: z.string({ error: "E-mail is required" }).trim().min(1, "E-mail is required").max(320, "E-mail is too long").email("E-mail is not a valid address"),
  password: z.string({ error: "Password is required" }).min(1, "Password is required").max(200, "Password is too long"),
});

export class SignInError extends Error {
  constructor(
    message: string,
    readonly field: "email" | "password" | null = null,
  ) {
    super(message);
  }
}

export class ThrottledError extends Error {
  constructor(
    message: string,
    readonly retryAfterSeconds: number,
  ) {
    super(message);
  }
}

/** Throttling policy (common practice for interactive sign-in; the numbers are ours). */
export const THROTTLE = {
  /** Failures for one account before each further attempt must wait. */
  accountSlowAfter: 3,
  /** Failures for one account that lock it. */
  accountLockAfter: 10,
  /** Failures from one address within the window before attempts must wait, and before it is locked. */
  addressSlowAfter: 15,
  addressLockAfter: 40,
  addressWindowMinutes: 15,
  lockMinutes: 15,
} as const;

/** The wait imposed after the `failures`-th consecutive failure on an account, in seconds (0 = none). */
export function accountDelaySeconds(failures: number): number {
  if (failures >= THROTTLE.accountLockAfter) return THROTTLE.lockMinutes * 60;
  if (failures < THROTTLE.accountSlowAfter) return 0;
  return Math.min(60, 2 ** (failures - THROTTLE.accountSlowAfter + 1));
}

export function addressDelaySeconds(failures: number): number {
  if (failures >= THROTTLE.addressLockAfter) return THROTTLE.lockMinutes * 60;
  if (failures < THROTTLE.addressSlowAfter) return 0;
  return 5;
}

function waitWords(seconds: number): string {
  if (seconds >= 90) return `${Math.ceil(seconds / 60)} minutes`;
  return `${seconds} second${seconds === 1 ? "" : "s"}`;
}

function remaining(until: Date | null, now: number): number {
  return until && until.getTime() > now ? Math.ceil((until.getTime() - now) / 1000) : 0;
}

function accountMessage(seconds: number): string {
  return seconds >= 60 * 5
    ? `This account is locked for ${waitWords(seconds)} after repeated failed sign-ins. Wait, or reset your password by e-mail.`
    : `Too many failed sign-ins for this account. Wait ${waitWords(seconds)} and try again.`;
}

function addressMessage(seconds: number): string {
  return seconds >= 60 * 5
    ? `Sign-in from your network is locked for ${waitWords(seconds)} after many failed attempts.`
    : `Too many failed sign-ins from your network. Wait ${waitWords(seconds)} and try again.`;
}

async function throttleRow(key: string) {
  return db().query.signInThrottles.findFirst({ where: eq(signInThrottles.key, key) });
}

/** Counts a failure under a throttle key; the window restarts once it has passed. Returns the count. */
async function countThrottleFailure(key: string, windowMinutes: number, delay: (n: number) => number): Promise<number> {
  const windowStart = sql`now() - make_interval(mins => ${windowMinutes})`;
  const [row] = await db()
    .insert(signInThrottles)
    .values({ key, failures: 1 })
    .onConflictDoUpdate({
      target: signInThrottles.key,
      set: {
        failures: sql`case when ${signInThrottles.windowStartedAt} < ${windowStart} then 1 else ${signInThrottles.failures} + 1 end`,
        windowStartedAt: sql`case when ${signInThrottles.windowStartedAt} < ${windowStart} then now() else ${signInThrottles.windowStartedAt} end`,
      },
    })
    .returning({ failures: signInThrottles.failures });
  const seconds = delay(row.failures);
  if (seconds > 0) {
    await db()
      .update(signInThrottles)
      // A full lock starts a fresh count, so the next lock needs another full series of failures.
      .set({ lockedUntil: new Date(Date.now() + seconds * 1000), ...(seconds >= THROTTLE.lockMinutes * 60 ? { failures: 0 } : {}) })
      .where(eq(signInThrottles.key, key));
  }
  return row.failures;
}

async function countAccountFailure(userId: string): Promise<void> {
  const [row] = await db()
    .update(users)
    .set({ failedSignIns: sql`${users.failedSignIns} + 1` })
    .where(eq(users.id, userId))
    .returning({ failures: users.failedSignIns });
  const seconds = accountDelaySeconds(row.failures);
  if (seconds > 0) {
    // A full lock starts a fresh count, so the next lock needs another full series of failures.
    const reset = row.failures >= THROTTLE.accountLockAfter ? { failedSignIns: 0 } : {};
    await db().update(users).set({ lockedUntil: new Date(Date.now() + seconds * 1000), ...reset }).where(eq(users.id, userId));
  }
}

/** Checks credentials with throttling. Throws SignInError or ThrottledError; returns the person. */
export async function signIn(input: { email: string; password: string; address: string }): Promise<PublicUser> {
  const now = Date.now();
  const email = normalizeEmail(input.email);
  // Without a fronting proxy every request looks alike ("direct"); counting them together would let one person
  // lock everybody out, so only a known address is throttled. Accounts are throttled either way.
  const addressKey = input.address === "direct" ? null : `addr:${input.address}`;
  const address = addressKey ? await throttleRow(addressKey) : undefined;
  const addressWait = remaining(address?.lockedUntil ?? null, now);
  if (addressWait > 0) throw new ThrottledError(addressMessage(addressWait), addressWait);

  const user = await getUserByEmail(email);
  const unknownKey = `acct:${email}`;
  const accountLock = user ? user.lockedUntil : ((await throttleRow(unknownKey))?.lockedUntil ?? null);
  const accountWait = remaining(accountLock, now);
  if (accountWait > 0) throw new ThrottledError(accountMessage(accountWait), accountWait);

  const ok = user ? await verifyPassword(user.passwordHash, input.password) : (await burnPasswordCheck(input.password), false);
  if (!user || !ok) {
    if (addressKey) await countThrottleFailure(addressKey, THROTTLE.addressWindowMinutes, addressDelaySeconds);
    if (user) await countAccountFailure(user.id);
    else await countThrottleFailure(unknownKey, 24 * 60, accountDelaySeconds);
    throw new SignInError("E-mail or password is incorrect.");
  }
  if (user.failedSignIns > 0 || user.lockedUntil) {
    await db().update(users).set({ failedSignIns: 0, lockedUntil: null }).where(eq(users.id, user.id));
  }
  return toPublicUser(user);
}

export const authenticator = new Authenticator<PublicUser>();

authenticator.use(
  new FormStrategy<PublicUser>(async ({ form, request }) => {
    const parsed = SignInSchema.safeParse({ email: form.get("email") ?? undefined, password: form.get("password") ?? undefined });
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      const field = issue.path[0] === "password" ? "password" : "email";
      throw new SignInError(issue.message, field);
    }
    return signIn({ ...parsed.data, address: clientAddress(request) });
  }),
  "password",
);
