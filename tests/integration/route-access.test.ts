// Every route of the app, run against every kind of caller, with the expected outcome: allowed, or refused
// without revealing whether the thing exists.
//
// The route list is read from the app itself at test time (app/routes.ts, through React Router's server build),
// so a new route without a row here fails the first test below.
//
// HOW TO ADD A ROW (one per route, keyed by the route id = module path under app/ without the extension):
//   "routes/projects.$projectId.renders._index": [{ url: (f) => `/projects/${f.projectId}/renders`, allow: "view" }],
// - url: a representative URL built from the fixtures `f` (a project with a scene, a version, a finished render
//   with files, an asset and a share link; see Fixtures below).
// - method + form (urlencoded, like a <Form>) or json (for API routes). Prefer bodies that are harmless when
//   allowed: an invalid body that earns a 400/422 proves the caller got past authorisation without changing data.
// - allow: the ability the route needs in the project ("view", "render", "edit", "publish", "upload", "manage",
//   "delete": members are allowed by their role, API tokens by their scope, see app/lib/roles.ts), or
//   "signed-in" (any person with a browser session, e.g. the account page), "authenticated" (a session or any
//   token: e.g. listing one's own projects over the API), or "everyone" (public pages, capability links).
// - ghost404: for "everyone" routes opened by a secret in the URL: the same URL with a made-up secret must be 404.
// Refused means: anonymous → sign-in redirect (pages) or 401 (API, or any request with a token); everyone else
// → 404, and the very same answer as for an id that does not exist (checked against made-up ids).
// Run:  bin/with-test-env npx vitest run tests/integration/route-access.test.ts
//       (TRACEWELL_URL=http://localhost:3111 sends the requests to a served build instead of the in-process app.)
import { createHash, randomBytes, randomUUID } from "node:crypto";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { assets, memberships } from "~/db/schema";
import { ROLES, roleAllows, scopeAllows, type Ability, type Role, type TokenScope } from "~/lib/roles";
import { createInvitation } from "~/models/invitation.server";
import { createPasswordReset } from "~/models/password-reset.server";
import { assetKey } from "~/models/asset.server";
import { createProject } from "~/models/project.server";
import { createShareLink } from "~/models/share.server";
import { publishRender } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { startUpload } from "~/models/upload.server";
import { createToken } from "~/models/token.server";
import { createUser } from "~/models/user.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket, putObject } from "~/services/storage.server";
import { kettleScene } from "../support/a3-fixtures";
import { startApp, type AppRoute, type AppServer } from "../support/app-server";
import { Person, uniqueEmail } from "../support/person";

type Fixtures = {
  projectId: string;
  sceneId: string;
  versionId: string;
  renderId: string;
  assetSha: string;
  shareToken: string;
  shareLinkId: string;
  memberUserId: string; // the viewer's user id, for member actions
  invitationToken: string; // an open invitation (to someone else) of the project
  resetToken: string; // an open password reset of the outsider
  uploadId: string; // a pending staged asset upload started by the owner
};

type Allow = Ability | "signed-in" | "authenticated" | "everyone";
type Probe = {
  method?: "GET" | "POST" | "PUT" | "PATCH" | "DELETE";
  url: (f: Fixtures) => string;
  form?: (f: Fixtures) => Record<string, string>;
  json?: (f: Fixtures) => unknown;
  allow: Allow;
  ghost404?: boolean;
  /** For routes only particular callers may use whatever their role (a staged upload is its starter's alone). */
  onlyCallers?: Caller[];
  /** For routes whose right answer is the same fixed status for everyone (the API's catch-all 404). */
  expectStatus?: number;
};

const PROJECT_VIEW = (path = "") => (f: Fixtures) => `/projects/${f.projectId}${path}`;

// ---------------------------------------------------------------------------------------------------------------
// THE TABLE. "layout" marks pathless layout routes: they have no URL of their own and are run through their children.
const ACCESS: Record<string, Probe[] | "layout"> = {
  // Public pages and capability links.
  "routes/home": [{ url: () => "/", allow: "everyone" }],
  "routes/healthz": [{ url: () => "/healthz", allow: "everyone" }],
  // Development only: answers 404 unless the local mail fake is configured (it is, in tests).
  "routes/dev.outbox": [{ url: () => "/dev/outbox", allow: "everyone" }],
  "routes/login": [
    { url: () => "/login", allow: "everyone" },
    { method: "POST", url: () => "/login", form: () => ({ email: "", password: "" }), allow: "everyone" },
  ],
  "routes/signup": [
    { url: () => "/signup", allow: "everyone" },
    { method: "POST", url: () => "/signup", form: () => ({ name: "", email: "", password: "" }), allow: "everyone" },
  ],
  "routes/logout": [{ url: () => "/logout", allow: "everyone" }],
  "routes/forgot-password": [
    { url: () => "/forgot-password", allow: "everyone" },
    { method: "POST", url: () => "/forgot-password", form: () => ({ email: "not an address" }), allow: "everyone" },
  ],
  "routes/reset-password.$token": [{ url: (f) => `/reset-password/${f.resetToken}`, allow: "everyone", ghost404: true }],
  "routes/invitations.$token": [{ url: (f) => `/invitations/${f.invitationToken}`, allow: "everyone", ghost404: true }],
  "routes/s.$token": [{ url: (f) => `/s/${f.shareToken}`, allow: "everyone", ghost404: true }],
  // The shared version uses no asset, so even the project's own asset is not served through the link, to anyone.
  "routes/s.$token.assets.$sha": [{ url: (f) => `/s/${f.shareToken}/assets/${f.assetSha}`, allow: "everyone", expectStatus: 404 }],
  "routes/s.$token.renders.$renderId.$file": [{ url: (f) => `/s/${f.shareToken}/renders/${f.renderId}/display.png`, allow: "everyone", ghost404: true }],

  "routes/docs.api": [{ url: () => "/docs/api", allow: "everyone" }],

  // Signed-in pages that belong to a person rather than a project.
  "routes/app-shell": "layout",
  "routes/projects._index": [
    { url: () => "/projects", allow: "signed-in" },
    { method: "POST", url: () => "/projects?index", form: () => ({ name: "" }), allow: "signed-in" },
  ],
  "routes/account": [
    { url: () => "/account", allow: "signed-in" },
    { method: "POST", url: () => "/account", form: () => ({ intent: "name", name: "" }), allow: "signed-in" },
  ],

  // One project.
  "routes/projects.$projectId": [{ url: PROJECT_VIEW(), allow: "view" }],
  "routes/projects.$projectId._index": [{ url: PROJECT_VIEW(), allow: "view" }],
  "routes/projects.$projectId.members": [
    { url: PROJECT_VIEW("/members"), allow: "view" },
    { method: "POST", url: PROJECT_VIEW("/members"), form: () => ({ intent: "invite", email: "not an address", role: "viewer" }), allow: "manage" },
    // A no-op role change (viewer stays viewer): allowed for owners, changes nothing.
    { method: "POST", url: PROJECT_VIEW("/members"), form: (f) => ({ intent: "change-role", userId: f.memberUserId, role: "viewer" }), allow: "manage" },
    { method: "POST", url: PROJECT_VIEW("/members"), form: () => ({ intent: "rename", name: "" }), allow: "manage" },
    // A wrong confirmation name: the owner gets a 400 and nothing is deleted.
    { method: "POST", url: PROJECT_VIEW("/members"), form: () => ({ intent: "delete-project", confirmName: "not the name" }), allow: "delete" },
    { method: "POST", url: PROJECT_VIEW("/members"), form: () => ({ intent: "no-such-intent" }), allow: "manage" },
  ],
  "routes/projects.$projectId.activity": [{ url: PROJECT_VIEW("/activity"), allow: "manage" }],
  "routes/projects.$projectId.scenes.$sceneId": [
    { url: (f) => `/projects/${f.projectId}/scenes/${f.sceneId}`, allow: "view" },
    { method: "POST", url: (f) => `/projects/${f.projectId}/scenes/${f.sceneId}`, form: () => ({ intent: "save" }), allow: "edit" },
  ],
  "routes/projects.$projectId.scenes.$sceneId.history": [{ url: (f) => `/projects/${f.projectId}/scenes/${f.sceneId}/history`, allow: "view" }],
  "routes/projects.$projectId.scenes.$sceneId.compare": [{ url: (f) => `/projects/${f.projectId}/scenes/${f.sceneId}/compare`, allow: "view" }],
  "routes/projects.$projectId.scenes.$sceneId.versions.$versionId.bundle": [
    { url: (f) => `/projects/${f.projectId}/scenes/${f.sceneId}/versions/${f.versionId}/bundle`, allow: "view" },
  ],
  "routes/projects.$projectId.renders._index": [{ url: PROJECT_VIEW("/renders"), allow: "view" }],
  "routes/projects.$projectId.renders.compare": [{ url: (f) => `/projects/${f.projectId}/renders/compare?a=${f.renderId}&b=${f.renderId}`, allow: "view" }],
  "routes/projects.$projectId.renders.publish": [{ method: "POST", url: PROJECT_VIEW("/renders/publish"), form: (f) => ({ sceneId: f.sceneId, meta: "{}" }), allow: "render" }],
  "routes/projects.$projectId.renders.$renderId.files.$file": [{ url: (f) => `/projects/${f.projectId}/renders/${f.renderId}/files/display.png`, allow: "view" }],
  "routes/projects.$projectId.assets._index": [
    { url: PROJECT_VIEW("/assets"), allow: "view" },
    { method: "POST", url: PROJECT_VIEW("/assets"), form: () => ({ intent: "delete", sha256: "nope" }), allow: "upload" },
  ],
  "routes/projects.$projectId.assets.upload": [{ method: "POST", url: PROJECT_VIEW("/assets/upload"), form: () => ({}), allow: "upload" }],
  // Staged uploads: anyone who may keep renders can start one (an empty description earns 400); the upload
  // itself (fixture: the owner's pending asset upload) answers only its starter, by session (the owner's
  // render-scope token cannot upload assets). A PUT of 2 bytes where 10 were declared earns 400.
  "routes/projects.$projectId.uploads": [{ method: "POST", url: PROJECT_VIEW("/uploads"), json: () => ({}), allow: "render" }],
  "routes/projects.$projectId.uploads.$uploadId.files.$slot": [
    { method: "PUT", url: (f) => `/projects/${f.projectId}/uploads/${f.uploadId}/files/file`, json: () => ({}), allow: "upload", onlyCallers: ["owner"] },
  ],
  "routes/projects.$projectId.uploads.$uploadId.finish": [{ method: "POST", url: (f) => `/projects/${f.projectId}/uploads/${f.uploadId}/finish`, allow: "upload", onlyCallers: ["owner"] }],
  "routes/projects.$projectId.uploads.$uploadId.cancel": [{ method: "POST", url: (f) => `/projects/${f.projectId}/uploads/${f.uploadId}/cancel`, allow: "upload", onlyCallers: ["owner"] }],
  "routes/projects.$projectId.assets.$sha": [{ url: (f) => `/projects/${f.projectId}/assets/${f.assetSha}`, allow: "view" }],
  "routes/projects.$projectId.assets[.]json": [{ url: PROJECT_VIEW("/assets.json"), allow: "view" }],
  "routes/projects.$projectId.pool": [
    { url: PROJECT_VIEW("/pool"), allow: "view" },
    { method: "POST", url: PROJECT_VIEW("/pool"), form: () => ({ intent: "queue" }), allow: "render" },
  ],
  "routes/projects.$projectId.sharing": [
    { url: PROJECT_VIEW("/sharing"), allow: "view" },
    { method: "POST", url: PROJECT_VIEW("/sharing"), form: () => ({ intent: "create", versionId: randomUUID() }), allow: "publish" },
  ],

  // HTTP API v1.
  "routes/api.v1.openapi[.]json": [{ url: () => "/api/v1/openapi.json", allow: "everyone" }],
  "routes/api.v1.$": [{ url: () => "/api/v1/no-such-endpoint", allow: "everyone", expectStatus: 404 }],
  "routes/api.v1.projects": [{ url: () => "/api/v1/projects", allow: "authenticated" }],
  "routes/api.v1.projects.$projectId": [{ url: (f) => `/api/v1/projects/${f.projectId}`, allow: "view" }],
  "routes/api.v1.projects.$projectId.scenes": [{ url: (f) => `/api/v1/projects/${f.projectId}/scenes`, allow: "view" }],
  "routes/api.v1.projects.$projectId.renders": [{ url: (f) => `/api/v1/projects/${f.projectId}/renders`, allow: "view" }],
  "routes/api.v1.scenes.$sceneId": [{ url: (f) => `/api/v1/scenes/${f.sceneId}`, allow: "view" }],
  "routes/api.v1.scenes.$sceneId.versions": [
    { url: (f) => `/api/v1/scenes/${f.sceneId}/versions`, allow: "view" },
    // An invalid version body: 422 once past authorisation, nothing saved.
    { method: "POST", url: (f) => `/api/v1/scenes/${f.sceneId}/versions`, json: () => ({ scene: { format: "not a scene" } }), allow: "edit" },
  ],
  "routes/api.v1.versions.$versionId": [{ url: (f) => `/api/v1/versions/${f.versionId}`, allow: "view" }],
  "routes/api.v1.renders": [
    // Continuing a finished 4-spp render to 1 spp asks for nothing new: refused after authorisation, nothing queued.
    { method: "POST", url: () => "/api/v1/renders", json: (f) => ({ continueFrom: f.renderId, spp: 1 }), allow: "render" },
  ],
  "routes/api.v1.renders.$renderId": [{ url: (f) => `/api/v1/renders/${f.renderId}`, allow: "view" }],
  "routes/api.v1.renders.$renderId.$file": [{ url: (f) => `/api/v1/renders/${f.renderId}/image.png`, allow: "view" }],
  "routes/api.v1.renders.$renderId.groups.$group": [{ url: (f) => `/api/v1/renders/${f.renderId}/groups/default.pfm`, allow: "view" }],
};
// ---------------------------------------------------------------------------------------------------------------

type Caller = "anonymous" | "outsider" | Role | `${TokenScope}-token`;
const CALLERS: Caller[] = ["anonymous", "outsider", "viewer", "editor", "owner", "read-token", "render-token"];

/** Tokens belong to the owner, so whatever a token is refused is refused by its scope alone. */
function expectedAllowed(allow: Allow, caller: Caller): boolean {
  if (allow === "everyone") return true;
  if (caller === "anonymous") return false;
  const token = caller.endsWith("-token") ? (caller.replace("-token", "") as TokenScope) : null;
  if (allow === "authenticated") return true;
  if (allow === "signed-in") return token === null;
  if (caller === "outsider") return false;
  if (token) return roleAllows("owner", allow) && scopeAllows(token, allow);
  return roleAllows(caller as Role, allow);
}

let app: AppServer;
let fixtures: Fixtures;
let ghost: Fixtures;
const people = new Map<Caller, Person>();
const PASSWORD = "route table password";

async function setUp(): Promise<void> {
  await ensureBucket();
  const users: Partial<Record<Caller, string>> = {};
  for (const caller of ["outsider", ...ROLES] as const) {
    const email = uniqueEmail(`access-${caller}`);
    users[caller] = (await createUser({ email, name: `Access ${caller}`, password: PASSWORD })).id;
    const person = new Person(app);
    const res = await person.signIn(email, PASSWORD);
    if (res.status !== 302) throw new Error(`could not sign in ${caller}: ${res.status}`);
    people.set(caller, person);
  }
  const project = await createProject({ name: "Access table project", ownerId: users.owner! });
  await db().insert(memberships).values([
    { projectId: project.id, userId: users.editor!, role: "editor" },
    { projectId: project.id, userId: users.viewer!, role: "viewer" },
  ]);
  const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: users.owner! });
  if (!created.ok) throw new Error("could not create the fixture scene");
  const render = await publishRender({
    projectId: project.id,
    sceneId: created.scene.id,
    meta: {
      versionId: created.version.id,
      title: "access table",
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
    createdBy: users.owner!,
  });
  // Content-addressed: the bytes must hash to the name, or the store reports the asset as corrupt.
  const assetBytes = new Uint8Array(randomBytes(48));
  const assetSha = createHash("sha256").update(assetBytes).digest("hex");
  await db().insert(assets).values({ projectId: project.id, sha256: assetSha, name: "kettle.obj", kind: "mesh", bytes: assetBytes.length, uploadedBy: users.owner! });
  await putObject(assetKey(assetSha), assetBytes);
  const link = await createShareLink({ projectId: project.id, versionId: created.version.id, label: "access table", includeRenders: true, createdBy: users.owner! });
  if (!link) throw new Error("could not create the fixture share link");
  const shareToken = link.token;
  fixtures = {
    projectId: project.id,
    sceneId: created.scene.id,
    versionId: created.version.id,
    renderId: render.id,
    assetSha,
    shareToken,
    shareLinkId: link.id,
    memberUserId: users.viewer!,
    invitationToken: (await createInvitation({ projectId: project.id, email: uniqueEmail("access-invitee"), role: "viewer", invitedBy: users.owner! })).token,
    resetToken: (await createPasswordReset(users.outsider!))!,
    uploadId: await (async () => {
      const started = await startUpload(project.id, users.owner!, { kind: "asset", name: "probe.obj", bytes: 10, sha256: "0".repeat(64) });
      if (!started.ok || !("upload" in started)) throw new Error("could not start the fixture upload");
      return started.upload.id;
    })(),
  };
  ghost = {
    projectId: randomUUID(),
    sceneId: randomUUID(),
    versionId: randomUUID(),
    renderId: randomUUID(),
    assetSha: randomBytes(32).toString("hex"),
    shareToken: randomBytes(32).toString("base64url"),
    shareLinkId: randomUUID(),
    memberUserId: randomUUID(),
    invitationToken: randomBytes(32).toString("base64url"),
    resetToken: randomBytes(32).toString("base64url"),
    uploadId: randomUUID(),
  };
  for (const scope of ["read", "render"] as const) {
    const { token } = await createToken({ userId: users.owner!, name: `access ${scope}`, scope, expiresAt: null });
    const person = new Person(app);
    person.tokenHeader = `Bearer ${token}`;
    people.set(`${scope}-token`, person);
  }
  people.set("anonymous", new Person(app));
}

type Outcome = { status: number; location: string | null };

async function run(caller: Caller, probe: Probe, f: Fixtures): Promise<Outcome> {
  const person = people.get(caller)!;
  const headers: Record<string, string> = {};
  let body: string | undefined;
  if (probe.json) {
    headers["content-type"] = "application/json";
    body = JSON.stringify(probe.json(f));
  }
  const method = probe.method ?? "GET";
  const res = probe.form ? await person.send(probe.url(f), { method, form: probe.form(f), headers }) : await person.send(probe.url(f), { method, headers, body });
  return { status: res.status, location: res.location };
}

function isLoginRedirect(o: Outcome): boolean {
  return o.status >= 300 && o.status < 400 && (o.location ?? "").startsWith("/login");
}

function describeOutcome(o: Outcome): string {
  return o.location ? `${o.status} → ${o.location}` : String(o.status);
}

beforeAll(async () => {
  app = await startApp();
  await setUp();
});
afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

describe("route access table", () => {
  it("has a row for every route of the app", () => {
    const missing = app.routes.filter((r: AppRoute) => !(r.id in ACCESS)).map((r) => `${r.id} (${r.path})`);
    expect(missing, `routes without a row in tests/integration/route-access.test.ts: add one each`).toEqual([]);
    const stale = Object.keys(ACCESS).filter((id) => !app.routes.some((r) => r.id === id));
    expect(stale, "rows for routes that no longer exist").toEqual([]);
  });

  it("allows exactly the expected callers on every route, and refuses the rest without revealing existence", { timeout: 1_200_000 }, async () => {
    const failures: string[] = [];
    const summary: string[] = [];
    for (const route of app.routes) {
      const probes = ACCESS[route.id];
      if (!probes || probes === "layout") continue;
      for (const probe of probes) {
        const label = `${probe.method ?? "GET"} ${probe.url(fixtures)} [${route.id}]`;
        const cells: string[] = [];
        // Reads run for all callers at once; actions run one after another, the owner last, so an allowed
        // action cannot change what the others see.
        const outcomes = new Map<Caller, Outcome>();
        if ((probe.method ?? "GET") === "GET") {
          const all = await Promise.all(CALLERS.map((c) => run(c, probe, fixtures)));
          CALLERS.forEach((c, i) => outcomes.set(c, all[i]));
        } else {
          for (const c of CALLERS) outcomes.set(c, await run(c, probe, fixtures));
        }
        for (const caller of CALLERS) {
          const outcome = outcomes.get(caller)!;
          const allowed = probe.onlyCallers ? probe.onlyCallers.includes(caller) : expectedAllowed(probe.allow, caller);
          if (outcome.status >= 500) {
            failures.push(`${label} as ${caller}: server error ${outcome.status}`);
            cells.push(`${caller}=500`);
            continue;
          }
          if (probe.expectStatus !== undefined) {
            if (outcome.status !== probe.expectStatus) failures.push(`${label} as ${caller}: expected ${probe.expectStatus}, got ${describeOutcome(outcome)}`);
            cells.push(`${caller}=${describeOutcome(outcome)}`);
            continue;
          }
          const refused = outcome.status === 401 || outcome.status === 403 || outcome.status === 404 || isLoginRedirect(outcome);
          cells.push(`${caller}=${allowed ? "allow" : "refuse"}:${describeOutcome(outcome)}`);
          if (allowed && refused && !probe.ghost404) failures.push(`${label} as ${caller}: expected allowed, got ${describeOutcome(outcome)}`);
          if (!allowed) {
            if (!refused) failures.push(`${label} as ${caller}: expected refused, got ${describeOutcome(outcome)}`);
            else if (outcome.status === 403) {
              // 403 is fair only for someone who may see the thing anyway (a viewer trying to edit, say).
              if (!expectedAllowed("view", caller)) failures.push(`${label} as ${caller}: 403 reveals that the thing exists; answer 404`);
            }
            else if (caller === "anonymous" && !(isLoginRedirect(outcome) || outcome.status === 401)) {
              failures.push(`${label} as anonymous: expected a sign-in redirect or 401, got ${describeOutcome(outcome)}`);
            } else if (caller !== "anonymous" && isLoginRedirect(outcome)) {
              failures.push(`${label} as ${caller}: a signed-in caller was sent to sign in`);
            } else if (caller !== "anonymous" && outcome.status !== 403) {
              // The refusal must be indistinguishable from asking about something that does not exist.
              const phantom = await run(caller, probe, ghost);
              if (phantom.status !== outcome.status) {
                failures.push(`${label} as ${caller}: refused with ${outcome.status} but a made-up id answers ${phantom.status} (existence revealed)`);
              }
            }
          }
          if (probe.ghost404) {
            const phantom = await run(caller, probe, ghost);
            if (phantom.status !== 404) failures.push(`${label} as ${caller}: a made-up secret answered ${describeOutcome(phantom)}, expected 404`);
            if (refused) failures.push(`${label} as ${caller}: the real link was refused (${describeOutcome(outcome)})`);
          }
        }
        summary.push(`${label}\n    ${cells.join("  ")}`);
      }
    }
    console.log(`route access (${summary.length} probes × ${CALLERS.length} callers):\n${summary.join("\n")}`);
    expect(failures).toEqual([]);
  });
});
