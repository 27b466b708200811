// Faults against a served build: the PostgreSQL cluster stopped and started while requests and a pool render
// are running, and the object store failing during a publish. Each test is bounded in time and restores what it
// broke (the cluster is started again in `finally` whatever happens).
//
// The database outage is real: it touches every process using the local cluster for a few seconds, so this file
// keeps it to one short outage, and bin/test runs it on its own after the other files. Run it alone by hand too:
// bin/with-test-env npx vitest run tests/integration/faults.test.ts
import { execFile } from "node:child_process";
import { createServer, request as httpRequest, type IncomingMessage, type Server, type ServerResponse } from "node:http";
import { promisify } from "node:util";
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { accumulationHash, compileScene, encodePfm, encodePng, TRACER_VERSION, validateScene } from "@tracer/index";
import { renders } from "~/db/schema";
import { sceneForRender } from "~/models/render-job.server";
import { createUser } from "~/models/user.server";
import type { ApiRender } from "~/services/api-schemas.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket, objectExists } from "~/services/storage.server";
import { renderPasses } from "~/workers/pool.server";
import type { AppServer } from "../support/app-server";
import { Person, uniqueEmail } from "../support/person";
import { client, freePort, makeProject, makeScene, makeToken, serveApp, startWorker, studioScene, waitForOutput, type Served, type WorkerProc } from "./api-fixtures";

const run = promisify(execFile);
const PASSWORD = "fault tolerant kettle";
const PGDATA = process.env.PGDATA ?? "";
const PGBIN = process.env.PGBIN ?? "";

async function pgCtl(args: string[]): Promise<void> {
  const cmd = `${PGBIN}/pg_ctl`;
  if (process.getuid?.() === 0) await run("runuser", ["-u", "postgres", "--", cmd, "-D", PGDATA, ...args], { timeout: 90_000 });
  else await run(cmd, ["-D", PGDATA, ...args], { timeout: 90_000 });
}
const stopDatabase = () => pgCtl(["stop", "-m", "fast", "-w", "-t", "60"]);
async function databaseRunning(): Promise<boolean> {
  try {
    await pgCtl(["status"]);
    return true;
  } catch {
    return false;
  }
}
/** Starts the cluster; another process on this machine (bin/with-test-env) may have started it first, which is fine. */
async function startDatabase(): Promise<void> {
  try {
    await pgCtl(["-l", `${PGDATA}/server.log`, "-w", "-t", "60", "start"]);
  } catch (e) {
    if (!(await databaseRunning())) throw e;
  }
}

// A render pool of our own, so workers other people run on the shared test database never take these chunks.
const POOL = process.env.TRACEWELL_URL ? (process.env.RENDER_POOL ?? "") : `faults-${Math.random().toString(36).slice(2, 10)}`;
const poolEnv: Record<string, string> = POOL ? { RENDER_POOL: POOL } : {};

type Probe = { phase: "before" | "down" | "after"; path: string; status: number; body: string };

/** One request with a bound: a server that hangs instead of answering shows up as status 0. */
async function probe(url: string, headers: Record<string, string> = {}): Promise<{ status: number; body: string }> {
  try {
    const res = await fetch(url, { headers, signal: AbortSignal.timeout(20_000) });
    return { status: res.status, body: (await res.text()).slice(0, 500) };
  } catch (e) {
    return { status: 0, body: String(e) };
  }
}

// ---------------------------------------------------------------------------------------------------------

describe("the database restarted while requests and a pool render run", () => {
  let served: Served;
  let worker: WorkerProc;

  beforeAll(async () => {
    expect(PGDATA && PGBIN, "run under bin/with-test-env (it exports PGDATA and PGBIN)").toBeTruthy();
    await ensureBucket();
    served = await serveApp(poolEnv);
    worker = startWorker("faults-w1", poolEnv);
    await waitForOutput(worker, /render worker ready/);
  }, 600_000);

  afterAll(async () => {
    if (!(await databaseRunning())) await startDatabase();
    await worker?.stop();
    await served?.stop();
  });

  it("answers errors while it is down, recovers by itself, and the render finishes bit-identical", async () => {
    const ownerId = (await createUser({ email: uniqueEmail("faults"), name: "Faults", password: PASSWORD })).id;
    const project = await makeProject(ownerId, "Harrow Lane faults");
    const doc = studioScene({ width: 40, height: 24, spp: 48, seed: 41 });
    const { version } = await makeScene(project.id, ownerId, doc);
    const token = await makeToken(ownerId, "render");
    const api = client(served.baseUrl, token);
    const auth = { authorization: `Bearer ${token}` };

    // A pool render long enough to span the outage: 12 chunks of 4 passes.
    const queued = await api.post("/api/v1/renders", { versionId: version.id, spp: 48, chunkPasses: 4 });
    expect(queued.status).toBe(202);
    const renderId = (queued.json as unknown as ApiRender).id;
    const until = Date.now() + 240_000;
    for (;;) {
      const r = (await api.get(`/api/v1/renders/${renderId}`)).json as unknown as ApiRender;
      if (r.sppDone >= 4 || r.status === "done") break;
      if (Date.now() > until) throw new Error("the render never started");
      await new Promise((res) => setTimeout(res, 200));
    }

    const probes: Probe[] = [];
    let phase: Probe["phase"] = "before";
    let traffic = true;
    const loop = (async () => {
      while (traffic) {
        const startedIn = phase;
        const [h, a] = await Promise.all([probe(`${served.baseUrl}/healthz`), probe(`${served.baseUrl}/api/v1/projects/${project.id}`, auth)]);
        // A request in flight while the phase changed overlapped the outage: it counts as "down".
        const p = startedIn === phase ? startedIn : "down";
        probes.push({ phase: p, path: "/healthz", ...h }, { phase: p, path: "/api/v1/projects/:id", ...a });
        await new Promise((res) => setTimeout(res, 250));
      }
    })();

    await new Promise((res) => setTimeout(res, 1000));
    let recoveredAfter = -1;
    try {
      phase = "down";
      await stopDatabase();
      await new Promise((res) => setTimeout(res, 4000));
    } finally {
      await startDatabase();
    }
    phase = "after";
    const started = Date.now();
    // Recovery by itself: no restart of the app, only waiting (bounded).
    while (Date.now() - started < 90_000) {
      const h = await probe(`${served.baseUrl}/healthz`);
      const a = await probe(`${served.baseUrl}/api/v1/projects/${project.id}`, auth);
      if (h.status === 200 && a.status === 200) {
        recoveredAfter = Date.now() - started;
        break;
      }
      await new Promise((res) => setTimeout(res, 500));
    }
    await new Promise((res) => setTimeout(res, 1000));
    traffic = false;
    await loop;

    const down = probes.filter((p) => p.phase === "down");
    const after = probes.filter((p) => p.phase === "after").slice(-4);
    console.log(
      `faults: ${probes.length} requests; while down: ${down.map((p) => `${p.path === "/healthz" ? "h" : "a"}${p.status}`).join(",")}; recovered ${recoveredAfter} ms after the database came back`,
    );
    expect(probes.filter((p) => p.phase === "before").every((p) => p.status === 200)).toBe(true);
    // Every request was answered: none hung until the client gave up (status 0).
    expect(probes.filter((p) => p.status === 0).map((p) => `${p.phase} ${p.path}: ${p.body}`)).toEqual([]);
    // The outage was seen, and reported as such by the health check.
    const sick = down.filter((p) => p.path === "/healthz" && p.status === 503);
    expect(sick.length, "the health check reported the outage").toBeGreaterThan(0);
    for (const p of sick) expect(JSON.parse(p.body)).toMatchObject({ status: "degraded", database: "unreachable" });
    // While down, the API answers a server error, never a 4xx that would blame the caller (401 "bad token",
    // 404 "no such project"); another process on the machine may restart the cluster early, so 200 is allowed.
    for (const p of down.filter((x) => x.path !== "/healthz")) {
      expect(p.status === 200 || p.status >= 500, `${p.path} while the database was down answered ${p.status}: ${p.body}`).toBe(true);
    }
    expect(recoveredAfter, "the app answered 200 again without being restarted").toBeGreaterThanOrEqual(0);
    for (const p of after) expect(p.status, `${p.path} after recovery`).toBe(200);

    // The render continues across the outage and ends exactly as one uninterrupted process would.
    const stop = Date.now() + 300_000;
    let final: ApiRender;
    for (;;) {
      final = (await api.get(`/api/v1/renders/${renderId}`)).json as unknown as ApiRender;
      if (final.status === "done" || final.status === "failed") break;
      if (Date.now() > stop) throw new Error(`render still ${final.status} ${final.sppDone}/48: ${worker.output().slice(-3000)}`);
      await new Promise((res) => setTimeout(res, 500));
    }
    expect(final.status, worker.output().slice(-3000)).toBe("done");
    const checked = validateScene(sceneForRender(doc, { width: 40, height: 24, seed: 41 }));
    if (!checked.ok) throw new Error(JSON.stringify(checked.issues));
    const reference = await renderPasses(compileScene(checked.scene, new Map()), 0, 48);
    expect(final.accumulationHash).toBe(accumulationHash(reference!));
  }, 900_000);
});

// ---------------------------------------------------------------------------------------------------------
// The object store failing during a publish

type StoreProxy = { url: string; putKeys: string[]; failPutsAfter: number; failAll: boolean; close(): Promise<void> };

/** An HTTP proxy in front of the S3 fake that starts refusing writes (and optionally everything) after a number of PUTs. */
async function storeProxy(target: string): Promise<StoreProxy> {
  const t = new URL(target);
  const state: StoreProxy = { url: "", putKeys: [], failPutsAfter: Infinity, failAll: false, close: async () => undefined };
  let puts = 0;
  const server: Server = createServer((req: IncomingMessage, res: ServerResponse) => {
    const isPut = req.method === "PUT";
    if (isPut) {
      puts++;
      state.putKeys.push(decodeURIComponent((req.url ?? "").split("?")[0]!.split("/").slice(2).join("/")));
    }
    if (state.failAll && puts > state.failPutsAfter) {
      req.resume();
      req.socket.destroy();
      return;
    }
    if (isPut && puts > state.failPutsAfter) {
      req.resume();
      res.writeHead(503, { "content-type": "application/xml" });
      res.end('<?xml version="1.0" encoding="UTF-8"?><Error><Code>ServiceUnavailable</Code><Message>store down (test)</Message></Error>');
      return;
    }
    const upstream = httpRequest({ host: t.hostname, port: t.port, method: req.method, path: req.url, headers: req.headers }, (up) => {
      res.writeHead(up.statusCode ?? 502, up.headers);
      up.pipe(res);
    });
    upstream.on("error", () => res.destroy());
    req.pipe(upstream);
  });
  const port = await freePort();
  await new Promise<void>((r) => server.listen(port, "127.0.0.1", r));
  state.url = `http://127.0.0.1:${port}`;
  state.close = () => new Promise((r) => server.close(() => r()));
  return state;
}

describe("the object store unavailable during a publish", () => {
  const realStore = process.env.S3_ENDPOINT ?? "";
  let proxy: StoreProxy;
  let viaProxy: Served;
  let deadStore: Served;
  let ctx: { projectId: string; sceneId: string; versionId: string; email: string };

  beforeAll(async () => {
    await ensureBucket();
    proxy = await storeProxy(realStore);
    viaProxy = await serveApp({ S3_ENDPOINT: proxy.url });
    deadStore = await serveApp({ S3_ENDPOINT: `http://127.0.0.1:${await freePort()}` });
    const email = uniqueEmail("faults-publish");
    const user = await createUser({ email, name: "Publisher", password: PASSWORD });
    const project = await makeProject(user.id, "Harrow Lane publish faults");
    const { scene, version } = await makeScene(project.id, user.id, studioScene({ width: 16, height: 12, spp: 4, seed: 5 }));
    ctx = { projectId: project.id, sceneId: scene.id, versionId: version.id, email };
  }, 600_000);

  afterAll(async () => {
    await viaProxy?.stop();
    await deadStore?.stop();
    await proxy?.close();
    await dbPool().end();
  });

  async function publish(baseUrl: string): Promise<{ status: number; json: { ok: boolean; error?: string } }> {
    const app: AppServer = { routes: [], close: async () => undefined, fetch: (p, init) => fetch(baseUrl + p, { redirect: "manual", ...init }) };
    const person = new Person(app);
    const signIn = await person.signIn(ctx.email, PASSWORD);
    if (signIn.status !== 302) throw new Error(`sign-in failed: ${signIn.status}`);
    const w = 16, h = 12;
    const form = new FormData();
    form.set("sceneId", ctx.sceneId);
    form.set(
      "meta",
      JSON.stringify({ versionId: ctx.versionId, title: `fault ${randomUUID().slice(0, 6)}`, spp: 4, seed: 5, width: w, height: h, integrator: "path", tracerVersion: TRACER_VERSION, accumulationHash: "fnv1a64:0123456789abcdef", renderMs: 5, samplesPerSecond: 1000, groups: [] }),
    );
    form.set("pfm", new Blob([new Uint8Array(encodePfm({ width: w, height: h, data: new Float32Array(w * h * 3).fill(0.25) }))]), "beauty.pfm");
    form.set("png", new Blob([new Uint8Array(encodePng(w, h, new Uint8Array(w * h * 4).fill(128)))]), "beauty.png");
    form.set("hdr", new Blob([new Uint8Array([1, 2, 3])]), "beauty.hdr");
    form.set("state", new Blob([new Uint8Array([4, 5, 6])]), "state.bin");
    const res = await fetch(`${baseUrl}/projects/${ctx.projectId}/renders/publish`, { method: "POST", body: form, headers: { cookie: person.cookie } });
    return { status: res.status, json: (await res.json()) as { ok: boolean; error?: string } };
  }

  async function rowsForScene(): Promise<number> {
    return (await db().select({ id: renders.id }).from(renders).where(eq(renders.sceneId, ctx.sceneId))).length;
  }

  it("a store that starts refusing writes half-way: a clear error, no render row, no stray objects", async () => {
    proxy.putKeys.length = 0;
    proxy.failPutsAfter = 2;
    proxy.failAll = false;
    const before = await rowsForScene();
    const r = await publish(viaProxy.baseUrl);
    expect(r.status).toBe(502);
    expect(r.json.ok).toBe(false);
    expect(r.json.error).toMatch(/nothing was published/);
    expect(await rowsForScene()).toBe(before);
    const renderKeys = proxy.putKeys.filter((k) => k.startsWith("renders/"));
    expect(renderKeys.length).toBeGreaterThan(2); // it did get half-way
    for (const key of renderKeys) expect(await objectExists(key), `stray object ${key}`).toBe(false);
  }, 300_000);

  it("a store that vanishes half-way: a clear error and no render row (objects written before are counted)", async () => {
    proxy.putKeys.length = 0;
    proxy.failPutsAfter = 2;
    proxy.failAll = true;
    const before = await rowsForScene();
    const r = await publish(viaProxy.baseUrl);
    expect(r.status).toBe(502);
    expect(r.json.error).toMatch(/nothing was published/);
    expect(await rowsForScene()).toBe(before);
    let strays = 0;
    for (const key of proxy.putKeys.filter((k) => k.startsWith("renders/"))) if (await objectExists(key)) strays++;
    // Cleaning up needs the store; with the store gone the two objects written before it vanished stay behind.
    console.log(`faults: store vanished half-way: ${strays} object(s) left in the store for a later sweep`);
    expect(strays).toBeLessThanOrEqual(2);
  }, 300_000);

  it("a store that is down from the start: a clear error and no render row", async () => {
    const before = await rowsForScene();
    const r = await publish(deadStore.baseUrl);
    expect(r.status).toBe(502);
    expect(r.json.error).toMatch(/nothing was published/);
    expect(await rowsForScene()).toBe(before);
    // …and the same server publishes again once a working store is behind it (the proxy passing everything through).
    proxy.failPutsAfter = Infinity;
    proxy.failAll = false;
    const ok = await publish(viaProxy.baseUrl);
    expect(ok.status).toBe(200);
    expect(await rowsForScene()).toBe(before + 1);
  }, 300_000);
});
