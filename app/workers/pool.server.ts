// What a pool worker does with a job: render one chunk of sample passes to a partial accumulation, or merge
// every chunk of a render into its final files. Free of process wiring (env, pg-boss) so tests can drive it
// in-process and the worker entry stays small.
import { eq } from "drizzle-orm";
import { renders, sceneVersions, type RenderFiles } from "~/db/schema";
import {
  chunkObjectKey,
  claimChunk,
  completeChunk,
  finishPoolRender,
  getPoolRender,
  listChunks,
  renderIsActive,
  sceneForRender,
  type PoolRender,
} from "~/models/render-job.server";
import type { Database } from "~/services/db.server";
import { RENDER_FILE_TYPES, groupFileName, renderKey } from "~/services/render-files.server";
import {
  accumulationHash,
  addUnit,
  createAccumulation,
  deserializeAccumulation,
  mergeAccumulations,
  resolveBeauty,
  resolveGroup,
  serializeAccumulation,
  type Accumulation,
} from "@tracer/film/accumulate";
import { compileScene, type LoadedAssets } from "@tracer/compile/compile";
import type { CompiledScene } from "@tracer/compile/types";
import { createRenderScratch, renderUnit } from "@tracer/render/unit";
import { displayToRgba8 } from "@tracer/film/display";
import { encodePng } from "@tracer/io/png";
import { encodeHdr } from "@tracer/io/rgbe";
import { encodePfm } from "@tracer/io/pfm";
import { validateScene, formatIssue } from "@tracer/scene/validate";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import type { Scene } from "@tracer/scene/schema";

export type ObjectStore = {
  get(key: string): Promise<Uint8Array>;
  put(key: string, body: Uint8Array, contentType: string): Promise<void>;
  delete(key: string): Promise<void>;
};

export type PoolDeps = {
  db: Database;
  store: ObjectStore;
  /** Shown in render_chunks.worker so people can see who rendered what. */
  worker: string;
  /** Called once a chunk completion leaves no chunk undone: the merge must be queued. */
  onAllChunksDone(renderId: string): Promise<void>;
  /** True once this process is shutting down: the chunk in progress is abandoned for another worker. */
  stopping?(): boolean;
  log?(message: string): void;
};

/** Tile edge in pixels and passes per unit: small enough to notice a cancel within a fraction of a second. */
const TILE = 32;
const PASSES_PER_UNIT = 4;
const CANCEL_CHECK_MS = 500;

/** Where an uploaded asset's bytes live (content-addressed, shared by every project that uses it). */
export function assetObjectKey(sha256: string): string {
  return `assets/${sha256}`;
}

/** A failure the job cannot recover from by retrying (bad scene, missing asset): the render is failed. */
export class PermanentJobError extends Error {}

// ---------------------------------------------------------------------------------------------------------
// The scene a render sees: its version's document with the render's own size, seed and sample pattern.

type Prepared = { scene: Scene; compiled: CompiledScene };
const compiledCache = new Map<string, Promise<Prepared>>();
const CACHE_ENTRIES = 4;

async function prepare(deps: PoolDeps, render: PoolRender): Promise<Prepared> {
  const key = `${render.versionId}:${render.width}x${render.height}:${render.seed}`;
  let hit = compiledCache.get(key);
  if (!hit) {
    hit = compileForRender(deps, render);
    compiledCache.set(key, hit);
    hit.catch(() => compiledCache.delete(key));
    while (compiledCache.size > CACHE_ENTRIES) compiledCache.delete(compiledCache.keys().next().value as string);
  }
  return hit;
}

async function compileForRender(deps: PoolDeps, render: PoolRender): Promise<Prepared> {
  const [version] = await deps.db.select({ scene: sceneVersions.scene }).from(sceneVersions).where(eq(sceneVersions.id, render.versionId));
  if (!version) throw new PermanentJobError(`version ${render.versionId} no longer exists`);
  const checked = validateScene(sceneForRender(version.scene, render));
  if (!checked.ok) throw new PermanentJobError(`the scene is invalid: ${checked.issues.slice(0, 3).map(formatIssue).join("; ")}`);
  const assets: LoadedAssets = new Map();
  for (const ref of uniqueAssetRefs(checked.scene)) {
    const m = /^sha256:([0-9a-f]{64})$/.exec(ref);
    if (!m) throw new PermanentJobError(`asset "${ref}" is a file path; the pool can only use uploaded assets (sha256:…)`);
    try {
      assets.set(ref, await deps.store.get(assetObjectKey(m[1])));
    } catch {
      throw new PermanentJobError(`asset ${ref} is not in the object store`);
    }
  }
  try {
    return { scene: checked.scene, compiled: compileScene(checked.scene, assets) };
  } catch (e) {
    throw new PermanentJobError(e instanceof Error ? e.message : String(e));
  }
}

// ---------------------------------------------------------------------------------------------------------
// Rendering passes.

/**
 * Renders passes [passStart, passEnd) over every tile into a fresh accumulation. `keepGoing` is asked now and
 * then; when it answers false the work stops and null is returned.
 */
export async function renderPasses(
  compiled: CompiledScene,
  passStart: number,
  passEnd: number,
  keepGoing: () => Promise<boolean> = async () => true,
): Promise<Accumulation | null> {
  const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
  const scratch = createRenderScratch(compiled);
  let lastCheck = Date.now();
  for (let p0 = passStart; p0 < passEnd; p0 += PASSES_PER_UNIT) {
    const p1 = Math.min(passEnd, p0 + PASSES_PER_UNIT);
    for (let y0 = 0; y0 < compiled.height; y0 += TILE) {
      for (let x0 = 0; x0 < compiled.width; x0 += TILE) {
        const unit = { x0, y0, x1: Math.min(compiled.width, x0 + TILE), y1: Math.min(compiled.height, y0 + TILE), passStart: p0, passEnd: p1 };
        addUnit(acc, renderUnit(compiled, unit, scratch));
        if (Date.now() - lastCheck > CANCEL_CHECK_MS) {
          // Let the queue's timers and connections breathe, then see whether the render is still wanted.
          await new Promise<void>((r) => setImmediate(r));
          if (!(await keepGoing())) return null;
          lastCheck = Date.now();
        }
      }
    }
  }
  return acc;
}

export type ChunkOutcome = "done" | "skipped" | "cancelled" | "stopped";

export async function runChunk(deps: PoolDeps, renderId: string, index: number): Promise<ChunkOutcome> {
  const chunk = await claimChunk(deps.db, renderId, index, deps.worker);
  if (!chunk) return "skipped";
  const render = await getPoolRender(deps.db, renderId);
  if (!render) return "skipped";
  const { compiled } = await prepare(deps, render);
  const acc = await renderPasses(compiled, chunk.passStart, chunk.passEnd, async () => !deps.stopping?.() && (await renderIsActive(deps.db, renderId)));
  if (!acc) return deps.stopping?.() ? "stopped" : "cancelled";
  const key = chunkObjectKey(renderId, index);
  await deps.store.put(key, serializeAccumulation(acc), RENDER_FILE_TYPES.state.contentType);
  const remaining = await completeChunk(deps.db, renderId, index, key, deps.worker);
  deps.log?.(`render ${renderId} chunk ${index} [${chunk.passStart}, ${chunk.passEnd}) done, ${remaining} left`);
  if (remaining === 0) await deps.onAllChunksDone(renderId);
  return "done";
}

// ---------------------------------------------------------------------------------------------------------
// Merging.

/** Every output file of an accumulation, as the app stores them for browser renders too. */
export function renderOutputs(acc: Accumulation, compiled: CompiledScene, scene: Scene) {
  const beauty = resolveBeauty(acc);
  const groups: Record<string, Uint8Array> = {};
  compiled.groupNames.forEach((name, g) => {
    groups[name] = encodePfm(resolveGroup(acc, g));
  });
  return {
    png: encodePng(acc.width, acc.height, displayToRgba8(beauty, scene.display)),
    hdr: encodeHdr(beauty),
    pfm: encodePfm(beauty),
    state: serializeAccumulation(acc),
    groups,
  };
}

export type MergeOutcome = "done" | "skipped" | "waiting";

export async function mergeRender(deps: PoolDeps, renderId: string): Promise<MergeOutcome> {
  const render = await getPoolRender(deps.db, renderId);
  if (!render || (render.status !== "queued" && render.status !== "running")) return "skipped";
  const chunks = await listChunks(deps.db, renderId);
  if (chunks.some((c) => c.status !== "done" || !c.objectKey)) return "waiting";
  const { scene, compiled } = await prepare(deps, render);

  let acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
  if (render.continuedFromId) {
    const [source] = await deps.db.select({ files: renders.files }).from(renders).where(eq(renders.id, render.continuedFromId));
    if (!source?.files.state) throw new PermanentJobError("the render this one continues has no stored accumulation state");
    const stored = deserializeAccumulation(await deps.store.get(source.files.state));
    const from = chunks[0]?.passStart ?? 0;
    if (stored.width !== acc.width || stored.height !== acc.height || stored.groupCount !== acc.groupCount) {
      throw new PermanentJobError(
        `the stored state is ${stored.width}×${stored.height} with ${stored.groupCount} light groups; this scene renders ${acc.width}×${acc.height} with ${acc.groupCount}`,
      );
    }
    if (!stored.counts.every((c) => c === from)) {
      throw new PermanentJobError(`the stored state does not hold exactly ${from} passes in every pixel, so it cannot be continued exactly`);
    }
    acc = stored;
  }
  // Integer sums: the order of chunks does not matter, the result is the same bits as one process.
  for (const c of chunks) acc = mergeAccumulations(acc, deserializeAccumulation(await deps.store.get(c.objectKey as string)));

  const out = renderOutputs(acc, compiled, scene);
  const files = await writeFiles(deps.store, renderId, out);
  const renderMs = Math.max(1, Date.now() - render.createdAt.getTime());
  const passes = render.spp - (chunks[0]?.passStart ?? 0);
  const finished = await finishPoolRender(deps.db, renderId, {
    accumulationHash: accumulationHash(acc),
    files,
    renderMs,
    samplesPerSecond: (render.width * render.height * passes) / (renderMs / 1000),
  });
  if (finished) {
    await Promise.all(chunks.map((c) => deps.store.delete(c.objectKey as string).catch(() => undefined)));
  }
  deps.log?.(`render ${renderId} merged from ${chunks.length} chunks${finished ? "" : " (render had been cancelled)"}`);
  return finished ? "done" : "skipped";
}

async function writeFiles(store: ObjectStore, renderId: string, out: ReturnType<typeof renderOutputs>): Promise<RenderFiles> {
  const files: RenderFiles = {};
  const put = async (key: string, body: Uint8Array, type: string) => {
    await store.put(key, body, type);
    return key;
  };
  files.png = await put(renderKey(renderId, RENDER_FILE_TYPES.png.name), out.png, RENDER_FILE_TYPES.png.contentType);
  files.hdr = await put(renderKey(renderId, RENDER_FILE_TYPES.hdr.name), out.hdr, RENDER_FILE_TYPES.hdr.contentType);
  files.pfm = await put(renderKey(renderId, RENDER_FILE_TYPES.pfm.name), out.pfm, RENDER_FILE_TYPES.pfm.contentType);
  files.state = await put(renderKey(renderId, RENDER_FILE_TYPES.state.name), out.state, RENDER_FILE_TYPES.state.contentType);
  files.groups = {};
  for (const [name, bytes] of Object.entries(out.groups)) {
    files.groups[name] = await put(renderKey(renderId, groupFileName(name)), bytes, RENDER_FILE_TYPES.pfm.contentType);
  }
  return files;
}
