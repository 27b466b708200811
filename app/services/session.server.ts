// The browser session: a signed cookie that holds only the id of a server-side session row (table
// `sessions`), so sessions can be listed and revoked. The cookie is httpOnly and SameSite=Lax, and Secure
// unless COOKIE_SECURE=false (plain-http local development and tests).
import { createCookieSessionStorage, type SessionStorage } from "react-router";
import { createSession, getLiveSession, revokeSession, SESSION_IDLE_DAYS } from "~/models/session.server";
import type { PublicUser } from "~/models/user.server";
import { getEnv } from "./env.server";

type SessionData = { sid: string };
type SessionFlash = { notice: string };

let storage: SessionStorage<SessionData, SessionFlash> | undefined;

export function sessionStorage(): SessionStorage<SessionData, SessionFlash> {
  if (!storage) {
    const env = getEnv();
    storage = createCookieSessionStorage<SessionData, SessionFlash>({
      cookie: {
        name: "tw_session",
        httpOnly: true,
        sameSite: "lax",
        secure: env.COOKIE_SECURE !== false,
        path: "/",
        secrets: [env.SESSION_SECRET],
        maxAge: SESSION_IDLE_DAYS * 86_400,
      },
    });
  }
  return storage;
}

/** The address a request came from, as reported by the fronting proxy; "direct" when there is none. */
export function clientAddress(request: Request): string {
  const forwarded = request.headers.get("x-forwarded-for")?.split(",")[0]?.trim();
  const real = request.headers.get("x-real-ip")?.trim();
  const value = forwarded || real || "direct";
  return value.slice(0, 64);
}

export async function readSessionId(request: Request): Promise<string | null> {
  const session = await sessionStorage().getSession(request.headers.get("cookie"));
  const sid = session.get("sid");
  return typeof sid === "string" && /^[0-9a-f-]{36}$/i.test(sid) ? sid : null;
}

export async function currentSession(request: Request): Promise<{ sessionId: string; user: PublicUser } | null> {
  const sid = await readSessionId(request);
  if (!sid) return null;
  const live = await getLiveSession(sid);
  return live ? { sessionId: live.session.id, user: live.user } : null;
}

/**
 * Starts a fresh server-side session for `userId` and returns the Set-Cookie header. Any session the
 * browser already had is ended, so a session id is never carried across a sign-in (rotation).
 */
export async function startSession(request: Request, userId: string): Promise<string> {
  const previous = await currentSession(request);
  if (previous) await revokeSession(previous.user.id, previous.sessionId);
  const sid = await createSession(userId, { userAgent: request.headers.get("user-agent"), address: clientAddress(request) });
  const session = await sessionStorage().getSession();
  session.set("sid", sid);
  return sessionStorage().commitSession(session);
}

/** Ends the browser's session (server row and cookie) and returns the Set-Cookie header. */
export async function endSession(request: Request): Promise<string> {
  const current = await currentSession(request);
  if (current) await revokeSession(current.user.id, current.sessionId);
  const session = await sessionStorage().getSession(request.headers.get("cookie"));
  return sessionStorage().destroySession(session);
}
