// Reproduce a stored render in this browser: the same version, seed and spp, rendered by the tracer's
// worker pool, and the accumulation hash compared bit for bit with the one the render was published with.
// Exact integer accumulation makes the hash independent of worker count and tile order, so a mismatch means
// the scene, its assets or the tracer version differ, never "noise".
import { compileScene } from "@tracer/compile/compile";
import { accumulationHash, type Accumulation } from "@tracer/film/accumulate";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import { validateScene, formatIssue } from "@tracer/scene/validate";
import type { Scene } from "@tracer/scene/schema";
import { TRACER_VERSION } from "@tracer/version";
import { renderProgressive, type ProgressEvent } from "@tracer/workers/render-session";

export type ReproduceInput = {
  /** The version's scene JSON. */
  scene: unknown;
  seed: number;
  spp: number;
  /** Hash recorded when the render was published. */
  expectedHash: string | null;
  /** Tracer version recorded with the render (a different one is reported, not treated as an error). */
  tracerVersion?: string;
  /** Where to fetch an asset's bytes, e.g. (sha) => `/projects/${projectId}/assets/${sha}`. */
  assetUrl: (sha: string) => string;
  onProgress?: (e: ProgressEvent) => void;
  signal?: AbortSignal;
  /** Worker count (default: the browser's core count). */
  workers?: number;
};

export type ReproduceResult = {
  hash: string;
  matches: boolean | null;
  passesDone: number;
  elapsedMs: number;
  samplesPerSecond: number;
  tracerVersion: string;
  sameTracerVersion: boolean;
  accumulation: Accumulation;
  scene: Scene;
};

export async function loadSceneAssets(scene: Scene, assetUrl: (sha: string) => string, signal?: AbortSignal): Promise<Map<string, Uint8Array>> {
  const assets = new Map<string, Uint8Array>();
  for (const ref of uniqueAssetRefs(scene)) {
    if (!ref.startsWith("sha256:")) throw new Error(`asset ${ref} is a file path; only uploaded (sha256:) assets can be rendered here`);
    const res = await fetch(assetUrl(ref.slice(7)), { signal });
    if (!res.ok) throw new Error(`asset ${ref} could not be loaded (HTTP ${res.status})`);
    assets.set(ref, new Uint8Array(await res.arrayBuffer()));
  }
  return assets;
}

export async function reproduceRender(input: ReproduceInput): Promise<ReproduceResult> {
  const checked = validateScene(input.scene);
  if (!checked.ok) throw new Error(`the version does not validate: ${checked.issues.map(formatIssue).join("; ")}`);
  // A stored render of N spp holds the first N passes of the version's own sample pattern (the pattern is set by
  // the scene's render.spp; a preview stopped early or a pool job of fewer passes is a prefix of it), so only
  // the seed is taken from the render and the pass count decides how far to go.
  const scene: Scene = { ...checked.scene, render: { ...checked.scene.render, seed: input.seed } };
  const assets = await loadSceneAssets(scene, input.assetUrl, input.signal);
  const compiled = compileScene(scene, assets);
  const { createBrowserPool } = await import("@tracer/workers/browser-pool");
  const pool = createBrowserPool(input.workers);
  try {
    const session = renderProgressive(compiled, { pool, passes: input.spp, onProgress: (e) => input.onProgress?.(e) });
    input.signal?.addEventListener("abort", () => session.cancel(), { once: true });
    const result = await session.done;
    if (result.cancelled) throw new Error("reproduction cancelled");
    const hash = accumulationHash(result.accumulation);
    return {
      hash,
      matches: input.expectedHash ? hash === input.expectedHash : null,
      passesDone: result.passesDone,
      elapsedMs: result.elapsedMs,
      samplesPerSecond: result.samplesPerSecond,
      tracerVersion: TRACER_VERSION,
      sameTracerVersion: input.tracerVersion === undefined || input.tracerVersion === TRACER_VERSION,
      accumulation: result.accumulation,
      scene,
    };
  } finally {
    await pool.terminate();
  }
}
