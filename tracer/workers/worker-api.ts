/**
 * The API a tracer worker exposes over comlink, the same in a browser module worker and a Node
 * worker_threads worker (the two entry files only differ in how they call `expose`).
 *
 * A worker loads a compiled scene once (`loadScene`) and then renders any number of units against
 * it; results go back with their buffers transferred, not copied.
 */
import { transfer } from "comlink";
import type { CompiledScene } from "../compile/types";
import type { RenderUnit, UnitResult } from "../film/accumulate";
import { createRenderScratch, renderUnit, type RenderScratch } from "../render/unit";

/** Kernels a pool can run. "probe" is a scene-free integer kernel used to test and time the pool itself. */
export type KernelName = "render" | "probe";

export type TracerWorkerApi = {
  /** Keeps `compiled` as the scene for `key`, dropping any previous scene (one scene per worker). */
  loadScene(key: string, compiled: CompiledScene): void;
  runUnit(kernel: KernelName, key: string, unit: RenderUnit, probeGroups?: number): UnitResult;
  /** Drops the loaded scene so its memory can be reclaimed. */
  unload(): void;
};

/**
 * Probe kernel: for every pixel and pass, an integer derived from (x, y, pass) by a 32-bit integer
 * hash (common practice: the "lowbias32" finaliser), summed exactly like real samples. It exercises
 * tiling, pass ranges, transfer and merging with a result that depends on nothing but the unit.
 */
export function probeUnit(unit: RenderUnit, groups = 1): UnitResult {
  const tw = unit.x1 - unit.x0, th = unit.y1 - unit.y0;
  const sums = new Float64Array(tw * th * groups * 3);
  const sq = new Float64Array(tw * th * 2);
  for (let y = unit.y0; y < unit.y1; y++) {
    for (let x = unit.x0; x < unit.x1; x++) {
      const t = (y - unit.y0) * tw + (x - unit.x0);
      for (let p = unit.passStart; p < unit.passEnd; p++) {
        for (let c = 0; c < groups * 3; c++) {
          let h = (Math.imul(x, 0x9e3779b1) ^ Math.imul(y, 0x85ebca77) ^ Math.imul(p, 0xc2b2ae3d) ^ c) >>> 0;
          h ^= h >>> 16; h = Math.imul(h, 0x7feb352d); h ^= h >>> 15; h = Math.imul(h, 0x846ca68b); h ^= h >>> 16;
          sums[t * groups * 3 + c] += (h >>> 0) & 0xffff;
        }
        sq[t * 2 + 1] += 1;
      }
    }
  }
  return { unit, sums, sq, samples: unit.passEnd - unit.passStart };
}

export function createWorkerApi(): TracerWorkerApi {
  let sceneKey = "";
  let scene: CompiledScene | null = null;
  let scratch: RenderScratch | null = null;
  return {
    loadScene(key, compiled) {
      sceneKey = key;
      scene = compiled;
      scratch = createRenderScratch(compiled);
    },
    runUnit(kernel, key, unit, probeGroups = 1) {
      let result: UnitResult;
      if (kernel === "probe") {
        result = probeUnit(unit, probeGroups);
      } else {
        if (!scene || key !== sceneKey) throw new Error(`worker: scene "${key}" is not loaded (loaded: "${sceneKey}")`);
        result = renderUnit(scene, unit, scratch ?? undefined);
      }
      return transfer(result, [result.sums.buffer as ArrayBuffer, result.sq.buffer as ArrayBuffer]);
    },
    unload() {
      scene = null;
      scratch = null;
      sceneKey = "";
    },
  };
}
