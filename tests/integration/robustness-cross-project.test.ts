// Cross-project identifiers: a person who owns project A puts the ids of project B (someone else's, where they
// have no role, or where they are only a viewer) into A's URLs, forms, query strings and API bodies. Every such
// request must be refused exactly as a made-up id would be (404 for URL ids), nothing of B may show in the
// answer, and nothing of B may change. tests/integration/route-access.test.ts covers outsiders on every route;
// this file covers members of one project reaching into another through mixed identifiers.
//
// Run: bin/with-test-env npx vitest run tests/integration/robustness-cross-project.test.ts
//      (BASE_URL=http://localhost:3150 sends the requests to a served build instead of the in-process app.)
import { randomBytes, randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { assets, invitations, memberships, renders, scenes, sceneVersions, shareLinks } from "~/db/schema";
import { createInvitation } from "~/models/invitation.server";
import { createProject } from "~/models/project.server";
import { publishRender } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { createToken } from "~/models/token.server";
import { createUser } from "~/models/user.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket } from "~/services/storage.server";
import { kettleScene } from "../support/a3-fixtures";
import { startApp, type AppRoute, type AppServer } from "../support/app-server";
import { Person, uniqueEmail } from "../support/person";

type Ids = { projectId: string; sceneId: string; versionId: string; renderId: string; sha: string; shareToken: string; linkId: string; memberId: string; invitationId: string };

const PASSWORD = "cross project password";
/** A word that appears only in B's scene and render: if it shows up in an answer to A's person, B leaked. */
const B_MARKER = `Bsecret${randomBytes(4).toString("hex")}`;

let app: AppServer;
let me: Person; // owner of A, nothing in B
let meToken: string; // render-scoped token of `me`
let A: Ids;
let B: Ids;
let V: Ids;
let ghost: Ids;

async function makeWorld(ownerId: string, label: string, memberId: string, marker = ""): Promise<Ids> {
  const project = await createProject({ name: `${label} ${marker}`.trim(), ownerId });
  await db().insert(memberships).values({ projectId: project.id, userId: memberId, role: "viewer" }).onConflictDoNothing();
  const created = await createScene({ projectId: project.id, name: `Kettle ${label} ${marker}`.trim(), scene: kettleScene({ name: `Kettle ${marker || label}` }), authorId: ownerId });
  if (!created.ok) throw new Error("fixture scene invalid");
  const render = await publishRender({
    projectId: project.id,
    sceneId: created.scene.id,
    meta: {
      versionId: created.version.id,
      title: `render ${marker || label}`,
      spp: 4,
      seed: 7,
      width: 16,
      height: 12,
      integrator: "path",
      tracerVersion: "test",
      accumulationHash: "0123456789abcdef",
      renderMs: 10,
      samplesPerSecond: 100,
      groups: ["default"],
    },
    files: { pfm: new Uint8Array([1]), hdr: new Uint8Array([2]), png: new Uint8Array([3]), state: new Uint8Array([4]), groups: { default: new Uint8Array([5]) } },
    createdBy: ownerId,
  });
  const sha = randomBytes(32).toString("hex");
  await db().insert(assets).values({ projectId: project.id, sha256: sha, name: `${marker || label}.obj`, kind: "mesh", bytes: 3, uploadedBy: ownerId });
  const shareToken = randomBytes(24).toString("base64url");
  const [link] = await db().insert(shareLinks).values({ projectId: project.id, versionId: created.version.id, token: shareToken, label: `link ${marker}`, createdBy: ownerId }).returning();
  const { invitation } = await createInvitation({ projectId: project.id, email: uniqueEmail(`invitee-${label}`), role: "editor", invitedBy: ownerId });
  return {
    projectId: project.id,
    sceneId: created.scene.id,
    versionId: created.version.id,
    renderId: render.id,
    sha,
    shareToken,
    linkId: link!.id,
    memberId,
    invitationId: invitation.id,
  };
}

/** Everything of a project that a cross-project request might change, to compare before and after. */
async function snapshot(p: Ids): Promise<string> {
  const [scene] = await db().select().from(scenes).where(eq(scenes.id, p.sceneId));
  const versions = await db().select({ id: sceneVersions.id }).from(sceneVersions).where(eq(sceneVersions.sceneId, p.sceneId));
  const rs = await db().select({ id: renders.id, status: renders.status }).from(renders).where(eq(renders.projectId, p.projectId));
  const links = await db().select({ id: shareLinks.id, revokedAt: shareLinks.revokedAt }).from(shareLinks).where(eq(shareLinks.projectId, p.projectId));
  const ms = await db().select({ userId: memberships.userId, role: memberships.role }).from(memberships).where(eq(memberships.projectId, p.projectId));
  const as = await db().select({ sha: assets.sha256 }).from(assets).where(eq(assets.projectId, p.projectId));
  const inv = await db().select({ id: invitations.id, revokedAt: invitations.revokedAt, acceptedAt: invitations.acceptedAt }).from(invitations).where(eq(invitations.projectId, p.projectId));
  const sort = <T>(xs: T[]) => xs.map((x) => JSON.stringify(x)).sort();
  return JSON.stringify({ head: scene?.headVersionId, name: scene?.name, versions: sort(versions), renders: sort(rs), links: sort(links), members: sort(ms), assets: sort(as), invitations: sort(inv) });
}

beforeAll(async () => {
  app = await startApp();
  await ensureBucket();
  const meUser = await createUser({ email: uniqueEmail("cross-me"), name: "Cross Me", password: PASSWORD });
  const other = await createUser({ email: uniqueEmail("cross-other"), name: "Cross Other", password: PASSWORD });
  const otherMember = await createUser({ email: uniqueEmail("cross-member"), name: "Cross Member", password: PASSWORD });
  A = await makeWorld(meUser.id, "Harrow Lane A", otherMember.id);
  B = await makeWorld(other.id, "Elsewhere B", otherMember.id, B_MARKER);
  // V is legitimately visible to me (its name is in my project list), so it carries no secret marker.
  V = await makeWorld(other.id, "Elsewhere V (I view)", meUser.id, "Vvisible");
  me = new Person(app);
  if ((await me.signIn(meUser.email, PASSWORD)).status !== 302) throw new Error("sign-in failed");
  meToken = (await createToken({ userId: meUser.id, name: "cross", scope: "render", expiresAt: null })).token;
  ghost = {
    projectId: randomUUID(),
    sceneId: randomUUID(),
    versionId: randomUUID(),
    renderId: randomUUID(),
    sha: randomBytes(32).toString("hex"),
    shareToken: randomBytes(24).toString("base64url"),
    linkId: randomUUID(),
    memberId: randomUUID(),
    invitationId: randomUUID(),
  };
}, 300_000);

afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

// ---------------------------------------------------------------------------------------------------------
// URL identifiers, derived from the app's own route table

const PARAM_OF: Record<string, keyof Ids | "file" | "group" | "token" | "splat"> = {
  projectId: "projectId",
  sceneId: "sceneId",
  versionId: "versionId",
  renderId: "renderId",
  sha: "sha",
  token: "shareToken",
  file: "file",
  group: "group",
};
const FIXED: Record<string, string> = { file: "png", group: "default" };

function paramsOf(path: string): string[] {
  return [...path.matchAll(/:([A-Za-z]+)/g)].map((m) => m[1]!);
}

function fill(path: string, pick: (param: string) => string): string {
  return path.replace(/:([A-Za-z]+)/g, (_, p: string) => encodeURIComponent(pick(p)));
}

function idFor(world: Ids, param: string): string {
  const key = PARAM_OF[param];
  if (key === undefined) throw new Error(`route parameter :${param} has no fixture: add it to PARAM_OF`);
  if (key in FIXED) return FIXED[key]!;
  return world[key as keyof Ids];
}

async function get(path: string, as: "session" | "token"): Promise<{ status: number; location: string | null; text: string }> {
  const headers: Record<string, string> = as === "token" ? { authorization: `Bearer ${meToken}` } : {};
  const res = as === "token" ? await new Person(app).send(path, { headers }) : await me.send(path);
  return { status: res.status, location: res.location, text: res.text };
}

describe("ids of another project in A's URLs", () => {
  it("every route with an id besides the project answers a foreign id exactly like a made-up one, and shows nothing of it", async () => {
    const failures: string[] = [];
    const checked: string[] = [];
    const routes = app.routes.filter((r: AppRoute) => r.hasLoader && paramsOf(r.path).length >= 1 && !r.path.includes("*"));
    for (const route of routes) {
      const params = paramsOf(route.path);
      const as = route.path.startsWith("/api/") ? "token" : "session";
      // The share-link routes are opened by their token; A's token with B's other ids is the mix to try.
      for (const swapped of params.filter((p) => !(PARAM_OF[p]! in FIXED))) {
        if (params.length === 1 && swapped !== "token" && swapped !== "projectId" && route.path.startsWith("/api/")) {
          // single-id API routes (/api/v1/scenes/:sceneId): B's id alone is the outsider case of route-access; still check it here
        }
        for (const [foreignName, foreign] of [["B (no role)", B], ["V (viewer)", V]] as const) {
          // With only one id in the URL, V's id is legitimately visible to a viewer: nothing is mixed.
          if (params.length === 1 && foreignName.startsWith("V")) continue;
          const url = fill(route.path, (p) => idFor(p === swapped ? foreign : A, p));
          const ghostUrl = fill(route.path, (p) => idFor(p === swapped ? ghost : A, p));
          const control = fill(route.path, (p) => idFor(A, p));
          const [r, g, c] = [await get(url, as), await get(ghostUrl, as), await get(control, as)];
          checked.push(`${url} → ${r.status}`);
          if (r.status >= 500) failures.push(`${route.id}: ${foreignName} :${swapped} → server error ${r.status}`);
          if (r.status >= 200 && r.status < 300 && c.status < 300) failures.push(`${route.id}: ${foreignName} :${swapped} answered ${r.status} (control ${c.status})`);
          if (r.status !== g.status) failures.push(`${route.id}: ${foreignName} :${swapped} → ${r.status}, a made-up id → ${g.status} (existence revealed)`);
          if (r.text.includes(B_MARKER)) failures.push(`${route.id}: ${foreignName} :${swapped} → the answer contains B's data`);
        }
      }
    }
    console.log(`cross-project: ${checked.length} mixed-id URLs over ${routes.length} routes (each also with a made-up id and an all-A control)`);
    expect(checked.length).toBeGreaterThan(10);
    expect(failures).toEqual([]);
  }, 900_000);

  it("the render comparison page refuses a foreign render in its query string", async () => {
    for (const foreign of [B, V]) {
      for (const q of [`a=${foreign.renderId}&b=${A.renderId}`, `a=${A.renderId}&b=${foreign.renderId}`]) {
        const r = await get(`/projects/${A.projectId}/renders/compare?${q}`, "session");
        const g = await get(`/projects/${A.projectId}/renders/compare?${q.replace(foreign.renderId, ghost.renderId)}`, "session");
        // B (another project that I may see, as V's viewer) is compared across projects; A must be this project's.
        const readableB = foreign === V && q.startsWith(`a=${A.renderId}`);
        expect(r.status, q).toBe(readableB ? 200 : 404);
        expect(g.status).toBe(404);
        expect(r.text).not.toContain(B_MARKER);
      }
    }
  }, 300_000);
});

// ---------------------------------------------------------------------------------------------------------
// identifiers in forms and bodies

type Attempt = { name: string; send: () => Promise<{ status: number; text: string }> };

function form(path: string, fields: Record<string, string>): () => Promise<{ status: number; text: string }> {
  return async () => {
    const r = await me.send(path, { method: "POST", form: fields });
    return { status: r.status, text: r.text };
  };
}

function api(method: string, path: string, body: unknown): () => Promise<{ status: number; text: string }> {
  return async () => {
    const r = await new Person(app).send(path, {
      method,
      headers: { authorization: `Bearer ${meToken}`, "content-type": "application/json" },
      body: JSON.stringify(body),
    });
    return { status: r.status, text: r.text };
  };
}

function attemptsAgainst(F: Ids): Attempt[] {
  const pa = `/projects/${A.projectId}`;
  return [
    { name: "save A's scene on F's version as parent", send: form(`${pa}/scenes/${A.sceneId}`, { intent: "save", message: "x", parentVersionId: F.versionId, sceneText: JSON.stringify(kettleScene()) }) },
    { name: "restore F's version into A's scene", send: form(`${pa}/scenes/${A.sceneId}/history`, { intent: "restore", versionId: F.versionId, headId: A.versionId, message: "x" }) },
    { name: "fork A's version into F's project", send: form(`${pa}/scenes/${A.sceneId}/history`, { intent: "fork", versionId: A.versionId, targetProjectId: F.projectId, name: "stolen" }) },
    { name: "fork F's version through A's history page", send: form(`${pa}/scenes/${A.sceneId}/history`, { intent: "fork", versionId: F.versionId, targetProjectId: A.projectId, name: "pulled" }) },
    { name: "share F's version from A's sharing tab", send: form(`${pa}/sharing`, { intent: "create", versionId: F.versionId, label: "leak", expiresInDays: "" }) },
    { name: "revoke F's share link from A's sharing tab", send: form(`${pa}/sharing`, { intent: "revoke", linkId: F.linkId }) },
    { name: "change the role of F's member from A's members tab", send: form(`${pa}/members`, { intent: "change-role", userId: F.memberId, role: "owner" }) },
    { name: "remove F's member from A's members tab", send: form(`${pa}/members`, { intent: "remove", userId: F.memberId }) },
    { name: "withdraw F's invitation from A's members tab", send: form(`${pa}/members`, { intent: "revoke-invitation", invitationId: F.invitationId }) },
    { name: "delete F's asset from A's assets tab", send: form(`${pa}/assets`, { intent: "delete", sha256: F.sha }) },
    { name: "queue a pool render of F's scene from A's pool tab", send: form(`${pa}/pool`, { intent: "queue", sceneId: F.sceneId, spp: "4" }) },
    { name: "cancel F's render from A's pool tab", send: form(`${pa}/pool`, { intent: "cancel", renderId: F.renderId }) },
    { name: "fork through A's share link into F's project", send: form(`/s/${A.shareToken}`, { targetProjectId: F.projectId }) },
    { name: "API: save A's scene on F's version", send: api("POST", `/api/v1/scenes/${A.sceneId}/versions`, { parentVersionId: F.versionId, scene: kettleScene(), message: "x" }) },
    { name: "API: render F's version", send: api("POST", "/api/v1/renders", { versionId: F.versionId, spp: 4 }) },
    { name: "API: continue F's render", send: api("POST", "/api/v1/renders", { continueFrom: F.renderId, spp: 8 }) },
    { name: "API: queue a render of F's version under A's project", send: api("POST", `/api/v1/projects/${A.projectId}/renders`, { versionId: F.versionId, spp: 4 }) },
    { name: "API: cancel F's render", send: api("DELETE", `/api/v1/renders/${F.renderId}`, {}) },
  ];
}

describe("ids of another project in forms and API bodies", () => {
  for (const [label, pick] of [["a project where I have no role", () => B], ["a project where I am only a viewer", () => V]] as const) {
    it(`nothing of ${label} changes and nothing of it is shown`, async () => {
      const F = pick();
      const beforeF = await snapshot(F);
      const failures: string[] = [];
      for (const a of attemptsAgainst(F)) {
        const r = await a.send();
        if (r.status >= 500) failures.push(`${a.name}: server error ${r.status}`);
        if (F === B && r.text.includes(B_MARKER)) {
          const at = r.text.indexOf(B_MARKER);
          failures.push(`${a.name}: the answer shows the other project's data (${r.status}: …${r.text.slice(Math.max(0, at - 160), at + 40).replace(/\s+/g, " ")}…)`);
        }
        const after = await snapshot(F);
        if (after !== beforeF) failures.push(`${a.name}: changed the other project (${r.status})`);
      }
      expect(failures).toEqual([]);
    }, 600_000);
  }

  it("my own project A gained nothing from the project where I have no role (no versions, links, renders or forks of it)", async () => {
    const versions = await db().select().from(sceneVersions).where(eq(sceneVersions.sceneId, A.sceneId));
    for (const v of versions) expect(v.parentId).not.toBe(B.versionId);
    const links = await db().select().from(shareLinks).where(eq(shareLinks.projectId, A.projectId));
    for (const l of links) expect(l.versionId).not.toBe(B.versionId);
    const rs = await db().select().from(renders).where(eq(renders.projectId, A.projectId));
    for (const r of rs) expect(r.versionId).not.toBe(B.versionId);
    const aScenes = await db().select().from(scenes).where(eq(scenes.projectId, A.projectId));
    const leaks: string[] = [];
    for (const s of aScenes) if (s.forkedFromVersionId === B.versionId) leaks.push(`scene "${s.name}" in A is a fork of B's version`);
    for (const s of aScenes) {
      for (const v of await db().select().from(sceneVersions).where(eq(sceneVersions.sceneId, s.id))) {
        if (JSON.stringify(v.scene).includes(B_MARKER)) leaks.push(`version ${v.number} of A's scene "${s.name}" holds B's scene`);
      }
    }
    expect(leaks).toEqual([]);
  });
});
