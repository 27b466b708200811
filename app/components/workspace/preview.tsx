/**
 * The preview: the balanced, exposed picture on a canvas, with the progress strip under it. The render
 * coordinator worker combines the per-group buffers under the current look (light balance, exposure, tone
 * map, false colour) and sends a picture ready to draw, so a slider drag costs the page one putImageData
 * per picture and never a loop over the pixels.
 *
 * Pictures never go through React: the canvas subscribes to the renderer's store and draws the newest
 * picture in the next animation frame (at most one draw per frame however many arrive), so a picture
 * re-renders nothing. Readers select narrow slices (progress numbers, the histogram, a picture counter).
 */
import { createContext, useContext, useEffect, useMemo, useRef, useState } from "react";
import { useStore } from "zustand";
import { useShallow } from "zustand/react/shallow";
import { Button, cx } from "~/components/ui";
import { DEFAULT_LOOK, type Picture } from "~/lib/workspace-image";
import { etaMs, initialPreview, type PreviewRenderer, type PreviewState } from "~/lib/workspace-render";
import type { ResolutionScale } from "~/stores/workspace";
import { useWorkspace, useWorkspaceStore } from "./context";

type PreviewCtx = {
  renderer: PreviewRenderer | null;
  cursor: [number, number] | null;
  setCursor: (c: [number, number] | null) => void;
  meterAt: [number, number] | null;
  setMeterAt: (c: [number, number] | null) => void;
};
const PreviewContext = createContext<PreviewCtx>({ renderer: null, cursor: null, setCursor: () => {}, meterAt: null, setMeterAt: () => {} });
/** The renderer alone: it never changes while the page is open, so progress readers do not re-render for each picture. */
const RendererContext = createContext<PreviewRenderer | null>(null);

const fallbackStore = { getState: () => initialPreview, getInitialState: () => initialPreview, subscribe: () => () => {}, setState: () => {} };

export function usePreview<T>(selector: (s: PreviewState) => T): T {
  const renderer = useContext(RendererContext);
  return useStore(renderer?.store ?? fallbackStore, selector);
}

export function usePreviewRenderer(): PreviewRenderer | null {
  return useContext(RendererContext);
}

export function usePreviewContext(): PreviewCtx {
  return useContext(PreviewContext);
}

/** Sends the look (balance, display block, view) to the coordinator worker; the pictures it answers with land in the renderer's store. */
export function PreviewProvider({ renderer, children }: { renderer: PreviewRenderer | null; children: React.ReactNode }) {
  const balances = useWorkspace((s) => s.balances);
  const view = useWorkspace((s) => s.view);
  const exposure = useWorkspace((s) => s.lastGood?.scene.display.exposure ?? DEFAULT_LOOK.display.exposure);
  const toneMap = useWorkspace((s) => s.lastGood?.scene.display.toneMap ?? DEFAULT_LOOK.display.toneMap);
  const [cursor, setCursor] = useState<[number, number] | null>(null);
  const [meterAt, setMeterAt] = useState<[number, number] | null>(null);
  useEffect(() => {
    renderer?.setLook({ balances, view, display: { exposure, toneMap } });
  }, [renderer, balances, view, exposure, toneMap]);
  const value = useMemo(() => ({ renderer, cursor, setCursor, meterAt, setMeterAt }), [renderer, cursor, meterAt]);
  return (
    <RendererContext.Provider value={renderer}>
      <PreviewContext.Provider value={value}>{children}</PreviewContext.Provider>
    </RendererContext.Provider>
  );
}

/**
 * Draws the renderer's newest picture into `canvas` at most once per animation frame, and marks on `box`
 * which look was asked for and which one the drawn picture shows (a picture carrying the latest look
 * number shows the latest look). Returns the unsubscribe.
 */
export function drawPictures(renderer: Pick<PreviewRenderer, "store">, canvas: () => HTMLCanvasElement | null, box: () => HTMLElement | null): () => void {
  let frame = 0;
  let drawn: Picture | null = null;
  const draw = () => {
    frame = 0;
    const picture = renderer.store.getState().picture;
    const c = canvas();
    if (!c || !picture || picture === drawn) return;
    if (c.width !== picture.width) c.width = picture.width;
    if (c.height !== picture.height) c.height = picture.height;
    const ctx = c.getContext("2d");
    if (!ctx) return;
    ctx.putImageData(new ImageData(picture.rgba as Uint8ClampedArray<ArrayBuffer>, picture.width, picture.height), 0, 0);
    drawn = picture;
    box()?.setAttribute("data-look-shown", String(picture.lookSeq));
  };
  const schedule = () => {
    if (!frame) frame = requestAnimationFrame(draw);
  };
  const mark = (seq: number) => box()?.setAttribute("data-look-requested", String(seq));
  mark(renderer.store.getState().lookRequested);
  schedule();
  const unsubscribe = renderer.store.subscribe((s, prev) => {
    if (s.lookRequested !== prev.lookRequested) mark(s.lookRequested);
    if (s.picture !== prev.picture) schedule();
  });
  return () => {
    unsubscribe();
    if (frame) cancelAnimationFrame(frame);
  };
}

export function PreviewCanvas() {
  const { renderer, setCursor, setMeterAt, meterAt } = usePreviewContext();
  const canvasRef = useRef<HTMLCanvasElement>(null);
  const status = usePreview((s) => s.status);
  const error = usePreview((s) => s.error);
  const hash = usePreview((s) => s.accumulationHash);
  // Only the picture's size re-renders this component; its pixels are drawn by drawPictures.
  const width = usePreview((s) => s.picture?.width ?? 0);
  const height = usePreview((s) => s.picture?.height ?? 0);
  const image = width > 0 ? { width, height } : null;
  const [focusPx, setFocusPx] = useState<[number, number] | null>(null);
  // The picture is scaled to fit the panel (up or down) keeping its aspect ratio.
  const boxRef = useRef<HTMLDivElement>(null);
  const [box, setBox] = useState<[number, number] | null>(null);
  useEffect(() => {
    const el = boxRef.current;
    if (!el) return;
    const ro = new ResizeObserver(() => setBox([el.clientWidth - 16, el.clientHeight - 16]));
    ro.observe(el);
    return () => ro.disconnect();
  }, []);
  const fit = image && box ? ((k) => [Math.floor(image.width * k), Math.floor(image.height * k)] as const)(Math.max(0.01, Math.min(box[0] / image.width, box[1] / image.height))) : null;

  // Drawing is all the page does with pixels: the worker already mapped them for display. Started again
  // when the canvas appears (first picture) or changes size (a new canvas size clears it).
  useEffect(() => {
    if (!renderer) return;
    return drawPictures(
      renderer,
      () => canvasRef.current,
      () => boxRef.current,
    );
  }, [renderer, width, height]);

  const toPixel = (e: React.MouseEvent<HTMLCanvasElement>): [number, number] | null => {
    const c = canvasRef.current;
    if (!c || !image) return null;
    const r = c.getBoundingClientRect();
    const x = ((e.clientX - r.left) / r.width) * image.width;
    const y = ((e.clientY - r.top) / r.height) * image.height;
    if (x < 0 || y < 0 || x >= image.width || y >= image.height) return null;
    return [Math.floor(x), Math.floor(y)];
  };

  // Keyboard: arrows move a probe cursor over the image, Enter takes a meter reading there.
  const onKey = (e: React.KeyboardEvent) => {
    if (!image) return;
    const cur = focusPx ?? [Math.floor(image.width / 2), Math.floor(image.height / 2)];
    const step = e.shiftKey ? 10 : 1;
    let next: [number, number] | null = null;
    if (e.key === "ArrowLeft") next = [Math.max(0, cur[0] - step), cur[1]];
    else if (e.key === "ArrowRight") next = [Math.min(image.width - 1, cur[0] + step), cur[1]];
    else if (e.key === "ArrowUp") next = [cur[0], Math.max(0, cur[1] - step)];
    else if (e.key === "ArrowDown") next = [cur[0], Math.min(image.height - 1, cur[1] + step)];
    else if (e.key === "Enter" || e.key === " ") {
      e.preventDefault();
      setMeterAt(cur);
      return;
    }
    if (next) {
      e.preventDefault();
      setFocusPx(next);
      setCursor(next);
    }
  };

  return (
    <div
      ref={boxRef}
      className="relative flex min-h-0 flex-1 items-center justify-center overflow-hidden bg-[#0e0e0f] p-2"
      data-testid="preview"
      data-accumulation-hash={hash ?? undefined}
    >
      {image ? (
        <div className="relative" style={fit ? { width: fit[0], height: fit[1] } : undefined}>
          <canvas
            ref={canvasRef}
            tabIndex={0}
            aria-label="Preview image. Move the cursor or use the arrow keys to probe a pixel; click or press Enter to measure the light arriving there."
            className="block h-full w-full cursor-crosshair [image-rendering:pixelated]"
            onMouseMove={(e) => setCursor(toPixel(e))}
            onMouseLeave={() => setCursor(focusPx)}
            onClick={(e) => {
              const p = toPixel(e);
              if (p) setMeterAt(p);
            }}
            onKeyDown={onKey}
          />
          {meterAt ? (
            <span
              aria-hidden
              className="pointer-events-none absolute h-3 w-3 -translate-x-1/2 -translate-y-1/2 rounded-full border-2 border-accent"
              style={{ left: `${((meterAt[0] + 0.5) / image.width) * 100}%`, top: `${((meterAt[1] + 0.5) / image.height) * 100}%` }}
            />
          ) : null}
        </div>
      ) : (
        <p className="text-sm text-ink-faint">{status === "error" ? "No picture yet." : "Preparing the first pass…"}</p>
      )}
      {error ? (
        <div role="alert" className="absolute inset-x-2 top-2 max-h-24 overflow-auto rounded border border-danger/50 bg-canvas/90 px-2 py-1 text-xs whitespace-pre-wrap text-danger">
          Preview stopped: {error}
        </div>
      ) : null}
    </div>
  );
}

function formatDuration(ms: number | null): string {
  if (ms === null || !Number.isFinite(ms)) return "—";
  const s = Math.max(0, Math.round(ms / 1000));
  if (s < 60) return `${s} s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m} min ${s % 60} s`;
  return `${Math.floor(m / 60)} h ${m % 60} min`;
}

function formatRate(x: number): string {
  if (x >= 1e6) return `${(x / 1e6).toFixed(2)} M`;
  if (x >= 1e3) return `${(x / 1e3).toFixed(1)} k`;
  return x.toFixed(0);
}

const SCALES: { value: ResolutionScale; label: string }[] = [
  { value: 0.25, label: "¼" },
  { value: 0.5, label: "½" },
  { value: 1, label: "Full" },
];

const NOISE_TARGETS: { value: number | null; label: string }[] = [
  { value: null, label: "Off" },
  { value: 0.1, label: "10%" },
  { value: 0.05, label: "5%" },
  { value: 0.02, label: "2%" },
  { value: 0.01, label: "1%" },
];

/** What the progress strip shows: a picture alone (a look change) does not re-render it. */
const progressOf = ({ status, runId, stopReason, sppDone, sppTarget, samplesPerSecond, elapsedMs, relStdError, width, height, workers }: PreviewState) => ({
  status,
  runId,
  stopReason,
  sppDone,
  sppTarget,
  samplesPerSecond,
  elapsedMs,
  relStdError,
  width,
  height,
  workers,
});

export function ProgressStrip({ onRestart }: { onRestart: () => void }) {
  const renderer = usePreviewRenderer();
  const p = usePreview(useShallow(progressOf));
  const store = useWorkspaceStore();
  const scale = useWorkspace((s) => s.scale);
  const noiseTarget = useWorkspace((s) => s.noiseTarget);
  const frac = p.sppTarget > 0 ? Math.min(1, p.sppDone / p.sppTarget) : 0;
  const running = p.status === "rendering" || p.status === "compiling";
  const statusText: Record<PreviewState["status"], string> = {
    idle: "Waiting",
    compiling: "Preparing",
    rendering: "Rendering",
    paused: "Paused",
    done: p.stopReason === "noise" ? "Reached the noise target" : "Reached the target",
    stopped: "Stopped",
    error: "Stopped by an error",
  };
  return (
    <section aria-label="Render progress" className="flex flex-col gap-1.5 border-t border-line bg-panel px-3 py-2 text-xs" data-testid="progress">
      <div className="flex items-center gap-3">
        <span className={cx("font-medium", p.status === "error" ? "text-danger" : p.status === "done" ? "text-ok" : "text-ink")} data-testid="progress-status" data-run-id={p.runId}>
          {statusText[p.status]}
        </span>
        <span className="tabular-nums text-ink" data-testid="spp">
          <span data-testid="spp-done">{p.sppDone}</span> / <span data-testid="spp-target">{p.sppTarget}</span> spp
        </span>
        <div
          role="progressbar"
          aria-label="Samples per pixel done"
          aria-valuemin={0}
          aria-valuemax={p.sppTarget}
          aria-valuenow={p.sppDone}
          className="h-1.5 min-w-16 flex-1 overflow-hidden rounded bg-raised"
        >
          <div className={cx("h-full", p.status === "paused" ? "bg-warn" : "bg-accent")} style={{ width: `${frac * 100}%` }} />
        </div>
        <div className="flex gap-1">
          {p.status === "paused" ? (
            <Button size="sm" onClick={() => renderer?.resume()}>
              Resume
            </Button>
          ) : (
            <Button size="sm" onClick={() => renderer?.pause()} disabled={!running}>
              Pause
            </Button>
          )}
          <Button size="sm" onClick={onRestart} title="Start accumulating again from the first pass">
            Restart
          </Button>
        </div>
      </div>
      <dl className="grid grid-cols-[repeat(4,auto)] gap-x-4 gap-y-0.5 text-ink-muted tabular-nums">
        <div className="flex gap-1">
          <dt>Rate</dt>
          <dd className="text-ink">{formatRate(p.samplesPerSecond)} samples/s</dd>
        </div>
        <div className="flex gap-1">
          <dt>Elapsed</dt>
          <dd className="text-ink">{formatDuration(p.elapsedMs)}</dd>
        </div>
        <div className="flex gap-1" title="Root-mean-square relative standard error of the pixels' means: the noise still in the picture">
          <dt>Noise</dt>
          <dd className="text-ink" data-testid="noise">
            {Number.isFinite(p.relStdError) ? `${(p.relStdError * 100).toFixed(1)}%` : "—"}
          </dd>
        </div>
        <div className="flex gap-1">
          <dt>Left</dt>
          <dd className="text-ink">{p.status === "done" ? "0 s" : formatDuration(etaMs(p))}</dd>
        </div>
      </dl>
      <div className="flex flex-wrap items-center gap-3 text-ink-muted">
        <div role="radiogroup" aria-label="Preview resolution" className="flex items-center gap-1">
          <span>Resolution</span>
          {SCALES.map((s) => (
            <button
              key={s.label}
              type="button"
              role="radio"
              aria-checked={scale === s.value}
              onClick={() => store.getState().setScale(s.value)}
              className={cx("rounded border px-1.5 py-0.5", scale === s.value ? "border-accent text-ink" : "border-line hover:text-ink")}
            >
              {s.label}
            </button>
          ))}
        </div>
        <label className="flex items-center gap-1">
          Stop at noise
          <select
            aria-label="Stop when the noise falls to"
            className="rounded border border-line bg-raised px-1 py-0.5 text-ink"
            value={noiseTarget === null ? "" : String(noiseTarget)}
            onChange={(e) => {
              const v = e.target.value === "" ? null : Number(e.target.value);
              store.getState().setNoiseTarget(v);
              renderer?.setNoiseTarget(v);
            }}
          >
            {NOISE_TARGETS.map((n) => (
              <option key={n.label} value={n.value === null ? "" : String(n.value)}>
                {n.label}
              </option>
            ))}
          </select>
        </label>
        <span className="ml-auto text-ink-faint">
          {p.width > 0 ? `${p.width}×${p.height} px · ` : ""}
          {p.workers > 0 ? `${p.workers} worker${p.workers === 1 ? "" : "s"}` : ""}
        </span>
      </div>
    </section>
  );
}
