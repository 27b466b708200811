/**
 * One worker pool for the browser and Node. Environment-specific files only create the workers
 * (browser-pool.ts, node-pool.ts); scheduling lives here.
 *
 * Scheduling is dynamic: every worker pulls the next (tile, pass range) unit from a shared source
 * as soon as its previous one returns, so a slow tile never leaves the other cores idle. The
 * compiled scene goes to each worker once per `loadScene`: as SharedArrayBuffer-backed views when
 * the environment allows (Node; cross-origin-isolated pages), so all workers read one copy;
 * otherwise one structured clone per worker. Units and results are small messages; result
 * buffers are transferred.
 */
import type { CompiledScene } from "../compile/types";
import type { RenderUnit, UnitResult } from "../film/accumulate";
import { createWorkerApi, type KernelName, type TracerWorkerApi } from "./worker-api";

/** The worker API as seen from the pool: every call is asynchronous (a comlink Remote fits). */
export type AsyncWorkerApi = {
  [K in keyof TracerWorkerApi]: (...args: Parameters<TracerWorkerApi[K]>) => Promise<ReturnType<TracerWorkerApi[K]>>;
};

export type PoolWorker = { api: AsyncWorkerApi; terminate: () => void | Promise<unknown> };

/**
 * Where a pool gets its work. `next` returns a unit, `null` when there is no more work, or a
 * promise of either (a paused session returns a promise that settles on resume).
 */
export type UnitSource = { next(): RenderUnit | null | Promise<RenderUnit | null> };

export type RunOptions = {
  kernel?: KernelName;
  /** Groups for the probe kernel. */
  probeGroups?: number;
  onResult: (result: UnitResult, workerIndex: number) => void;
  /** Units kept in flight per worker (2 hides the message round trip behind the next unit). */
  inflight?: number;
};

export class WorkerPool {
  private workers: PoolWorker[];
  private sceneKey = "";
  private sceneObject: CompiledScene | null = null;
  private keyCounter = 0;
  private closed = false;

  constructor(workers: PoolWorker[]) {
    if (workers.length < 1) throw new Error("WorkerPool: needs at least one worker");
    this.workers = workers;
  }

  get size(): number {
    return this.workers.length;
  }

  /** Key of the scene currently loaded in every worker ("" if none). */
  get loadedScene(): string {
    return this.sceneKey;
  }

  /** Sends the scene to every worker once; returns the key units must name. */
  async loadScene(compiled: CompiledScene): Promise<string> {
    this.assertOpen();
    const key = `scene-${++this.keyCounter}`;
    const payload = shareBuffers(compiled);
    await Promise.all(this.workers.map((w) => w.api.loadScene(key, payload)));
    this.sceneKey = key;
    this.sceneObject = compiled;
    return key;
  }

  /** Loads `compiled` unless it is already the loaded scene (same object). */
  async ensureScene(compiled: CompiledScene): Promise<string> {
    if (this.sceneObject === compiled && this.sceneKey) return this.sceneKey;
    return this.loadScene(compiled);
  }

  /**
   * Runs units from `source` on every worker until it returns null. Resolves when all dispatched
   * units have returned; rejects on the first worker error (the other workers stop pulling).
   */
  async run(source: UnitSource, options: RunOptions): Promise<void> {
    this.assertOpen();
    const kernel = options.kernel ?? "render";
    if (kernel === "render" && !this.sceneKey) throw new Error("WorkerPool.run: no scene loaded (call loadScene first)");
    const key = this.sceneKey;
    const lanes = Math.max(1, Math.floor(options.inflight ?? 2));
    let failed: unknown = null;
    let exhausted = false;
    const lane = async (w: number): Promise<void> => {
      const api = this.workers[w]!.api;
      for (;;) {
        if (failed !== null || exhausted) return;
        const unit = await source.next();
        if (unit === null) { exhausted = true; return; }
        if (failed !== null) return;
        try {
          const result = await api.runUnit(kernel, key, unit, options.probeGroups);
          options.onResult(result, w);
        } catch (e) {
          failed ??= e;
          return;
        }
      }
    };
    const all: Promise<void>[] = [];
    for (let l = 0; l < lanes; l++) for (let w = 0; w < this.workers.length; w++) all.push(lane(w));
    await Promise.all(all);
    if (failed !== null) throw failed instanceof Error ? failed : new Error(String(failed));
  }

  async terminate(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await Promise.all(this.workers.map((w) => w.terminate()));
  }

  private assertOpen(): void {
    if (this.closed) throw new Error("WorkerPool: already terminated");
  }
}

/**
 * A pool whose "workers" run on the calling thread, one unit at a time. Same interface as the
 * worker pools: for environments without workers, and for checking that worker results match.
 */
export function createInlinePool(size = 1): WorkerPool {
  const workers: PoolWorker[] = [];
  for (let i = 0; i < size; i++) {
    const api = createWorkerApi();
    workers.push({
      api: {
        loadScene: async (key, compiled) => api.loadScene(key, compiled),
        runUnit: async (kernel, key, unit, groups) => api.runUnit(kernel, key, unit, groups),
        unload: async () => api.unload(),
      },
      terminate: () => api.unload(),
    });
  }
  return new WorkerPool(workers);
}

/** A source over a fixed list of units (in the given order). */
export function listSource(units: readonly RenderUnit[]): UnitSource {
  let i = 0;
  return { next: () => (i < units.length ? units[i++]! : null) };
}

/** Splits the image into tiles (row-major) for one pass range. */
export function tileUnits(width: number, height: number, tileSize: number, passStart: number, passEnd: number): RenderUnit[] {
  if (!(tileSize >= 1)) throw new Error(`tileSize must be ≥ 1 (got ${tileSize})`);
  const units: RenderUnit[] = [];
  for (let y0 = 0; y0 < height; y0 += tileSize) {
    for (let x0 = 0; x0 < width; x0 += tileSize) {
      units.push({ x0, y0, x1: Math.min(width, x0 + tileSize), y1: Math.min(height, y0 + tileSize), passStart, passEnd });
    }
  }
  return units;
}

type TypedArray =
  | Float32Array | Float64Array | Int8Array | Int16Array | Int32Array
  | Uint8Array | Uint16Array | Uint32Array | Uint8ClampedArray;

function canShare(): boolean {
  if (typeof SharedArrayBuffer === "undefined") return false;
  // Browsers expose SharedArrayBuffer to postMessage only in cross-origin-isolated pages.
  const g = globalThis as { crossOriginIsolated?: boolean; window?: unknown; document?: unknown };
  if (g.document !== undefined || g.window !== undefined) return g.crossOriginIsolated === true;
  return true;
}

/**
 * Copies every typed array of a plain data object onto SharedArrayBuffers (views that shared a
 * buffer keep sharing one), so posting it to N workers shares memory instead of cloning N times.
 * Returns the input unchanged where shared memory is unavailable.
 */
export function shareBuffers<T>(data: T): T {
  if (!canShare()) return data;
  const map = new Map<ArrayBufferLike, SharedArrayBuffer>();
  const walk = (v: unknown): unknown => {
    if (ArrayBuffer.isView(v) && !(v instanceof DataView)) {
      const ta = v as TypedArray;
      if (ta.buffer instanceof SharedArrayBuffer) return ta;
      let sab = map.get(ta.buffer);
      if (!sab) {
        sab = new SharedArrayBuffer(ta.buffer.byteLength);
        new Uint8Array(sab).set(new Uint8Array(ta.buffer));
        map.set(ta.buffer, sab);
      }
      const Ctor = ta.constructor as new (b: ArrayBufferLike, o: number, l: number) => TypedArray;
      return new Ctor(sab, ta.byteOffset, ta.length);
    }
    if (Array.isArray(v)) return v.map(walk);
    if (v !== null && typeof v === "object") {
      const out: Record<string, unknown> = {};
      for (const [k, x] of Object.entries(v)) out[k] = walk(x);
      return out;
    }
    return v;
  };
  return walk(data) as T;
}
