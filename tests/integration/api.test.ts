// API v1 over real HTTP against the built server, with tokens of each scope and people of each role.
// No render worker runs here (renders stay queued); the pool itself is tested in pool.test.ts.
import { Validator } from "@seriousme/openapi-schema-validator";
import { Ajv2020 } from "ajv/dist/2020.js";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { ApiRender, ApiVersion } from "~/services/api-schemas.server";
import { dbPool } from "~/services/db.server";
import { addMember, client, makeProject, makeScene, makeToken, makeUser, serveApp, studioScene, type Served } from "./api-fixtures";

let served: Served;
let base: string;
let owner: Awaited<ReturnType<typeof makeUser>>;
let project: Awaited<ReturnType<typeof makeProject>>;
let scene: Awaited<ReturnType<typeof makeScene>>;
let readToken: string;
let renderToken: string;

/** Checks an answer against a component schema of the served OpenAPI document (JSON Schema 2020-12, via ajv). */
let conforms: (schemaId: string, body: unknown) => string | null = () => "schemas not loaded";

beforeAll(async () => {
  // No worker serves this pool: queued renders stay queued, whatever workers others run on the database.
  served = await serveApp({ RENDER_POOL: `api-test-${Math.random().toString(36).slice(2, 10)}` });
  base = served.baseUrl;
  owner = await makeUser("api-owner");
  project = await makeProject(owner.id);
  scene = await makeScene(project.id, owner.id);
  readToken = await makeToken(owner.id, "read");
  renderToken = await makeToken(owner.id, "render");
  const doc = (await client(base).get("/api/v1/openapi.json")).json;
  const ajv = new Ajv2020({ strict: false, validateFormats: false });
  ajv.addSchema({ $id: "tracewell-openapi", components: doc.components }, "tracewell-openapi");
  conforms = (id, body) => {
    const check = ajv.getSchema(`tracewell-openapi#/components/schemas/${id}`);
    if (!check) return `no schema ${id}`;
    return check(body) ? null : ajv.errorsText(check.errors);
  };
});

afterAll(async () => {
  await served?.stop();
  await dbPool().end();
});

const expectErrorShape = (json: Record<string, unknown>, code: string) => {
  const error = json.error as { code: unknown; message: unknown };
  expect(error.code).toBe(code);
  expect(typeof error.message).toBe("string");
  expect((error.message as string).length).toBeGreaterThan(5);
};

describe("authentication and the error shape", () => {
  it("refuses a request without a token with 401, WWW-Authenticate and the JSON error shape", async () => {
    const res = await client(base).get("/api/v1/projects");
    expect(res.status).toBe(401);
    // RFC 6750 §3: a 401 for a bearer-protected resource carries WWW-Authenticate: Bearer
    expect(res.headers.get("www-authenticate")).toMatch(/^Bearer /);
    expectErrorShape(res.json, "unauthenticated");
  });

  it("refuses an unknown token", async () => {
    const res = await client(base, "tw_" + "x".repeat(43)).get("/api/v1/projects");
    expect(res.status).toBe(401);
    expectErrorShape(res.json, "unauthenticated");
  });

  it("answers unknown endpoints with a JSON 404", async () => {
    const res = await client(base, readToken).get("/api/v1/kettles");
    expect(res.status).toBe(404);
    expectErrorShape(res.json, "not_found");
  });

  it("serves the OpenAPI 3.1 document without a token, generated from the zod schemas", async () => {
    const res = await client(base).get("/api/v1/openapi.json");
    expect(res.status).toBe(200);
    const doc = res.json as { openapi: string; paths: Record<string, Record<string, unknown>>; components: { schemas: Record<string, { properties?: Record<string, unknown>; required?: string[] }> } };
    expect(doc.openapi).toBe("3.1.0");
    for (const p of ["/api/v1/projects", "/api/v1/scenes/{sceneId}/versions", "/api/v1/versions/{versionId}", "/api/v1/renders", "/api/v1/renders/{renderId}"]) {
      expect(Object.keys(doc.paths)).toContain(p);
    }
    expect(Object.keys(doc.paths["/api/v1/scenes/{sceneId}/versions"]).sort()).toEqual(["get", "post"]);
    // The body schema is the one the handler parses: same required fields.
    expect(doc.components.schemas.CreateVersionBody.required?.sort()).toEqual(["message", "parentVersionId", "scene"]);
    expect(Object.keys(doc.components.schemas.Render.properties ?? {})).toContain("accumulationHash");
    expect(Object.keys(doc.components.schemas.Error.properties ?? {})).toEqual(["error"]);
    // The official OpenAPI 3.1 JSON Schema (via @seriousme/openapi-schema-validator) accepts the document.
    const result = await new Validator().validate(res.json);
    expect(result.errors ?? null).toBeNull();
    expect(result.valid).toBe(true);
  });

  it("answers in the shapes the OpenAPI document declares", async () => {
    const api = client(base, renderToken);
    expect(conforms("ProjectPage", (await api.get("/api/v1/projects")).json)).toBeNull();
    expect(conforms("ScenePage", (await api.get(`/api/v1/projects/${project.id}/scenes`)).json)).toBeNull();
    expect(conforms("VersionPage", (await api.get(`/api/v1/scenes/${scene.scene.id}/versions`)).json)).toBeNull();
    expect(conforms("Version", (await api.get(`/api/v1/versions/${scene.version.id}`)).json)).toBeNull();
    const queued = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 3, width: 8, height: 6 });
    expect(conforms("Render", queued.json)).toBeNull();
    const id = (queued.json as unknown as ApiRender).id;
    expect(conforms("Render", (await api.get(`/api/v1/renders/${id}`)).json)).toBeNull();
    expect(conforms("RenderPage", (await api.get(`/api/v1/projects/${project.id}/renders`)).json)).toBeNull();
    expect(conforms("Error", (await api.get("/api/v1/renders/not-a-render")).json)).toBeNull();
    expect(conforms("Error", (await api.post("/api/v1/renders", { spp: -1 })).json)).toBeNull();
    // …and the check can fail: a render without its links is not a Render.
    expect(conforms("Render", { ...(queued.json as object), links: undefined })).not.toBeNull();
    await api.del(`/api/v1/renders/${id}`);
  });
});

describe("a read-scoped token", () => {
  it("lists projects, scenes and versions", async () => {
    const api = client(base, readToken);
    const projects = await api.get("/api/v1/projects");
    expect(projects.status).toBe(200);
    const ids = (projects.json.items as { id: string; role: string }[]).map((p) => p.id);
    expect(ids).toContain(project.id);
    const scenes = await api.get(`/api/v1/projects/${project.id}/scenes`);
    expect((scenes.json.items as { id: string; headVersionId: string }[]).find((s) => s.id === scene.scene.id)?.headVersionId).toBe(scene.version.id);
    const versions = await api.get(`/api/v1/scenes/${scene.scene.id}/versions`);
    expect((versions.json.items as { id: string }[]).map((v) => v.id)).toEqual([scene.version.id]);
  });

  it("reads a version with a strong ETag and gets 304 for If-None-Match", async () => {
    const api = client(base, readToken);
    const res = await api.get(`/api/v1/versions/${scene.version.id}`);
    expect(res.status).toBe(200);
    const v = res.json as unknown as ApiVersion;
    expect((v.scene as { name: string }).name).toBe("Osier lamp corner (API test)");
    const etag = res.headers.get("etag");
    // RFC 9110 §8.8.3: a strong entity tag is a quoted string without the W/ prefix
    expect(etag).toMatch(/^"[^"]+"$/);
    const again = await api.get(`/api/v1/versions/${scene.version.id}`, { "If-None-Match": etag! });
    expect(again.status).toBe(304);
    expect(again.bytes.length).toBe(0);
  });

  it("may not save versions, queue or cancel renders (403 names the scope)", async () => {
    const api = client(base, readToken);
    const save = await api.post(`/api/v1/scenes/${scene.scene.id}/versions`, { parentVersionId: scene.version.id, scene: studioScene(), message: "try" });
    expect(save.status).toBe(403);
    expectErrorShape(save.json, "forbidden");
    expect(save.json.error?.message).toContain('"read"');
    const render = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 4 });
    expect(render.status).toBe(403);
  });
});

describe("a render-scoped token", () => {
  it("saves a version (201), then gets 409 with the head when saving on a stale parent", async () => {
    const fresh = await makeScene(project.id, owner.id);
    const api = client(base, renderToken);
    const first = await api.post(`/api/v1/scenes/${fresh.scene.id}/versions`, {
      parentVersionId: fresh.version.id,
      scene: studioScene({ radius: 0.25 }),
      message: "Smaller lamp shade",
    });
    expect(first.status).toBe(201);
    const created = first.json as unknown as ApiVersion;
    expect(first.headers.get("location")).toBe(`/api/v1/versions/${created.id}`);
    expect(created.number).toBe(2);
    expect(created.parentId).toBe(fresh.version.id);

    const stale = await api.post(`/api/v1/scenes/${fresh.scene.id}/versions`, {
      parentVersionId: fresh.version.id,
      scene: studioScene({ radius: 0.2 }),
      message: "Based on the old head",
    });
    expect(stale.status).toBe(409);
    expectErrorShape(stale.json, "conflict");
    expect(stale.json.error?.path).toBe("parentVersionId");
    expect(stale.json.error?.headVersionId).toBe(created.id);
  });

  it("gets 422 naming the scene path of every validation problem, and keeps the head", async () => {
    const api = client(base, renderToken);
    const bad = studioScene();
    (bad.lights[1].shape as { radius: number }).radius = -1;
    const res = await api.post(`/api/v1/scenes/${scene.scene.id}/versions`, { parentVersionId: scene.version.id, scene: bad, message: "Broken fill" });
    expect(res.status).toBe(422);
    expectErrorShape(res.json, "validation_failed");
    expect(res.json.error?.path).toBe("scene.lights[1].shape.radius");
    const versions = await api.get(`/api/v1/scenes/${scene.scene.id}/versions`);
    expect((versions.json.items as unknown[]).length).toBe(1);
  });

  it("names body fields: missing message, wrong types, unknown keys", async () => {
    const api = client(base, renderToken);
    const res = await api.post(`/api/v1/scenes/${scene.scene.id}/versions`, { parentVersionId: "not-an-id", scene: studioScene(), colour: "teal" });
    expect(res.status).toBe(422);
    const paths = (res.json.error?.issues ?? []).map((i) => i.path).sort();
    expect(paths).toEqual(expect.arrayContaining(["message", "parentVersionId"]));
    expect(JSON.stringify(res.json.error)).toContain("colour");
  });

  it("rejects non-JSON bodies with 415 and broken JSON with 400", async () => {
    const api = client(base, renderToken);
    const notJson = await api.post("/api/v1/renders", "spp=4", { "Content-Type": "application/x-www-form-urlencoded" });
    expect(notJson.status).toBe(415);
    const broken = await api.post("/api/v1/renders", '{"versionId": ');
    expect(broken.status).toBe(400);
    expectErrorShape(broken.json, "invalid_json");
  });

  it("queues a render (202), shows its chunks, and cancels it (then 409 on a second cancel)", async () => {
    const api = client(base, renderToken);
    const res = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 12, seed: 5, width: 30, height: 20, chunkPasses: 5 });
    expect(res.status).toBe(202);
    const render = res.json as unknown as ApiRender;
    expect(res.headers.get("location")).toBe(`/api/v1/renders/${render.id}`);
    expect(render).toMatchObject({ status: "queued", spp: 12, sppDone: 0, seed: 5, width: 30, height: 20, source: "pool", progress: 0 });

    const got = await api.get(`/api/v1/renders/${render.id}`);
    const detail = got.json as unknown as ApiRender;
    expect(detail.chunks?.map((c) => [c.passStart, c.passEnd])).toEqual([
      [0, 5],
      [5, 10],
      [10, 12],
    ]);
    const notReady = await api.get(`/api/v1/renders/${render.id}/image.png`);
    expect(notReady.status).toBe(409);
    expectErrorShape(notReady.json, "not_ready");

    // A read token can see it but not cancel it.
    expect((await client(base, readToken).del(`/api/v1/renders/${render.id}`)).status).toBe(403);
    const cancelled = await api.del(`/api/v1/renders/${render.id}`);
    expect(cancelled.status).toBe(200);
    expect((cancelled.json as unknown as ApiRender).status).toBe("cancelled");
    expect((cancelled.json as unknown as ApiRender).chunks?.every((c) => c.status === "cancelled")).toBe(true);
    expect((await api.del(`/api/v1/renders/${render.id}`)).status).toBe(409);

    const listed = await api.get(`/api/v1/projects/${project.id}/renders?status=cancelled`);
    expect((listed.json.items as { id: string }[]).map((r) => r.id)).toContain(render.id);
  });

  it("names render body problems: spp out of range, both versionId and continueFrom", async () => {
    const api = client(base, renderToken);
    const zero = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 0 });
    expect(zero.status).toBe(422);
    expect(zero.json.error?.path).toBe("spp");
    const both = await api.post("/api/v1/renders", { versionId: scene.version.id, continueFrom: scene.version.id, spp: 4 });
    expect(both.status).toBe(422);
    expect(both.json.error?.path).toBe("continueFrom");
    const huge = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 4, width: 8192, height: 8192 });
    expect(huge.status).toBe(422);
    expect(huge.json.error?.path).toBe("width");
    expect(huge.json.error?.message).toContain("width × height");
    const missing = await api.post("/api/v1/renders", { versionId: "3f1d7c1e-0000-4000-8000-000000000000", spp: 4 });
    expect(missing.status).toBe(404);
  });
});

describe("roles and other people's projects", () => {
  it("hides another team's project as 404, never 403", async () => {
    const stranger = await makeUser("api-stranger");
    const api = client(base, await makeToken(stranger.id, "render"));
    for (const path of [`/api/v1/projects/${project.id}/scenes`, `/api/v1/versions/${scene.version.id}`, `/api/v1/scenes/${scene.scene.id}/versions`]) {
      const res = await api.get(path);
      expect(res.status).toBe(404);
      expectErrorShape(res.json, "not_found");
    }
    expect((await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 4 })).status).toBe(404);
    expect(((await api.get("/api/v1/projects")).json.items as { id: string }[]).map((p) => p.id)).not.toContain(project.id);
  });

  it("lets a viewer's render-scoped token read but not render (the role caps the token)", async () => {
    const viewer = await makeUser("api-viewer");
    await addMember(project.id, viewer.id, "viewer");
    const api = client(base, await makeToken(viewer.id, "render"));
    expect((await api.get(`/api/v1/versions/${scene.version.id}`)).status).toBe(200);
    const res = await api.post("/api/v1/renders", { versionId: scene.version.id, spp: 4 });
    expect(res.status).toBe(403);
    expect(res.json.error?.message).toContain("viewer");
  });
});

describe("pagination", () => {
  it("walks versions page by page with cursors and a Link header, without gaps or repeats", async () => {
    const fresh = await makeScene(project.id, owner.id);
    const api = client(base, renderToken);
    let parent = fresh.version.id;
    for (let i = 0; i < 6; i++) {
      const res = await api.post(`/api/v1/scenes/${fresh.scene.id}/versions`, { parentVersionId: parent, scene: studioScene({ seed: 100 + i }), message: `Seed ${100 + i}` });
      expect(res.status).toBe(201);
      parent = (res.json as unknown as ApiVersion).id;
    }
    const numbers: number[] = [];
    let path: string | null = `/api/v1/scenes/${fresh.scene.id}/versions?limit=3`;
    let pages = 0;
    while (path) {
      const res = await api.get(path);
      expect(res.status).toBe(200);
      numbers.push(...(res.json.items as { number: number }[]).map((v) => v.number));
      const link = res.headers.get("link");
      // RFC 8288 web linking: <uri>; rel="next"
      path = link ? /^<([^>]+)>; rel="next"$/.exec(link)![1] : null;
      if (path) expect(res.json.nextCursor).toBeTruthy();
      pages++;
    }
    expect(numbers).toEqual([7, 6, 5, 4, 3, 2, 1]);
    expect(pages).toBe(3);
  });

  it("walks renders by (created, id) cursors across rows created in one burst", async () => {
    const own = await makeProject(owner.id, "Harrow Lane paging");
    const s = await makeScene(own.id, owner.id);
    const api = client(base, renderToken);
    const made = await Promise.all(Array.from({ length: 7 }, () => api.post("/api/v1/renders", { versionId: s.version.id, spp: 2, width: 8, height: 6 })));
    const ids = made.map((r) => (r.json as unknown as ApiRender).id);
    await Promise.all(ids.map((id) => api.del(`/api/v1/renders/${id}`)));
    const seen: string[] = [];
    let cursor: string | null = null;
    do {
      const res = await api.get(`/api/v1/projects/${own.id}/renders?limit=2${cursor ? `&cursor=${cursor}` : ""}`);
      seen.push(...(res.json.items as { id: string }[]).map((r) => r.id));
      cursor = res.json.nextCursor ?? null;
    } while (cursor);
    expect(seen.sort()).toEqual([...ids].sort());
  });

  it("rejects a forged cursor and a bad limit with 400 naming the parameter", async () => {
    const api = client(base, readToken);
    const forged = await api.get(`/api/v1/projects/${project.id}/renders?cursor=bm90LWEtY3Vyc29y`);
    expect(forged.status).toBe(400);
    expect(forged.json.error?.path).toBe("cursor");
    const limit = await api.get("/api/v1/projects?limit=5000");
    expect(limit.status).toBe(400);
    expect(limit.json.error?.path).toBe("limit");
  });
});

describe("rate limit", () => {
  it("answers a burst beyond the per-token allowance with 429 and Retry-After, other tokens unaffected", async () => {
    const token = await makeToken(owner.id, "read");
    const api = client(base, token);
    const results = await Promise.all(Array.from({ length: 220 }, () => api.get("/api/v1/projects?limit=1")));
    const limited = results.filter((r) => r.status === 429);
    const ok = results.filter((r) => r.status === 200);
    expect(ok.length).toBeGreaterThan(0);
    expect(limited.length).toBeGreaterThan(0);
    expect(ok.length + limited.length).toBe(results.length);
    // RFC 6585 §4: 429 Too Many Requests MAY include Retry-After (delay-seconds, RFC 9110 §10.2.3)
    expect(Number(limited[0].headers.get("retry-after"))).toBeGreaterThanOrEqual(1);
    expectErrorShape(limited[0].json, "rate_limited");
    expect(ok[0].headers.get("ratelimit-limit")).toMatch(/^\d+$/);
    const other = await client(base, readToken).get("/api/v1/projects?limit=1");
    expect(other.status).toBe(200);
  });
});
