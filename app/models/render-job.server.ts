// Pool renders: a render row (source "pool") plus one render_chunks row per range of sample passes.
// Every function takes the database as an argument because the render worker runs outside the web app,
// with only DATABASE_URL and the object store settings (no session secret, no mail).
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { renderChunks, renders, scenes, type RenderFiles } from "~/db/schema";
import type { Database } from "~/services/db.server";

export type PoolRender = typeof renders.$inferSelect;
export type RenderChunk = typeof renderChunks.$inferSelect;
export type PassRange = { passStart: number; passEnd: number };

/** About an eighth of the job per chunk: enough chunks to spread over a few workers, few enough to merge quickly. */
export function defaultChunkPasses(passes: number): number {
  return Math.max(1, Math.ceil(passes / 8));
}

/** Splits passes [from, to) into consecutive ranges of at most `chunkPasses`. */
export function planChunks(from: number, to: number, chunkPasses: number): PassRange[] {
  if (!(Number.isInteger(from) && Number.isInteger(to) && from >= 0 && to > from)) {
    throw new Error(`planChunks: need whole numbers 0 ≤ from < to (got ${from}, ${to})`);
  }
  if (!(Number.isInteger(chunkPasses) && chunkPasses >= 1)) throw new Error(`planChunks: chunkPasses must be ≥ 1 (got ${chunkPasses})`);
  const out: PassRange[] = [];
  for (let s = from; s < to; s += chunkPasses) out.push({ passStart: s, passEnd: Math.min(to, s + chunkPasses) });
  return out;
}

/**
 * Applies a render's size and seed to a scene document before validation. The scene's own render.spp is
 * kept: it fixes the per-pixel stratification pattern, and the render's target spp only says how many passes
 * to take. So every render of a version with one seed and size is a prefix of any longer one: 64 passes
 * are exactly the first 64 passes of 256, whichever process rendered them, which is what makes continuing a
 * browser preview on the pool bit-identical to rendering from scratch.
 */
export function sceneForRender(doc: Record<string, unknown>, r: { width: number; height: number; seed: number }): Record<string, unknown> {
  const image = typeof doc.image === "object" && doc.image !== null ? doc.image : {};
  const render = typeof doc.render === "object" && doc.render !== null ? doc.render : {};
  return { ...doc, image: { ...image, width: r.width, height: r.height }, render: { ...render, seed: r.seed } };
}

export function chunkObjectKey(renderId: string, index: number): string {
  return `renders/${renderId}/chunks/${index}.acc`;
}

export type NewPoolRender = {
  projectId: string;
  sceneId: string;
  versionId: string;
  spp: number;
  seed: number;
  width: number;
  height: number;
  integrator: string;
  tracerVersion: string;
  title: string;
  createdBy: string;
  continuedFromId: string | null;
  chunks: PassRange[];
};

export async function createPoolRender(db: Database, input: NewPoolRender): Promise<PoolRender> {
  if (input.chunks.length === 0) throw new Error("createPoolRender: a pool render needs at least one chunk");
  return db.transaction(async (tx) => {
    const [row] = await tx
      .insert(renders)
      .values({
        projectId: input.projectId,
        sceneId: input.sceneId,
        versionId: input.versionId,
        source: "pool",
        status: "queued",
        title: input.title,
        spp: input.spp,
        // A continued render starts with the passes it continues from.
        sppDone: input.chunks[0].passStart,
        seed: input.seed,
        width: input.width,
        height: input.height,
        integrator: input.integrator,
        tracerVersion: input.tracerVersion,
        continuedFromId: input.continuedFromId,
        createdBy: input.createdBy,
      })
      .returning();
    await tx.insert(renderChunks).values(input.chunks.map((c, index) => ({ renderId: row.id, index, passStart: c.passStart, passEnd: c.passEnd })));
    return row;
  });
}

export async function getPoolRender(db: Database, renderId: string): Promise<PoolRender | null> {
  const [row] = await db.select().from(renders).where(eq(renders.id, renderId));
  return row ?? null;
}

export async function listChunks(db: Database, renderId: string): Promise<RenderChunk[]> {
  return db.select().from(renderChunks).where(eq(renderChunks.renderId, renderId)).orderBy(asc(renderChunks.index));
}

/**
 * Takes a chunk for rendering. Returns null when there is nothing to do: the render was cancelled, failed
 * or finished, or the chunk is already done (a retried job whose first attempt did finish).
 */
export async function claimChunk(db: Database, renderId: string, index: number, worker: string): Promise<RenderChunk | null> {
  return db.transaction(async (tx) => {
    const [render] = await tx
      .update(renders)
      .set({ status: "running" })
      .where(and(eq(renders.id, renderId), inArray(renders.status, ["queued", "running"])))
      .returning({ id: renders.id });
    if (!render) return null;
    const [chunk] = await tx
      .update(renderChunks)
      .set({ status: "running", worker, attempts: sql`${renderChunks.attempts} + 1`, updatedAt: new Date() })
      .where(and(eq(renderChunks.renderId, renderId), eq(renderChunks.index, index), inArray(renderChunks.status, ["pending", "running", "failed"])))
      .returning();
    return chunk ?? null;
  });
}

/** Marks a chunk done and refreshes spp_done; returns how many chunks are still not done. */
export async function completeChunk(db: Database, renderId: string, index: number, objectKey: string, worker: string): Promise<number> {
  return db.transaction(async (tx) => {
    // Lock the render row before any chunk row, the order claimChunk and cancelPoolRender take: chunk then
    // render here against render then chunks there deadlocked a cancel arriving as a chunk finished (seen as a
    // 500 from DELETE /api/v1/renders/:id once chunks rendered faster).
    await tx.select({ id: renders.id }).from(renders).where(eq(renders.id, renderId)).for("update");
    await tx
      .update(renderChunks)
      .set({ status: "done", objectKey, worker, updatedAt: new Date() })
      .where(and(eq(renderChunks.renderId, renderId), eq(renderChunks.index, index), inArray(renderChunks.status, ["pending", "running", "failed"])));
    const [agg] = await tx
      .select({
        base: sql<number>`min(${renderChunks.passStart})::int`,
        done: sql<number>`coalesce(sum(${renderChunks.passEnd} - ${renderChunks.passStart}) filter (where ${renderChunks.status} = 'done'), 0)::int`,
        remaining: sql<number>`count(*) filter (where ${renderChunks.status} <> 'done')::int`,
      })
      .from(renderChunks)
      .where(eq(renderChunks.renderId, renderId));
    await tx
      .update(renders)
      .set({ sppDone: agg.base + agg.done })
      .where(and(eq(renders.id, renderId), inArray(renders.status, ["queued", "running"])));
    return agg.remaining;
  });
}

/** Puts a chunk back for another attempt after a failure that pg-boss will retry. */
export async function releaseChunk(db: Database, renderId: string, index: number): Promise<void> {
  await db
    .update(renderChunks)
    .set({ status: "failed", updatedAt: new Date() })
    .where(and(eq(renderChunks.renderId, renderId), eq(renderChunks.index, index), eq(renderChunks.status, "running")));
}

export async function renderIsActive(db: Database, renderId: string): Promise<boolean> {
  const [row] = await db.select({ status: renders.status }).from(renders).where(eq(renders.id, renderId));
  return row?.status === "queued" || row?.status === "running";
}

export type FinishedRender = { accumulationHash: string; files: RenderFiles; renderMs: number; samplesPerSecond: number };

/** Records the merged result; false if the render was cancelled (or already finished) meanwhile. */
export async function finishPoolRender(db: Database, renderId: string, result: FinishedRender): Promise<boolean> {
  const rows = await db
    .update(renders)
    .set({
      status: "done",
      sppDone: sql`${renders.spp}`,
      accumulationHash: result.accumulationHash,
      files: result.files,
      renderMs: result.renderMs,
      samplesPerSecond: result.samplesPerSecond,
      finishedAt: new Date(),
      error: null,
    })
    .where(and(eq(renders.id, renderId), inArray(renders.status, ["queued", "running"])))
    .returning({ id: renders.id });
  return rows.length === 1;
}

export async function failPoolRender(db: Database, renderId: string, error: string): Promise<void> {
  await db
    .update(renders)
    .set({ status: "failed", error: error.slice(0, 2000), finishedAt: new Date() })
    .where(and(eq(renders.id, renderId), inArray(renders.status, ["queued", "running"])));
}

/** Cancels a queued or running render and every chunk not yet done; returns false if it had already ended. */
export async function cancelPoolRender(db: Database, renderId: string): Promise<boolean> {
  return db.transaction(async (tx) => {
    const rows = await tx
      .update(renders)
      .set({ status: "cancelled", finishedAt: new Date() })
      .where(and(eq(renders.id, renderId), inArray(renders.status, ["queued", "running"])))
      .returning({ id: renders.id });
    if (rows.length === 0) return false;
    await tx
      .update(renderChunks)
      .set({ status: "cancelled", updatedAt: new Date() })
      .where(and(eq(renderChunks.renderId, renderId), inArray(renderChunks.status, ["pending", "running", "failed"])));
    return true;
  });
}

export type PoolRenderWithChunks = PoolRender & { chunks: RenderChunk[]; sceneName: string };

/** A project's pool renders for the pool page: everything queued or running, then the most recent others. */
export async function listPoolRenders(db: Database, projectId: string, recent = 10): Promise<PoolRenderWithChunks[]> {
  const rows = await db
    .select({ render: renders, sceneName: scenes.name })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .where(and(eq(renders.projectId, projectId), eq(renders.source, "pool")))
    .orderBy(sql`case when ${renders.status} in ('queued', 'running') then 0 else 1 end`, desc(renders.createdAt))
    .limit(200);
  const active = rows.filter((r) => r.render.status === "queued" || r.render.status === "running");
  const shown = [...active, ...rows.filter((r) => !active.includes(r)).slice(0, recent)];
  if (shown.length === 0) return [];
  const chunks = await db
    .select()
    .from(renderChunks)
    .where(inArray(renderChunks.renderId, shown.map((r) => r.render.id)))
    .orderBy(asc(renderChunks.renderId), asc(renderChunks.index));
  return shown.map((r) => ({ ...r.render, sceneName: r.sceneName, chunks: chunks.filter((c) => c.renderId === r.render.id) }));
}
