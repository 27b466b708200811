// The pool's chunk and merge steps, driven in-process against the real database and object store: chunks in
// any order merge to the same bits as one process rendering every pass, and continuing stored state from N
// passes to M equals M from scratch. (Bit-identity is the determinism contract of scene-format.md; the
// hash is the tracer's FNV-1a 64 over the exact integer sums.)
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { renders } from "~/db/schema";
import { createPoolRender, getPoolRender, listChunks, planChunks, sceneForRender } from "~/models/render-job.server";
import { db, dbPool } from "~/services/db.server";
import { deleteObject, ensureBucket, getObjectBytes, putObject } from "~/services/storage.server";
import { PermanentJobError, mergeRender, renderPasses, runChunk, type PoolDeps } from "~/workers/pool.server";
import { accumulationHash, compileScene, type Accumulation, decodePfm, deserializeAccumulation, resolveBeauty, serializeAccumulation, TRACER_VERSION, validateScene } from "@tracer/index";
import { makeProject, makeScene, makeUser, studioScene } from "./api-fixtures";

const store = { get: getObjectBytes, put: putObject, delete: deleteObject };

function deps(worker: string, done: string[]): PoolDeps {
  return { db: db(), store, worker, onAllChunksDone: async (id) => void done.push(id) };
}

function compiledFor(doc: Record<string, unknown>, r: { width: number; height: number; seed: number }) {
  const checked = validateScene(sceneForRender(doc, r));
  if (!checked.ok) throw new Error(JSON.stringify(checked.issues));
  return compileScene(checked.scene, new Map());
}

/**
 * A finished browser render of the test scene whose stored state is `state` and whose row claims
 * `claimedSpp` passes: what a pool render continues from.
 */
async function storedBrowserRender(
  name: string,
  state: Accumulation,
  o: { claimedSpp: number; size: { width: number; height: number; seed: number }; withHash: boolean },
) {
  const stateKey = `tests/pool-core/${ctx.scene.id}/${name}`;
  await putObject(stateKey, serializeAccumulation(state));
  const [browser] = await db()
    .insert(renders)
    .values({
      projectId: ctx.project.id,
      sceneId: ctx.scene.id,
      versionId: ctx.version.id,
      source: "browser",
      status: "done",
      spp: o.claimedSpp,
      sppDone: o.claimedSpp,
      ...o.size,
      integrator: "path",
      tracerVersion: TRACER_VERSION,
      ...(o.withHash ? { accumulationHash: accumulationHash(state) } : {}),
      files: { state: stateKey },
      createdBy: ctx.user.id,
      finishedAt: new Date(),
    })
    .returning();
  return browser!;
}

let ctx: Awaited<ReturnType<typeof setup>>;
async function setup() {
  await ensureBucket();
  const user = await makeUser("pool-core");
  const project = await makeProject(user.id);
  const doc = studioScene({ width: 20, height: 12, spp: 9 });
  const { scene, version } = await makeScene(project.id, user.id, doc);
  return { user, project, scene, version, doc };
}

beforeAll(async () => {
  ctx = await setup();
});

/** A pool render of the test scene at 20×12, seed 17 (the size every test here renders). */
function poolRender(spp: number, chunks: ReturnType<typeof planChunks>, continuedFromId: string | null = null) {
  return createPoolRender(db(), {
    projectId: ctx.project.id,
    sceneId: ctx.scene.id,
    versionId: ctx.version.id,
    spp,
    width: 20,
    height: 12,
    seed: 17,
    integrator: "path",
    tracerVersion: TRACER_VERSION,
    title: "",
    createdBy: ctx.user.id,
    continuedFromId,
    chunks,
  });
}
afterAll(async () => {
  await dbPool().end();
});

describe("pool chunks and merge", () => {
  it("merges chunks rendered in shuffled order to the same bits as one process", async () => {
    const size = { width: 20, height: 12, seed: 17 };
    const render = await poolRender(9, planChunks(0, 9, 4)); // [0,4) [4,8) [8,9)
    const done: string[] = [];
    expect(await runChunk(deps("w-b", done), render.id, 2)).toBe("done");
    expect(await runChunk(deps("w-a", done), render.id, 0)).toBe("done");
    expect(done).toEqual([]);
    expect((await getPoolRender(db(), render.id))?.sppDone).toBe(5); // chunks [8,9) and [0,4)
    expect(await runChunk(deps("w-b", done), render.id, 1)).toBe("done");
    expect(done).toEqual([render.id]);
    // A retried job whose chunk already finished does nothing.
    expect(await runChunk(deps("w-c", done), render.id, 1)).toBe("skipped");

    expect(await mergeRender(deps("w-a", done), render.id)).toBe("done");
    const row = await getPoolRender(db(), render.id);
    expect(row?.status).toBe("done");
    expect(row?.sppDone).toBe(9);
    expect((await listChunks(db(), render.id)).map((c) => c.worker)).toEqual(["w-a", "w-b", "w-b"]);

    const single = await renderPasses(compiledFor(ctx.doc, size), 0, 9);
    expect(single).not.toBeNull();
    expect(row?.accumulationHash).toBe(accumulationHash(single!));
    // The stored PFM is the mean radiance of the single-process accumulation, value for value.
    const pfm = decodePfm(await getObjectBytes(row!.files.pfm!));
    expect(Buffer.from(pfm.data.buffer).equals(Buffer.from(resolveBeauty(single!).data.buffer))).toBe(true);
    expect(Object.keys(row!.files.groups ?? {}).sort()).toEqual(["environment", "fill", "key"].sort());
  });

  it("continues stored state from 4 passes to 9 and matches 9 from scratch", async () => {
    const size = { width: 20, height: 12, seed: 17 };
    const compiled = compiledFor(ctx.doc, size);
    const preview = await renderPasses(compiled, 0, 4);
    const browser = await storedBrowserRender("state.bin", preview!, { claimedSpp: 4, size, withHash: true });
    const render = await poolRender(9, planChunks(4, 9, 3), browser!.id); // [4,7) [7,9)
    expect(render.sppDone).toBe(4);
    const done: string[] = [];
    await runChunk(deps("w-a", done), render.id, 1);
    await runChunk(deps("w-a", done), render.id, 0);
    expect(await mergeRender(deps("w-a", done), render.id)).toBe("done");
    const row = await getPoolRender(db(), render.id);
    const scratch = await renderPasses(compiled, 0, 9);
    expect(row?.accumulationHash).toBe(accumulationHash(scratch!));
    const merged = deserializeAccumulation(await getObjectBytes(row!.files.state!));
    expect(merged.counts.every((c) => c === 9)).toBe(true);
    await db().delete(renders).where(eq(renders.id, browser!.id));
  });

  it("stops a cancelled render's chunk and never merges it", async () => {
    const render = await poolRender(4, planChunks(0, 4, 2));
    const { cancelPoolRender } = await import("~/models/render-job.server");
    expect(await cancelPoolRender(db(), render.id)).toBe(true);
    const done: string[] = [];
    expect(await runChunk(deps("w-a", done), render.id, 0)).toBe("skipped");
    expect(await mergeRender(deps("w-a", done), render.id)).toBe("skipped");
    expect((await listChunks(db(), render.id)).every((c) => c.status === "cancelled")).toBe(true);
    expect(await cancelPoolRender(db(), render.id)).toBe(false);
  });

  it("a cancel racing chunk completions never deadlocks: every call returns and the render ends cancelled", async () => {
    // Both transactions touch the render row and chunk rows; taken in opposite orders they deadlock, and
    // PostgreSQL then aborts one of them (a 500 from the cancel route). Twenty rounds of eight chunks
    // finishing while a cancel runs: with the opposite orders four of the nine calls failed in the first round.
    const { cancelPoolRender, completeChunk, claimChunk } = await import("~/models/render-job.server");
    for (let round = 0; round < 20; round++) {
      const render = await poolRender(16, planChunks(0, 16, 2));
      for (let i = 0; i < 8; i++) await claimChunk(db(), render.id, i, "w-race");
      const results = await Promise.allSettled([
        ...Array.from({ length: 8 }, (_, i) => completeChunk(db(), render.id, i, `tests/race/${render.id}/${i}`, "w-race")),
        cancelPoolRender(db(), render.id),
      ]);
      const failures = results.filter((r) => r.status === "rejected").map((r) => String((r as PromiseRejectedResult).reason));
      expect(failures, `round ${round}`).toEqual([]);
      expect((await getPoolRender(db(), render.id))!.status).toBe("cancelled");
    }
  });

  it("refuses to continue from state that does not hold exactly the passes its render claims", async () => {
    const size = { width: 20, height: 12, seed: 17 };
    const preview = await renderPasses(compiledFor(ctx.doc, size), 0, 3);
    // The row claims 4 passes; its state holds 3.
    const browser = await storedBrowserRender("short-state.bin", preview!, { claimedSpp: 4, size, withHash: false });
    const render = await poolRender(6, planChunks(4, 6, 2), browser!.id);
    const done: string[] = [];
    await runChunk(deps("w-a", done), render.id, 0);
    await expect(mergeRender(deps("w-a", done), render.id)).rejects.toThrow(PermanentJobError);
    await expect(mergeRender(deps("w-a", done), render.id)).rejects.toThrow(/exactly 4 passes/);
  });
});
