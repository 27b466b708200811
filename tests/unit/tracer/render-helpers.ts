/** Shared helpers for the tracer's physics tests: build a scene, render it, read pixel statistics. */
import { SceneSchema, type SceneInput } from "../../../tracer/scene/schema";
import { compileScene } from "../../../tracer/compile/compile";
import { createRenderScratch, renderUnit } from "../../../tracer/render/unit";
import { addUnit, createAccumulation, pixelVariance, resolveBeauty, resolveGroup, type Accumulation } from "../../../tracer/film/accumulate";
import type { CompiledScene } from "../../../tracer/compile/types";

export function sceneOf(input: Omit<SceneInput, "format" | "name"> & { name?: string }) {
  return SceneSchema.parse({ format: "tracewell.scene/1", name: "test", ...input });
}

export function compiled(input: Omit<SceneInput, "format" | "name">, assets?: Map<string, Uint8Array>): CompiledScene {
  return compileScene(sceneOf(input), assets);
}

/** Render the whole image over passes [from, to) in tiles of `tile` pixels. */
export function renderAll(c: CompiledScene, from = 0, to = c.spp, tile = 16): Accumulation {
  const acc = createAccumulation(c.width, c.height, c.groupNames.length);
  const scratch = createRenderScratch(c);
  for (let y = 0; y < c.height; y += tile) {
    for (let x = 0; x < c.width; x += tile) {
      const r = renderUnit(c, { x0: x, y0: y, x1: Math.min(c.width, x + tile), y1: Math.min(c.height, y + tile), passStart: from, passEnd: to }, scratch);
      addUnit(acc, r);
    }
  }
  return acc;
}

/**
 * Mean luminance-like value of channel `ch` (or luminance when ch = -1) over a pixel rectangle, with its
 * standard error from the per-pixel sample variance (pixels independent: SE² = Σ var_p/n_p / N²).
 */
export function regionStats(acc: Accumulation, x0: number, y0: number, x1: number, y1: number, group = -1) {
  const img = group < 0 ? resolveBeauty(acc) : resolveGroup(acc, group);
  const v = pixelVariance(acc);
  let sum = 0;
  let se2 = 0;
  let n = 0;
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const p = y * acc.width + x;
      sum += 0.2126 * img.data[p * 3] + 0.7152 * img.data[p * 3 + 1] + 0.0722 * img.data[p * 3 + 2];
      se2 += v[p] / acc.counts[p];
      n++;
    }
  }
  return { mean: sum / n, se: Math.sqrt(se2) / n, n };
}
