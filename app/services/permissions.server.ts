// THE access check. Every loader, action and resource route asks this module who is calling (getActor) and
// whether they may do something to a project or to anything inside one (authorize / requireAccess).
//
// Refusals never reveal whether something exists: an anonymous page visitor is sent to sign in, an anonymous
// API caller gets 401, and everyone else who may not see a thing gets 404, exactly as if it did not exist.
// The role → ability table and the token scopes live in ~/lib/roles (shared with the members page).
import { and, eq } from "drizzle-orm";
import { data, redirect } from "react-router";
import { assets, memberships, renders, scenes, sceneVersions, shareLinks } from "~/db/schema";
import { roleAllows, scopeAllows, type Ability, type Role, type TokenScope } from "~/lib/roles";
import { verifyBearer } from "~/models/token.server";
import type { PublicUser } from "~/models/user.server";
import { db } from "./db.server";
import { currentSession } from "./session.server";

export { ABILITIES, ROLE_ABILITIES, ROLES, TOKEN_SCOPE_ABILITIES, roleAllows, scopeAllows } from "~/lib/roles";
export type { Ability, Role, TokenScope } from "~/lib/roles";

export type Actor =
  | { kind: "user"; user: PublicUser; sessionId: string }
  | { kind: "token"; user: PublicUser; tokenId: string; scope: TokenScope }
  | { kind: "anonymous" };

export type UserActor = Extract<Actor, { kind: "user" }>;

export type Target =
  | { projectId: string }
  | { sceneId: string }
  | { versionId: string }
  | { renderId: string }
  | { assetSha: string; projectId: string }
  | { shareLinkId: string };

export type Decision = { ok: true; projectId: string; role: Role } | { ok: false; status: 401 | 404 };

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
const SHA256 = /^[0-9a-f]{64}$/;

// Layouts and their child routes all ask for the actor of the same request; look it up once.
const actorCache = new WeakMap<Request, Promise<Actor>>();

async function lookupActor(request: Request): Promise<Actor> {
  const authorization = request.headers.get("authorization");
  if (authorization !== null) {
    // A request that presents a token is judged by that token alone, never by a cookie it may also carry.
    const match = /^Bearer\s+(\S+)\s*$/i.exec(authorization);
    const verified = match ? await verifyBearer(match[1]) : null;
    return verified ? { kind: "token", user: verified.user, tokenId: verified.tokenId, scope: verified.scope } : { kind: "anonymous" };
  }
  const session = await currentSession(request);
  return session ? { kind: "user", user: session.user, sessionId: session.sessionId } : { kind: "anonymous" };
}

/** Who is calling: a signed-in browser (cookie session), a pipeline (Bearer token) or nobody. */
export function getActor(request: Request): Promise<Actor> {
  let found = actorCache.get(request);
  if (!found) {
    found = lookupActor(request);
    actorCache.set(request, found);
  }
  return found;
}

function isApiRequest(request: Request): boolean {
  return new URL(request.url).pathname.startsWith("/api/") || request.headers.has("authorization");
}

function loginRedirect(request: Request): Response {
  const url = new URL(request.url);
  const next = url.pathname + url.search;
  return redirect(`/login?next=${encodeURIComponent(next)}`);
}

function refusal(request: Request, status: 401 | 404) {
  if (isApiRequest(request)) {
    const body =
      status === 401
        ? { error: { code: "unauthenticated", message: "Sign in or send a valid API token (Authorization: Bearer …)." } }
        : { error: { code: "not_found", message: "Not found." } };
    return Response.json(body, { status, headers: status === 401 ? { "WWW-Authenticate": 'Bearer realm="tracewell"' } : undefined });
  }
  if (status === 401) return loginRedirect(request);
  return data("There is nothing at this address, or you may not see it.", { status: 404 });
}

/**
 * Pages that only make sense for a signed-in person in a browser (projects list, account).
 * Anonymous visitors are sent to sign in; API tokens are refused (they act only on projects, through the API).
 */
export async function requireUser(request: Request): Promise<UserActor> {
  const actor = await getActor(request);
  if (actor.kind === "user") return actor;
  if (actor.kind === "anonymous" && !isApiRequest(request)) throw loginRedirect(request);
  throw refusal(request, 401);
}

/** The project a target belongs to, or null when the target does not exist (or the id is malformed). */
export async function projectOf(target: Target): Promise<string | null> {
  if ("shareLinkId" in target) {
    if (!UUID.test(target.shareLinkId)) return null;
    const row = await db().query.shareLinks.findFirst({ where: eq(shareLinks.id, target.shareLinkId), columns: { projectId: true } });
    return row?.projectId ?? null;
  }
  if ("assetSha" in target) {
    if (!UUID.test(target.projectId) || !SHA256.test(target.assetSha)) return null;
    const row = await db().query.assets.findFirst({
      where: and(eq(assets.projectId, target.projectId), eq(assets.sha256, target.assetSha)),
      columns: { projectId: true },
    });
    return row?.projectId ?? null;
  }
  if ("renderId" in target) {
    if (!UUID.test(target.renderId)) return null;
    const row = await db().query.renders.findFirst({ where: eq(renders.id, target.renderId), columns: { projectId: true } });
    return row?.projectId ?? null;
  }
  if ("versionId" in target) {
    if (!UUID.test(target.versionId)) return null;
    const rows = await db()
      .select({ projectId: scenes.projectId })
      .from(sceneVersions)
      .innerJoin(scenes, eq(scenes.id, sceneVersions.sceneId))
      .where(eq(sceneVersions.id, target.versionId))
      .limit(1);
    return rows[0]?.projectId ?? null;
  }
  if ("sceneId" in target) {
    if (!UUID.test(target.sceneId)) return null;
    const row = await db().query.scenes.findFirst({ where: eq(scenes.id, target.sceneId), columns: { projectId: true } });
    return row?.projectId ?? null;
  }
  return UUID.test(target.projectId) ? target.projectId : null;
}

export async function roleIn(projectId: string, userId: string): Promise<Role | null> {
  const row = await db().query.memberships.findFirst({
    where: and(eq(memberships.projectId, projectId), eq(memberships.userId, userId)),
    columns: { role: true },
  });
  return row?.role ?? null;
}

/** May `actor` do `ability` to `target`? Pure decision, no throwing: API routes turn it into JSON. */
export async function authorize(actor: Actor, target: Target, ability: Ability): Promise<Decision> {
  if (actor.kind === "anonymous") return { ok: false, status: 401 };
  const projectId = await projectOf(target);
  if (!projectId) return { ok: false, status: 404 };
  const role = await roleIn(projectId, actor.user.id);
  if (!role || !roleAllows(role, ability)) return { ok: false, status: 404 };
  if (actor.kind === "token" && !scopeAllows(actor.scope, ability)) return { ok: false, status: 404 };
  return { ok: true, projectId, role };
}

/**
 * For loaders and actions: returns the actor, project and role, or throws the refusal — a redirect to sign in
 * for anonymous page visits, 401 JSON for anonymous API calls, and 404 for everything else.
 */
export async function requireAccess(
  request: Request,
  target: Target,
  ability: Ability,
): Promise<{ actor: Exclude<Actor, { kind: "anonymous" }>; projectId: string; role: Role }> {
  const actor = await getActor(request);
  const decision = await authorize(actor, target, ability);
  if (!decision.ok || actor.kind === "anonymous") throw refusal(request, decision.ok ? 401 : decision.status);
  return { actor, projectId: decision.projectId, role: decision.role };
}
