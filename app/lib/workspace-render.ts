/**
 * Main-thread side of the preview: starts the render coordinator worker, restarts it when the scene's
 * render-relevant content changes (display settings only change how the buffers are shown), tells it the
 * look to show them with, and keeps the latest picture and progress in a small store of its own so
 * progress ticks never re-render the forms. The worker sends pictures ready to draw; nothing here touches
 * pixels. Import only in the browser.
 */
import { proxy, wrap, type Remote } from "comlink";
import { renderKey } from "./workspace-render-key";
import { createStore, type StoreApi } from "zustand/vanilla";
import type { Display } from "@tracer/film/display";
import type { Look, Picture, ProbeReading } from "./workspace-image";
import type { MeterReading, PublishPackage, SessionApi, SessionFrame, SessionMessage, SessionStatus } from "./workspace-session.worker";
export { renderKey } from "./workspace-render-key";

export type PreviewState = {
  status: SessionStatus | "idle";
  runId: number;
  width: number;
  height: number;
  groupNames: string[];
  /** The latest picture to draw (kept through errors and fresh compiles: the last good image stays). */
  picture: Picture | null;
  /** Bumped whenever a new picture arrives (new pixels or a new look). */
  pictureVersion: number;
  /** Number of the latest look sent to the worker (a picture carrying it shows that look). */
  lookRequested: number;
  sppDone: number;
  sppTarget: number;
  samplesPerSecond: number;
  elapsedMs: number;
  relStdError: number;
  stopReason: SessionFrame["stopReason"];
  error: string | null;
  workers: number;
  /** Passes held by every pixel of the pass-aligned accumulation (publishable when ≥ 1 at scale 1). */
  settledSpp: number;
  /** Hash of the finished accumulation (set when the run stops), else null. */
  accumulationHash: string | null;
  scale: number;
  /** renderKey of the scene the latest start() asked for: tells which scene the accumulation belongs to. */
  runKey: string;
};

export type { MeterReading, PublishPackage };

export const initialPreview: PreviewState = {
  status: "idle", runId: 0, width: 0, height: 0, groupNames: [], picture: null, pictureVersion: 0, lookRequested: 0, sppDone: 0, sppTarget: 0,
  samplesPerSecond: 0, elapsedMs: 0, relStdError: Infinity, stopReason: null, error: null, workers: 0,
  settledSpp: 0, accumulationHash: null, scale: 1, runKey: "",
};

/** Time left to reach the target spp at the current rate; null before there is a rate. */
export function etaMs(p: Pick<PreviewState, "sppDone" | "sppTarget" | "elapsedMs">): number | null {
  if (p.sppDone <= 0 || p.elapsedMs <= 0) return null;
  return ((p.sppTarget - p.sppDone) * p.elapsedMs) / p.sppDone;
}

export class PreviewRenderer {
  readonly store: StoreApi<PreviewState> = createStore<PreviewState>()(() => ({ ...initialPreview }));
  private worker: Worker;
  private api: Remote<SessionApi>;
  private latestRun = 0;
  private lookSeq = 0;
  private probeSeq = 0;

  constructor(private assetBase: string) {
    this.worker = new Worker(new URL("./workspace-session.worker.ts", import.meta.url), { type: "module", name: "tracewell-preview" });
    this.api = wrap<SessionApi>(this.worker);
    void this.api.connect(proxy((m: SessionMessage) => this.onMessage(m)));
  }

  /** How the buffers are to be shown; the worker answers with a picture (bursts cost one picture). Returns the request's number. */
  setLook(look: Look): number {
    const seq = ++this.lookSeq;
    void this.api.setLook(look, seq);
    this.store.setState({ lookRequested: seq });
    return seq;
  }

  /**
   * The balanced linear radiance at a pixel, read in the worker. Resolves to undefined when a later probe
   * was asked for meanwhile (its answer is the one to show).
   */
  async probe(x: number, y: number): Promise<ProbeReading | null | undefined> {
    const seq = ++this.probeSeq;
    const r = await this.api.probe(x, y);
    return seq === this.probeSeq ? r : undefined;
  }

  start(scene: unknown, opts: { scale: number; noiseTarget: number | null }): void {
    this.store.setState({
      status: "compiling", error: null, stopReason: null, sppDone: 0, relStdError: Infinity, samplesPerSecond: 0, elapsedMs: 0,
      settledSpp: 0, accumulationHash: null, scale: opts.scale, runKey: renderKey(scene),
    });
    void this.api
      .start(scene, { ...opts, assetBase: this.assetBase })
      .catch((e: unknown) => this.store.setState({ status: "error", error: e instanceof Error ? e.message : String(e) }));
  }

  /** One store update per message, so a frame with a picture re-renders its readers once. */
  private onMessage(m: SessionMessage): void {
    const s = this.store.getState();
    const progress = m.progress ? this.progressOf(m.progress, s) : null;
    // Pictures always come from the worker's latest buffers, so each one replaces the last.
    const picture = m.picture ? { picture: m.picture, pictureVersion: s.pictureVersion + 1 } : null;
    if (progress || picture) this.store.setState({ ...progress, ...picture });
  }

  private progressOf(f: SessionFrame, s: PreviewState): Partial<PreviewState> | null {
    if (f.runId < this.latestRun) return null; // a late frame of a run that was replaced
    this.latestRun = f.runId;
    return {
      status: f.status,
      runId: f.runId,
      width: f.width || s.width,
      height: f.height || s.height,
      // Same names keep the same array, so the light-balance panel does not re-render on every frame.
      groupNames: f.groupNames.length && JSON.stringify(f.groupNames) !== JSON.stringify(s.groupNames) ? f.groupNames : s.groupNames,
      sppDone: f.sppDone,
      sppTarget: f.sppTarget || s.sppTarget,
      samplesPerSecond: f.samplesPerSecond,
      elapsedMs: f.elapsedMs,
      relStdError: f.relStdError,
      stopReason: f.stopReason,
      error: f.error,
      workers: f.workers,
      settledSpp: f.settledSpp,
      accumulationHash: f.accumulationHash,
      scale: f.scale,
    };
  }

  pause(): void {
    this.store.setState({ status: "paused" });
    void this.api.pause();
  }

  resume(): void {
    this.store.setState({ status: "rendering" });
    void this.api.resume();
  }

  setNoiseTarget(t: number | null): void {
    void this.api.setNoiseTarget(t);
  }

  meter(px: number, py: number): Promise<MeterReading | null> {
    return this.api.meter(px, py);
  }

  /** The current accumulation as publishable files, built in the coordinator worker; null if `scene` is not what it renders at full size. */
  publishPackage(scene: unknown, display: Display): Promise<PublishPackage | null> {
    return this.api.publishPackage(renderKey(scene), display);
  }

  dispose(): void {
    void this.api.stop();
    this.worker.terminate();
  }
}
