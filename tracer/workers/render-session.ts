/**
 * Progressive rendering over a worker pool: start, progress events, pause, resume, cancel, and
 * continue-from-state.
 *
 * Work is cut into rounds of `passesPerUnit` passes over every tile; units are handed out round by
 * round, but a worker that finishes early simply takes the next unit, even from the next round.
 * A round is committed to the saved-state accumulation only when all its tiles and all earlier
 * rounds are in, so `snapshot()` always covers exactly passes [0, passesDone) of every pixel —
 * which is what continue-from-state needs: `from` = a saved snapshot, plus the remaining passes,
 * gives bit-identical sums to rendering the total from scratch (integer accumulation, see
 * film/accumulate.ts).
 */
import type { CompiledScene } from "../compile/types";
import {
  addUnit,
  createAccumulation,
  mergeAccumulations,
  relativeStdError,
  type Accumulation,
  type RenderUnit,
  type UnitResult,
} from "../film/accumulate";
import { tileUnits, type WorkerPool } from "./pool";

export type ProgressEvent = {
  /** Passes (samples per pixel) committed for every pixel. */
  passesDone: number;
  /** Target passes of this session. */
  spp: number;
  /** Pixel samples per second over the running (not paused) time of this session. */
  samplesPerSecond: number;
  /** Running noise estimate: relative standard error of the mean from per-pixel variance. */
  relStdError: number;
  /** Running (not paused) milliseconds since start. */
  elapsedMs: number;
};

export type SessionStatus = "running" | "paused" | "cancelled" | "finished" | "failed";

export type SessionResult = {
  /** Exactly passes [0, passesDone) for every pixel. */
  accumulation: Accumulation;
  passesDone: number;
  cancelled: boolean;
  samplesPerSecond: number;
  elapsedMs: number;
};

export type RenderProgressiveOptions = {
  pool: WorkerPool;
  /** Passes per unit (default 4). Smaller gives earlier previews, larger less overhead. */
  passesPerUnit?: number;
  /** Tile edge in pixels (default 32). */
  tileSize?: number;
  /** A saved state (snapshot) to continue from; its pass count is where this session starts. */
  from?: Accumulation;
  /** Total passes to reach (default compiled.spp). */
  passes?: number;
  /** Called after every committed round, and once more at the end. */
  onProgress?: (event: ProgressEvent, snapshot: Accumulation) => void;
  /** Called for every unit result after it is accounted (e.g. to refresh a preview tile from live()). */
  onUnit?: (result: UnitResult) => void;
  /** Order of tiles inside a round (default row-major); a permutation of tile indices. */
  tileOrder?: (tileCount: number) => number[];
};

export type RenderSession = {
  readonly done: Promise<SessionResult>;
  readonly status: SessionStatus;
  readonly passesDone: number;
  pause(): void;
  resume(): void;
  cancel(): void;
  /** Committed state: exactly passes [0, passesDone). Save this to continue later. */
  snapshot(): Accumulation;
  /** Committed state plus every result received since (for display; not pass-aligned). */
  live(): Accumulation;
};

/** Pass count of a saved accumulation; throws if its pixels do not all hold the same number of passes. */
export function passesOf(acc: Accumulation): number {
  const n = acc.counts[0] ?? 0;
  for (let i = 1; i < acc.counts.length; i++) {
    if (acc.counts[i] !== n) {
      throw new Error(`from: the saved state is not at a pass boundary (pixel 0 has ${n} passes, pixel ${i} has ${acc.counts[i]})`);
    }
  }
  return n;
}

export function renderProgressive(compiled: CompiledScene, options: RenderProgressiveOptions): RenderSession {
  const { pool } = options;
  const ppu = Math.floor(options.passesPerUnit ?? 4);
  const tileSize = Math.floor(options.tileSize ?? 32);
  const target = Math.floor(options.passes ?? compiled.spp);
  if (!(ppu >= 1)) throw new Error(`passesPerUnit must be a whole number ≥ 1 (got ${options.passesPerUnit})`);
  if (!(tileSize >= 1)) throw new Error(`tileSize must be a whole number ≥ 1 (got ${options.tileSize})`);
  if (!(target >= 1)) throw new Error(`passes must be a whole number ≥ 1 (got ${options.passes})`);
  const groupCount = compiled.groupNames.length;

  let committed: Accumulation;
  let startPass = 0;
  if (options.from) {
    const f = options.from;
    if (f.width !== compiled.width || f.height !== compiled.height || f.groupCount !== groupCount) {
      throw new Error(
        `from: the saved state is ${f.width}×${f.height} with ${f.groupCount} groups, the scene renders ${compiled.width}×${compiled.height} with ${groupCount}`,
      );
    }
    startPass = passesOf(f);
    // Copy so the caller's saved state is never modified.
    committed = mergeAccumulations(f, createAccumulation(f.width, f.height, f.groupCount));
  } else {
    committed = createAccumulation(compiled.width, compiled.height, groupCount);
  }

  const tiles = tileUnits(compiled.width, compiled.height, tileSize, 0, 1);
  const order = options.tileOrder ? options.tileOrder(tiles.length) : tiles.map((_, i) => i);
  if (order.length !== tiles.length || new Set(order).size !== tiles.length || order.some((i) => !(i >= 0 && i < tiles.length))) {
    throw new Error("tileOrder must return a permutation of the tile indices");
  }
  const roundCount = Math.max(0, Math.ceil((target - startPass) / ppu));
  const totalUnits = roundCount * tiles.length;

  let status: SessionStatus = "running";
  let passesDone = Math.min(startPass, target);
  let nextUnit = 0;
  let nextRoundToCommit = 0;
  const pending = new Map<number, UnitResult[]>();
  let samples = 0;
  let activeMs = 0;
  let runningSince = now();
  let wake: (() => void) | null = null;
  let wakePromise: Promise<void> | null = null;

  const elapsed = (): number => activeMs + (status === "running" ? now() - runningSince : 0);
  const rate = (): number => {
    const ms = elapsed();
    return ms > 0 ? samples / (ms / 1000) : 0;
  };
  const event = (): ProgressEvent => ({
    passesDone,
    spp: target,
    samplesPerSecond: rate(),
    relStdError: passesDone > 0 ? relativeStdError(committed) : Infinity,
    elapsedMs: elapsed(),
  });

  const unitAt = (k: number): RenderUnit => {
    const round = Math.floor(k / tiles.length);
    const tile = tiles[order[k % tiles.length]!]!;
    const passStart = startPass + round * ppu;
    return { x0: tile.x0, y0: tile.y0, x1: tile.x1, y1: tile.y1, passStart, passEnd: Math.min(target, passStart + ppu) };
  };

  const source = {
    next: (): RenderUnit | null | Promise<RenderUnit | null> => {
      if (status === "cancelled" || status === "failed") return null;
      if (status === "paused") {
        wakePromise ??= new Promise<void>((r) => { wake = r; });
        return wakePromise.then(() => source.next());
      }
      if (nextUnit >= totalUnits) return null;
      return unitAt(nextUnit++);
    },
  };

  const onResult = (r: UnitResult): void => {
    samples += (r.unit.x1 - r.unit.x0) * (r.unit.y1 - r.unit.y0) * r.samples;
    const round = Math.floor((r.unit.passStart - startPass) / ppu);
    let list = pending.get(round);
    if (!list) pending.set(round, (list = []));
    list.push(r);
    // Commit every complete round in order so the snapshot stays pass-aligned.
    for (;;) {
      const ready = pending.get(nextRoundToCommit);
      if (!ready || ready.length < tiles.length) break;
      for (const u of ready) addUnit(committed, u);
      pending.delete(nextRoundToCommit);
      passesDone = Math.min(target, startPass + (nextRoundToCommit + 1) * ppu);
      nextRoundToCommit++;
      options.onProgress?.(event(), committed);
    }
    options.onUnit?.(r);
  };

  const wakeAll = (): void => {
    const w = wake;
    wake = null;
    wakePromise = null;
    w?.();
  };

  const done = (async (): Promise<SessionResult> => {
    try {
      if (totalUnits > 0) {
        await pool.ensureScene(compiled);
        await pool.run(source, { kernel: "render", onResult });
      }
      const cancelled = (status as SessionStatus) === "cancelled";
      if (!cancelled) {
        activeMs = elapsed();
        status = "finished";
      }
      options.onProgress?.(event(), committed);
      return { accumulation: committed, passesDone, cancelled, samplesPerSecond: rate(), elapsedMs: elapsed() };
    } catch (e) {
      activeMs = elapsed();
      status = "failed";
      throw e;
    }
  })();

  return {
    done,
    get status() { return status; },
    get passesDone() { return passesDone; },
    pause() {
      if (status !== "running") return;
      activeMs += now() - runningSince;
      status = "paused";
    },
    resume() {
      if (status !== "paused") return;
      runningSince = now();
      status = "running";
      wakeAll();
    },
    cancel() {
      if (status !== "running" && status !== "paused") return;
      if (status === "running") activeMs += now() - runningSince;
      status = "cancelled";
      wakeAll();
    },
    snapshot: () => committed,
    live() {
      const acc = mergeAccumulations(committed, createAccumulation(committed.width, committed.height, committed.groupCount));
      for (const list of pending.values()) for (const u of list) addUnit(acc, u);
      return acc;
    },
  };
}

function now(): number {
  return globalThis.performance ? globalThis.performance.now() : Date.now();
}
