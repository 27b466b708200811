/**
 * Render one unit of work: a tile of pixels over a range of sample passes. One pass is one sample per
 * pixel; pass p of pixel i uses only the random numbers of (seed, i, p), so units can be computed anywhere,
 * in any order, and their integer sums added in any order (film/accumulate.ts).
 */
import type { CompiledScene } from "../compile/types";
import { SampleStream, pcg4d, cmj, cmjGrid, SALT_PIXEL_PATTERN, SALT_QUANTISE } from "../math/rng";
import { CAMERA_SAMPLE_LENGTH, generateRay } from "../camera";
import { PathScratch, radiance } from "../integrators/path";
import { quantiseInto, QUANT_MAX_RADIANCE, type RenderUnit, type UnitResult } from "../film/accumulate";

export type { RenderUnit, UnitResult };

/** Reusable per-worker state; create once per compiled scene with createRenderScratch. */
export type RenderScratch = {
  groupCount: number;
  path: PathScratch;
  rng: SampleStream;
  words: Uint32Array;
  jitter: Float64Array;
  lens: Float64Array;
  /** film position, lens and shutter numbers of the current sample (generateRay's input) */
  cameraSample: Float64Array;
};

export function createRenderScratch(compiled: CompiledScene): RenderScratch {
  return {
    groupCount: compiled.groupNames.length,
    path: new PathScratch(compiled.groupNames.length),
    rng: new SampleStream(),
    words: new Uint32Array(4),
    jitter: new Float64Array(2),
    lens: new Float64Array(2),
    cameraSample: new Float64Array(CAMERA_SAMPLE_LENGTH),
  };
}

/** Check a unit against the image and the pass headroom; throws a message naming the bad field. */
export function checkUnit(compiled: CompiledScene, u: RenderUnit): void {
  const ints = [u.x0, u.y0, u.x1, u.y1, u.passStart, u.passEnd];
  if (!ints.every((v) => Number.isInteger(v))) throw new Error("render unit: x0, y0, x1, y1, passStart, passEnd must be integers");
  if (u.x0 < 0 || u.y0 < 0 || u.x1 > compiled.width || u.y1 > compiled.height || u.x1 <= u.x0 || u.y1 <= u.y0) {
    throw new Error(`render unit: tile [${u.x0},${u.y0})–[${u.x1},${u.y1}) is empty or outside the ${compiled.width}×${compiled.height} image`);
  }
  if (u.passStart < 0 || u.passEnd <= u.passStart || u.passEnd > 0xffffffff) {
    throw new Error(`render unit: pass range [${u.passStart}, ${u.passEnd}) is empty or out of range`);
  }
}

/**
 * Film position of pass `pass` in pixel `pixel`: multi-jittered over the scene's spp passes (each
 * pass its own stratum; passes beyond spp start a fresh pattern), written to out[0..1] in [0,1)².
 */
export function pixelJitter(compiled: CompiledScene, pixel: number, pass: number, words: Uint32Array, out: Float64Array): void {
  const n = compiled.spp;
  const round = Math.floor(pass / n);
  const s = pass - round * n;
  pcg4d(pixel | 0, round | 0, 0, compiled.seed ^ SALT_PIXEL_PATTERN, words);
  const { m, k } = cmjGrid(n);
  cmj(s, m, k, words[0] | 0, out);
}

export function renderUnit(compiled: CompiledScene, unit: RenderUnit, scratch?: RenderScratch): UnitResult {
  checkUnit(compiled, unit);
  const sc = scratch && scratch.groupCount === compiled.groupNames.length ? scratch : createRenderScratch(compiled);
  const { x0, y0, x1, y1, passStart, passEnd } = unit;
  const tw = x1 - x0;
  const th = y1 - y0;
  const G = sc.groupCount;
  const sums = new Float64Array(tw * th * G * 3);
  const sq = new Float64Array(tw * th * 2);
  const rng = sc.rng;
  const words = sc.words;
  const jitter = sc.jitter;
  const groups = sc.path.groups;
  const W = compiled.width;
  const H = compiled.height;
  const cam = compiled.camera;
  const ray = sc.path.ray;
  const cs = sc.cameraSample;
  // Hash inputs go in as int32 (`| 0`), not uint32 (`>>> 0`): the hashes read them as 32-bit words either
  // way, and an int32 is never boxed when passed to a call V8 does not inline.
  const patternSeed = compiled.seed ^ SALT_PIXEL_PATTERN;
  const limit = compiled.clamp > 0 ? Math.min(compiled.clamp, QUANT_MAX_RADIANCE) : QUANT_MAX_RADIANCE;
  const { m, k } = cmjGrid(compiled.spp);
  for (let pass = passStart; pass < passEnd; pass++) {
    const round = Math.floor(pass / compiled.spp);
    const s = pass - round * compiled.spp;
    for (let y = y0; y < y1; y++) {
      for (let x = x0; x < x1; x++) {
        const pixel = y * W + x;
        pcg4d(pixel, round | 0, 0, patternSeed, words);
        cmj(s, m, k, words[0] | 0, jitter);
        rng.start(compiled.seed, pixel, pass);
        cs[0] = x + jitter[0];
        cs[1] = y + jitter[1];
        rng.nextInto(cs, 2);
        rng.nextInto(cs, 3);
        rng.nextInto(cs, 4);
        generateRay(cam, W, H, cs, sc.lens, ray);
        radiance(compiled, sc.path, rng, false);
        clampSample(groups, G, limit);
        rng.reserved(SALT_QUANTISE, words);
        const t = (y - y0) * tw + (x - x0);
        quantiseInto(groups, G, words, sums, t * G * 3, sq, t * 2);
      }
    }
  }
  return { unit: { x0, y0, x1, y1, passStart, passEnd }, sums, sq, samples: passEnd - passStart };
}

/** Clamp each channel of the sample's beauty (sum of groups) to `limit`, scaling the groups alike so the beauty stays their sum. */
function clampSample(groups: Float64Array, G: number, limit: number): void {
  for (let c = 0; c < 3; c++) {
    let sum = 0;
    for (let g = 0; g < G; g++) {
      const v = groups[g * 3 + c];
      if (!(v >= 0) || v === Infinity) groups[g * 3 + c] = 0; // NaN/negative/inf samples carry no usable light
      else sum += v;
    }
    if (sum > limit) {
      const k = limit / sum;
      for (let g = 0; g < G; g++) groups[g * 3 + c] *= k;
    }
  }
}
