/// <reference lib="webworker" />
/**
 * The workspace's render coordinator, itself a Web Worker so the page's main thread never compiles,
 * traces, accumulates or maps pixels for display. It compiles the scene, drives the tracer's worker pool
 * (nested module workers: one per spare core) over tiles and growing pass batches, keeps the exact
 * accumulation, and a few times a second resolves the mean radiance of each light group and turns it into
 * a picture ready to draw under the page's current look (light balance, exposure, tone map, false colour),
 * with its histogram. A look change re-presents the last buffers without touching the render. It also
 * answers pixel-probe and light-meter readings.
 */
import { expose, transfer } from "comlink";
import { compileScene } from "@tracer/compile/compile";
import type { CompiledScene } from "@tracer/compile/types";
import {
  accumulationHash,
  addUnit,
  createAccumulation,
  relativeStdError,
  resolveGroup,
  type Accumulation,
  type RenderUnit,
  type UnitResult,
} from "@tracer/film/accumulate";
import type { Display } from "@tracer/film/display";
import type { FloatImage } from "@tracer/io/image";
import { measureIrradiance } from "@tracer/render/meter";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import { validateScene } from "@tracer/scene/validate";
import { createBrowserPool } from "@tracer/workers/browser-pool";
import type { WorkerPool } from "@tracer/workers/pool";
import { TRACER_VERSION } from "@tracer/version";
import { renderOutputs, type RenderOutputs } from "./render-outputs";
import { DEFAULT_LOOK, type Look, type Picture, type ProbeReading } from "./workspace-image";
import { presentPicture, probePixel } from "./workspace-picture";
import { renderKey } from "./workspace-render-key";

export type SessionStatus = "compiling" | "rendering" | "paused" | "done" | "stopped" | "error";

export type SessionFrame = {
  runId: number;
  status: SessionStatus;
  width: number;
  height: number;
  groupNames: string[];
  sppDone: number;
  sppTarget: number;
  samplesPerSecond: number;
  elapsedMs: number;
  relStdError: number;
  stopReason: "target" | "noise" | null;
  error: string | null;
  workers: number;
  /** Passes every pixel holds in the pass-aligned accumulation (what a publish would keep); 0 = none yet. */
  settledSpp: number;
  /** Hash of that accumulation once the run stopped (target or noise), else null. */
  accumulationHash: string | null;
  /** Resolution scale the run renders at. */
  scale: number;
};

/**
 * What the coordinator sends the page: progress of the current run (null when only the look changed) and
 * a picture ready to draw (null when no pixels or look changed). Pictures always come from the latest
 * buffers, so an error or a fresh compile leaves the last good picture on screen.
 */
export type SessionMessage = { progress: SessionFrame | null; picture: Picture | null };

/** A pass-aligned accumulation turned into files, with the facts a publish records beside them. */
export type PublishPackage = {
  files: RenderOutputs;
  spp: number;
  seed: number;
  integrator: string;
  tracerVersion: string;
  renderMs: number;
  samplesPerSecond: number;
  groupNames: string[];
};

export type StartOptions = {
  /** 1, 0.5 or 0.25 of the scene's image size. */
  scale: number;
  noiseTarget: number | null;
  /** Where "sha256:…" assets are fetched from: `${assetBase}${sha}` */
  assetBase: string;
  frameIntervalMs?: number;
  tileSize?: number;
};

export type MeterReading = {
  hit: boolean;
  irradiance: [number, number, number];
  stdError: [number, number, number];
  position: [number, number, number];
  normal: [number, number, number];
  samples: number;
};

type Run = {
  id: number;
  compiled: CompiledScene;
  acc: Accumulation;
  tilePasses: Int32Array;
  tiles: { x0: number; y0: number; x1: number; y1: number }[];
  target: number;
  noiseTarget: number | null;
  paused: boolean;
  cancelled: boolean;
  /** Pool lanes parked while paused (one per lane: every one must wake on resume or cancel). */
  waiters: (() => void)[];
  started: number;
  pausedAt: number;
  pausedTotal: number;
  samples: number;
  dirty: boolean;
  stopReason: SessionFrame["stopReason"];
  scale: number;
  /** The scene's render-relevant content, to tell which scene an accumulation belongs to. */
  key: string;
  integrator: string;
  /**
   * Exactly passes [0, settledSpp) of every pixel: rounds are added here only once all their tiles arrived,
   * so a publish (and its hash) never mixes pixels with different pass counts.
   */
  settled: Accumulation;
  settledSpp: number;
  settledMs: number;
  /** Results of rounds still missing tiles, by the round's first pass. */
  pending: Map<number, { passEnd: number; results: UnitResult[] }>;
};

/** The latest resolved group buffers (of whichever run last had pixels) and how the page wants them shown. */
type Shown = { groupNames: string[]; groups: FloatImage[]; combined: FloatImage | null; combinedFor: number };
let shown: Shown | null = null;
let look: Look = DEFAULT_LOOK;
let lookSeq = 0;
/** Bumped when buffers or look change; `shown.combinedFor` says which state `combined` was made for. */
let shownState = 0;
let presentQueued = false;
let sink: ((m: SessionMessage) => void) | null = null;

function send(progress: SessionFrame | null, picture: Picture | null): void {
  if (!sink) return;
  const m: SessionMessage = { progress, picture };
  sink(picture ? transfer(m, [picture.rgba.buffer as ArrayBuffer]) : m);
}

/** Combine the groups under the current look (reusing the float scratch) and make the picture to draw. */
function present(): Picture | null {
  if (!shown || shown.groups.length === 0) return null; // a scene without light has nothing to show yet
  const { combined, picture } = presentPicture(shown.groups, shown.groupNames, look, lookSeq, shown.combined ?? undefined);
  shown.combined = combined;
  shown.combinedFor = shownState;
  return picture;
}

/**
 * Look changes arrive as fast as a slider moves; they only record the wish and present once after the
 * messages already queued, so a burst of them costs one picture, not one each.
 */
function queuePresent(): void {
  if (presentQueued) return;
  presentQueued = true;
  setTimeout(() => {
    presentQueued = false;
    const picture = present();
    if (picture) send(null, picture);
  }, 0);
}

let pool: WorkerPool | null = null;
let poolSize = 0;
let current: Run | null = null;
let runCounter = 0;
const assetCache = new Map<string, Uint8Array>();

function ensurePool(size: number): WorkerPool {
  if (pool && poolSize === size) return pool;
  void pool?.terminate();
  pool = createBrowserPool(size);
  poolSize = size;
  return pool;
}

function scaledScene<T extends { image: { width: number; height: number } }>(scene: T, scale: number): T {
  if (scale === 1) return scene;
  return { ...scene, image: { width: Math.max(1, Math.round(scene.image.width * scale)), height: Math.max(1, Math.round(scene.image.height * scale)) } };
}

async function loadAssets(refs: string[], assetBase: string): Promise<Map<string, Uint8Array>> {
  const out = new Map<string, Uint8Array>();
  for (const ref of refs) {
    let bytes = assetCache.get(ref);
    if (!bytes) {
      if (!ref.startsWith("sha256:")) throw new Error(`asset "${ref}": the workspace can only use uploaded assets ("sha256:…")`);
      const res = await fetch(`${assetBase}${ref.slice(7)}`);
      if (!res.ok) throw new Error(`asset "${ref}" could not be loaded (HTTP ${res.status})`);
      bytes = new Uint8Array(await res.arrayBuffer());
      assetCache.set(ref, bytes);
    }
    out.set(ref, bytes);
  }
  return out;
}

function sppDone(run: Run): number {
  let m = Infinity;
  for (let i = 0; i < run.tilePasses.length; i++) m = Math.min(m, run.tilePasses[i]!);
  return Number.isFinite(m) ? m : 0;
}

function elapsed(run: Run): number {
  const now = performance.now();
  return now - run.started - run.pausedTotal - (run.paused ? now - run.pausedAt : 0);
}

/** Passes per unit grow 1, 1, 2, 4, 8, 16 so the first picture comes fast and later ones waste little messaging. */
function batchSize(done: number): number {
  if (done < 2) return 1;
  return Math.min(16, 1 << Math.floor(Math.log2(done)));
}

function wake(run: Run): void {
  const ws = run.waiters.splice(0);
  for (const w of ws) w();
}

function cancelRun(run: Run): void {
  run.cancelled = true;
  wake(run);
}

/** Keeps a unit until its whole round is in, then moves every completed leading round into `settled`. */
function settle(run: Run, r: UnitResult): void {
  const start = r.unit.passStart;
  let round = run.pending.get(start);
  if (!round) run.pending.set(start, (round = { passEnd: r.unit.passEnd, results: [] }));
  round.results.push(r);
  for (;;) {
    const next = run.pending.get(run.settledSpp);
    if (!next || next.results.length < run.tiles.length) break;
    for (const u of next.results) addUnit(run.settled, u);
    run.pending.delete(run.settledSpp);
    run.settledSpp = next.passEnd;
    run.settledMs = elapsed(run);
  }
}

const api = {
  /** Where progress and pictures go (one comlink proxy for the page's lifetime). */
  connect(onMessage: (m: SessionMessage) => void): void {
    sink = onMessage;
  },

  /** How to show the buffers from now on; answered by a picture carrying `seq`. */
  setLook(next: Look, seq: number): void {
    look = next;
    lookSeq = seq;
    shownState++;
    queuePresent();
  },

  /** Linear radiance and luminance of the balanced image at pixel (x, y), as the page shows it now. */
  probe(x: number, y: number): ProbeReading | null {
    if (!shown) return null;
    if (!shown.combined || shown.combinedFor !== shownState) present();
    return shown.combined ? probePixel(shown.combined, x, y, look.display.exposure) : null;
  },

  async start(sceneJson: unknown, opts: StartOptions): Promise<void> {
    const onFrame = (f: SessionFrame) => send(f, null);
    const id = ++runCounter;
    if (current) cancelRun(current);
    const workers = Math.max(1, (navigator.hardwareConcurrency || 2) - 1);
    const base: SessionFrame = {
      runId: id, status: "compiling", width: 0, height: 0, groupNames: [], sppDone: 0, sppTarget: 0,
      samplesPerSecond: 0, elapsedMs: 0, relStdError: Infinity, stopReason: null, error: null, workers,
      settledSpp: 0, accumulationHash: null, scale: opts.scale,
    };
    const fail = (message: string) => onFrame({ ...base, status: "error", error: message });
    onFrame(base);

    let compiled: CompiledScene;
    let integrator = "";
    try {
      const v = validateScene(sceneJson);
      if (!v.ok) return fail(v.issues.map((i) => `${i.path}: ${i.message}`).join("\n"));
      const scene = scaledScene(v.scene, opts.scale);
      integrator = v.scene.render.integrator;
      const assets = await loadAssets(uniqueAssetRefs(scene), opts.assetBase);
      if (id !== runCounter) return;
      compiled = compileScene(scene, assets);
    } catch (e) {
      return fail(e instanceof Error ? e.message : String(e));
    }
    if (id !== runCounter) return;

    const p = ensurePool(workers);
    const tileSize = opts.tileSize ?? 32;
    const tiles: Run["tiles"] = [];
    for (let y0 = 0; y0 < compiled.height; y0 += tileSize)
      for (let x0 = 0; x0 < compiled.width; x0 += tileSize)
        tiles.push({ x0, y0, x1: Math.min(compiled.width, x0 + tileSize), y1: Math.min(compiled.height, y0 + tileSize) });
    const run: Run = {
      id, compiled, tiles, acc: createAccumulation(compiled.width, compiled.height, compiled.groupNames.length),
      tilePasses: new Int32Array(tiles.length), target: compiled.spp, noiseTarget: opts.noiseTarget, paused: false,
      cancelled: false, waiters: [], started: performance.now(), pausedAt: 0, pausedTotal: 0, samples: 0, dirty: false, stopReason: null,
      scale: opts.scale, key: renderKey(sceneJson), integrator,
      settled: createAccumulation(compiled.width, compiled.height, compiled.groupNames.length), settledSpp: 0, settledMs: 0, pending: new Map(),
    };
    current = run;

    const frame = (status: SessionStatus, withPixels: boolean): void => {
      let picture: Picture | null = null;
      if (withPixels) {
        // A new size (resolution scale) cannot reuse the old float scratch.
        const same = shown && shown.combined?.width === compiled.width && shown.combined.height === compiled.height;
        const groups = run.compiled.groupNames.map((_, g) => resolveGroup(run.acc, g));
        shown = { groupNames: [...compiled.groupNames], groups, combined: same ? shown!.combined : null, combinedFor: -1 };
        shownState++;
        picture = present();
      }
      const ms = elapsed(run);
      const f: SessionFrame = {
        ...base, status, width: compiled.width, height: compiled.height, groupNames: compiled.groupNames,
        sppDone: sppDone(run), sppTarget: run.target, samplesPerSecond: ms > 0 ? (run.samples / ms) * 1000 : 0, elapsedMs: ms,
        relStdError: relativeStdError(run.acc), stopReason: run.stopReason, settledSpp: run.settledSpp,
        accumulationHash: status === "done" && run.settledSpp > 0 ? accumulationHash(run.settled) : null,
      };
      run.dirty = false;
      send(f, picture);
    };

    try {
      await p.loadScene(compiled);
    } catch (e) {
      return fail(e instanceof Error ? e.message : String(e));
    }
    if (run.cancelled) return;

    // Units are handed out tile by tile; a tile's next batch starts once all tiles reached the same pass.
    let cursor = 0;
    let round = 0;
    let roundEnd = batchSize(0);
    const source = {
      next: async (): Promise<RenderUnit | null> => {
        while (run.paused && !run.cancelled) await new Promise<void>((r) => run.waiters.push(r));
        if (run.cancelled || run.stopReason) return null;
        if (cursor >= tiles.length) {
          if (roundEnd >= run.target) return null;
          cursor = 0;
          round = roundEnd;
          roundEnd = Math.min(run.target, round + batchSize(round));
        }
        const t = tiles[cursor++]!;
        return { ...t, passStart: round, passEnd: roundEnd };
      },
    };

    const interval = opts.frameIntervalMs ?? 300;
    const timer = setInterval(() => {
      if (run.cancelled || !run.dirty) return;
      frame(run.paused ? "paused" : "rendering", true);
      const noise = run.noiseTarget;
      if (noise !== null && sppDone(run) >= 4 && relativeStdError(run.acc) <= noise) run.stopReason = "noise";
    }, interval);

    try {
      await p.run(source, {
        onResult: (r) => {
          if (run.cancelled) return;
          addUnit(run.acc, r);
          run.samples += r.samples * (r.unit.x1 - r.unit.x0) * (r.unit.y1 - r.unit.y0);
          const ti = tiles.findIndex((t) => t.x0 === r.unit.x0 && t.y0 === r.unit.y0);
          if (ti >= 0) run.tilePasses[ti] = Math.max(run.tilePasses[ti]!, r.unit.passEnd);
          settle(run, r);
          run.dirty = true;
        },
      });
    } catch (e) {
      clearInterval(timer);
      if (!run.cancelled) fail(e instanceof Error ? e.message : String(e));
      return;
    }
    clearInterval(timer);
    if (run.cancelled) return;
    if (!run.stopReason) run.stopReason = "target";
    frame("done", true);
  },

  pause(): void {
    const r = current;
    if (!r || r.paused || r.cancelled) return;
    r.paused = true;
    r.pausedAt = performance.now();
  },

  resume(): void {
    const r = current;
    if (!r || !r.paused) return;
    r.paused = false;
    r.pausedTotal += performance.now() - r.pausedAt;
    wake(r);
  },

  stop(): void {
    if (current) cancelRun(current);
    runCounter++;
  },

  setNoiseTarget(t: number | null): void {
    if (current) current.noiseTarget = t;
  },

  /**
   * The files of the pass-aligned accumulation, built here so the page never runs tracer code; null when the
   * current run is not of `expectedKey`'s scene at full resolution or has no complete pass yet.
   */
  publishPackage(expectedKey: string, display: Display): PublishPackage | null {
    const r = current;
    if (!r || r.cancelled || r.id !== runCounter || r.scale !== 1 || r.key !== expectedKey || r.settledSpp < 1) return null;
    const files = renderOutputs(r.settled, display, r.compiled.groupNames);
    const pixels = r.compiled.width * r.compiled.height;
    const pkg: PublishPackage = {
      files,
      spp: r.settledSpp,
      seed: r.compiled.seed,
      integrator: r.integrator,
      tracerVersion: TRACER_VERSION,
      renderMs: r.settledMs,
      samplesPerSecond: r.settledMs > 0 ? (r.settledSpp * pixels * 1000) / r.settledMs : 0,
      groupNames: [...r.compiled.groupNames],
    };
    const buffers = new Set([files.pfm, files.hdr, files.png, files.thumb, files.state, ...Object.values(files.groups)].map((b) => b.buffer as ArrayBuffer));
    return transfer(pkg, [...buffers]);
  },

  /** Irradiance at the surface under pixel (px, py) of the current run's image. */
  meter(px: number, py: number, samples = 4096): MeterReading | null {
    const r = current;
    if (!r) return null;
    const m = measureIrradiance(r.compiled, Math.floor(px), Math.floor(py), samples, r.compiled.seed ^ 0x5eed);
    return { ...m, samples };
  },
};

export type SessionApi = typeof api;

expose(api);
