// The render pool end to end: the built server over HTTP, `npm run worker` processes on pg-boss, and the
// object store. Results are checked bit for bit against this process rendering every pass itself
// (determinism contract of scene-format.md: same scene, seed and tracer → same accumulation, whatever the
// split; the hash is the tracer's FNV-1a 64 over the exact integer sums).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { PNG } from "pngjs";
import { renders } from "~/db/schema";
import { sceneForRender } from "~/models/render-job.server";
import type { ApiRender } from "~/services/api-schemas.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket, putObject } from "~/services/storage.server";
import { renderPasses } from "~/workers/pool.server";
import { accumulationHash, compileScene, decodeHdr, decodePfm, resolveBeauty, resolveGroup, serializeAccumulation, TRACER_VERSION, validateScene } from "@tracer/index";
import { getUserByEmail } from "~/models/user.server";
import { Person, pageText, uniqueEmail } from "../support/person";
import { client, makeProject, makeScene, makeToken, makeUser, serveApp, startWorker, studioScene, waitForOutput, type Served, type WorkerProc } from "./api-fixtures";

// Long enough for one chunk of the kill test on a busy 2-core machine, short enough to wait for.
const EXPIRE_SECONDS = 20;
// A pool of our own, so workers other people run on the shared test database never take these chunks.
// (Against a server given by TRACEWELL_URL, set RENDER_POOL to the pool that server queues to.)
const POOL = process.env.TRACEWELL_URL ? (process.env.RENDER_POOL ?? "") : `test-${Math.random().toString(36).slice(2, 10)}`;
const poolEnv: Record<string, string> = POOL ? { RENDER_POOL: POOL } : {};

let served: Served;
let api: ReturnType<typeof client>;
let ctx: { projectId: string; sceneId: string; versionId: string; userId: string; doc: Record<string, unknown> };
const workers: WorkerProc[] = [];

beforeAll(async () => {
  await ensureBucket();
  served = await serveApp({ RENDER_CHUNK_EXPIRE_SECONDS: String(EXPIRE_SECONDS), ...poolEnv });
  const user = await makeUser("pool");
  const project = await makeProject(user.id);
  const doc = studioScene({ width: 32, height: 20, spp: 16, seed: 29 });
  const { scene, version } = await makeScene(project.id, user.id, doc);
  ctx = { projectId: project.id, sceneId: scene.id, versionId: version.id, userId: user.id, doc };
  api = client(served.baseUrl, await makeToken(user.id, "render"));
  workers.push(startWorker("pool-test-w1", poolEnv), startWorker("pool-test-w2", poolEnv));
  await Promise.all(workers.map((w) => waitForOutput(w, /render worker ready/)));
});

afterAll(async () => {
  await Promise.all(workers.map((w) => w.stop()));
  await served?.stop();
  await dbPool().end();
});

function reference(size: { width: number; height: number; seed: number }, passes: number) {
  const checked = validateScene(sceneForRender(ctx.doc, size));
  if (!checked.ok) throw new Error(JSON.stringify(checked.issues));
  const compiled = compileScene(checked.scene, new Map());
  return { compiled, acc: renderPasses(compiled, 0, passes) };
}

async function waitFor(renderId: string, until: (r: ApiRender) => boolean, seen?: (r: ApiRender) => void, timeoutMs = 240_000): Promise<ApiRender> {
  const stop = Date.now() + timeoutMs;
  for (;;) {
    const res = await api.get(`/api/v1/renders/${renderId}`);
    expect(res.status).toBe(200);
    const r = res.json as unknown as ApiRender;
    seen?.(r);
    if (until(r)) return r;
    if (r.status === "failed") throw new Error(`render failed: ${r.error}`);
    if (Date.now() > stop) throw new Error(`render ${renderId} still ${r.status} ${r.sppDone}/${r.spp}: ${workers.map((w) => w.output()).join("\n")}`);
    await new Promise((r) => setTimeout(r, 150));
  }
}

// Worker processes start, compile and render real chunks: on a busy 2-core machine that takes minutes, not seconds.
describe("render pool", { timeout: 240_000 }, () => {
  it("splits a job over two worker processes and merges it bit-identically to one process", async () => {
    const size = { width: 32, height: 20, seed: 29 };
    const res = await api.post("/api/v1/renders", { versionId: ctx.versionId, spp: 16, chunkPasses: 2 });
    expect(res.status).toBe(202);
    const id = (res.json as unknown as ApiRender).id;
    const done = await waitFor(id, (r) => r.status === "done");

    expect(done.sppDone).toBe(16);
    expect(done.progress).toBe(1);
    expect(done.chunks).toHaveLength(8);
    expect(new Set(done.chunks!.map((c) => c.worker))).toEqual(new Set(["pool-test-w1", "pool-test-w2"]));

    const { compiled, acc } = reference(size, 16);
    const single = await acc;
    expect(done.accumulationHash).toBe(accumulationHash(single!));

    // The served files are the single-process result, byte for byte (PFM) and after RGBE rounding (HDR).
    const pfm = await api.get(done.links.pfm!);
    expect(pfm.status).toBe(200);
    const beauty = resolveBeauty(single!);
    expect(Buffer.from(decodePfm(pfm.bytes).data.buffer).equals(Buffer.from(beauty.data.buffer))).toBe(true);
    const hdr = decodeHdr((await api.get(done.links.hdr!)).bytes);
    expect([hdr.width, hdr.height]).toEqual([32, 20]);
    // pngjs (a general-purpose PNG reader) decodes the display image at the render's size.
    const png = PNG.sync.read(Buffer.from((await api.get(done.links.png!)).bytes));
    expect([png.width, png.height]).toEqual([32, 20]);
    // One PFM per light group; the groups add up to the beauty image (scene-format.md, lights).
    expect(Object.keys(done.links.groups ?? {}).sort()).toEqual([...compiled.groupNames].sort());
    const key = await api.get(done.links.groups!.key);
    expect(Buffer.from(decodePfm(key.bytes).data.buffer).equals(Buffer.from(resolveGroup(single!, compiled.groupNames.indexOf("key")).data.buffer))).toBe(true);
    // Finished files are immutable: ETag + 304.
    const again = await api.get(done.links.pfm!, { "If-None-Match": pfm.headers.get("etag")! });
    expect(again.status).toBe(304);
  });

  it("survives a worker killed mid-chunk: another worker retries that chunk, the result is identical", async () => {
    // Four chunks of about a second each, so each worker runs some and a running chunk of the victim is
    // seen by the 150 ms polls (with two chunks of 64×40 × 16 passes, a tenth of a second each on a quiet
    // machine, one worker could take both, or the victim's run fell between two polls: a 240 s hang).
    const size = { width: 160, height: 100, seed: 31 };
    const res = await api.post("/api/v1/renders", { versionId: ctx.versionId, spp: 64, chunkPasses: 16, seed: 31, width: 160, height: 100 });
    expect(res.status).toBe(202);
    const id = (res.json as unknown as ApiRender).id;
    const victim = workers[0];
    const seenDone = new Set<number>();
    const running = await waitFor(id, (r) => r.chunks!.some((c) => c.status === "running" && c.worker === victim.name));
    const chunk = running.chunks!.find((c) => c.status === "running" && c.worker === victim.name)!;
    await victim.stop("SIGKILL");
    expect(victim.child.signalCode).toBe("SIGKILL");

    const done = await waitFor(
      id,
      (r) => r.status === "done",
      (r) => seenDone.add(r.sppDone),
    );
    // Progress was visible while it ran: other chunks' passes before the killed one was redone.
    expect([...seenDone].some((s) => s > 0 && s < 64)).toBe(true);
    const retried = done.chunks!.find((c) => c.index === chunk.index)!;
    expect(retried.attempts).toBeGreaterThanOrEqual(2);
    expect(retried.worker).toBe(workers[1].name);
    const single = await reference(size, 64).acc;
    expect(done.accumulationHash).toBe(accumulationHash(single!));

    // Put a second worker back for the tests that follow.
    workers[0] = startWorker("pool-test-w3", poolEnv);
    await waitForOutput(workers[0], /render worker ready/);
  });

  it("continues a browser preview of 5 passes to 12 on the pool, bit-identical to 12 from scratch", async () => {
    const size = { width: 32, height: 20, seed: 29 };
    // What the browser publishes: its render row and the exact accumulation state of its passes [0, 5).
    const { acc } = reference(size, 5);
    const preview = (await acc)!;
    const stateKey = `tests/pool/${ctx.sceneId}/preview-state.bin`;
    await putObject(stateKey, serializeAccumulation(preview));
    const [browser] = await db()
      .insert(renders)
      .values({
        projectId: ctx.projectId,
        sceneId: ctx.sceneId,
        versionId: ctx.versionId,
        source: "browser",
        status: "done",
        spp: 5,
        sppDone: 5,
        ...size,
        integrator: "path",
        tracerVersion: TRACER_VERSION,
        accumulationHash: accumulationHash(preview),
        files: { state: stateKey },
        createdBy: ctx.userId,
        finishedAt: new Date(),
      })
      .returning();

    const tooFew = await api.post("/api/v1/renders", { continueFrom: browser!.id, spp: 5 });
    expect(tooFew.status).toBe(422);
    expect(tooFew.json.error?.path).toBe("spp");

    const cont = await api.post("/api/v1/renders", { continueFrom: browser!.id, spp: 12, chunkPasses: 3 });
    expect(cont.status).toBe(202);
    const contRender = cont.json as unknown as ApiRender;
    expect(contRender.sppDone).toBe(5);
    expect(contRender.continuedFromId).toBe(browser!.id);
    const fresh = await api.post("/api/v1/renders", { versionId: ctx.versionId, spp: 12, chunkPasses: 4, ...size });
    expect(fresh.status).toBe(202);

    const [a, b] = await Promise.all([
      waitFor(contRender.id, (r) => r.status === "done"),
      waitFor((fresh.json as unknown as ApiRender).id, (r) => r.status === "done"),
    ]);
    expect(a.chunks!.map((c) => [c.passStart, c.passEnd])).toEqual([
      [5, 8],
      [8, 11],
      [11, 12],
    ]);
    expect(a.accumulationHash).toBe(b.accumulationHash);
    const single = await reference(size, 12).acc;
    expect(a.accumulationHash).toBe(accumulationHash(single!));
  });

  it("cancelling stops every chunk and nothing is merged", async () => {
    const res = await api.post("/api/v1/renders", { versionId: ctx.versionId, spp: 64, chunkPasses: 4, width: 64, height: 40 });
    const id = (res.json as unknown as ApiRender).id;
    await waitFor(id, (r) => r.chunks!.some((c) => c.status === "running"));
    const cancel = await api.del(`/api/v1/renders/${id}`);
    expect(cancel.status).toBe(200);
    // Give the workers time to notice (they check about twice a second) and to pick up any queued chunks.
    await new Promise((r) => setTimeout(r, 4000));
    const after = (await api.get(`/api/v1/renders/${id}`)).json as unknown as ApiRender;
    expect(after.status).toBe("cancelled");
    expect(after.chunks!.filter((c) => c.status === "cancelled").length).toBeGreaterThan(0);
    expect(after.chunks!.every((c) => c.status === "cancelled" || c.status === "done")).toBe(true);
    expect(after.accumulationHash).toBeNull();
    expect((await api.get(`/api/v1/renders/${id}/image.png`)).status).toBe(409);
  });

  it("shows pool progress in the app and queues and cancels from the project's pool page", async () => {
    const app = { fetch: (path: string, init?: RequestInit) => fetch(served.baseUrl + path, { redirect: "manual", ...init }), routes: [], close: async () => undefined };
    const person = new Person(app);
    const email = uniqueEmail("pool-page");
    expect((await person.signUp({ name: "Ines Pool", email, password: "lamp-corner-0451-harrow" })).status).toBe(302);
    const user = (await getUserByEmail(email))!;
    const project = await makeProject(user.id, "Harrow Lane pool page");
    const { version } = await makeScene(project.id, user.id, ctx.doc);
    const own = client(served.baseUrl, await makeToken(user.id, "render"));
    const queued = await own.post("/api/v1/renders", { versionId: version.id, spp: 64, chunkPasses: 4, width: 48, height: 30 });
    const id = (queued.json as unknown as ApiRender).id;

    const page = await person.get(`/projects/${project.id}/pool`);
    expect(page.status).toBe(200);
    expect(page.text).toContain(`data-render-id="${id}"`);
    expect(page.text).toMatch(/role="progressbar"[^>]*aria-valuemax="64"/);

    const bad = await person.post(`/projects/${project.id}/pool`, { intent: "queue", sceneId: ctx.sceneId, spp: "0" });
    expect(bad.status).toBe(400);
    expect(pageText(bad.text)).toContain("must be at least 1");

    const cancel = await person.post(`/projects/${project.id}/pool`, { intent: "cancel", renderId: id });
    expect(cancel.status).toBe(200);
    expect(((await own.get(`/api/v1/renders/${id}`)).json as unknown as ApiRender).status).toBe("cancelled");

    const ok = await person.post(`/projects/${project.id}/pool`, { intent: "queue", sceneId: (await own.get(`/api/v1/versions/${version.id}`)).json.sceneId as string, spp: "4", width: "16", height: "10" });
    expect(ok.status).toBe(200);
    expect(pageText(ok.text)).toContain("Queued 4 spp");
  });
});
