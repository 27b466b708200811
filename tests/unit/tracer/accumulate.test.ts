import { describe, expect, it } from "vitest";
import { compiled, renderAll } from "./render-helpers";
import { createRenderScratch, renderUnit, type RenderUnit } from "../../../tracer/render/unit";
import {
  Fnv1a64,
  MAX_PASSES_PER_PIXEL,
  QUANT_SCALE,
  accumulationHash,
  addUnit,
  createAccumulation,
  deserializeAccumulation,
  mergeAccumulations,
  pixelVariance,
  quantiseInto,
  relativeStdError,
  resolveBeauty,
  serializeAccumulation,
} from "../../../tracer/film/accumulate";
import { SALT_QUANTISE, SampleStream } from "../../../tracer/math/rng";

const scene = () =>
  compiled({
    image: { width: 13, height: 9 },
    camera: { position: [0, 1, 4], target: [0, 0.4, 0], fovY: 40, aperture: 0.02, shutter: [0, 1] },
    render: { spp: 12, seed: 99 },
    environment: { type: "sky", zenith: [0.2, 0.3, 0.6], horizon: [0.8, 0.8, 0.9], ground: [0.1, 0.1, 0.1] },
    materials: {
      floor: { type: "diffuse", albedo: [0.7, 0.7, 0.7] },
      gold: { type: "metal", reflectance: [1, 0.8, 0.4], roughness: 0.3 },
      glass: { type: "glass", roughness: 0.1 },
    },
    objects: [
      { id: "floor", shape: { type: "rect", center: [0, 0, 0], u: [10, 0, 0], v: [0, 0, -10] }, material: "floor" },
      { id: "ball", shape: { type: "sphere", center: [-0.6, 0.5, 0], radius: 0.5 }, material: "gold", motion: { velocity: [0.2, 0, 0] } },
      { id: "cube", shape: { type: "box", min: [0.2, 0, -0.4], max: [1.0, 0.8, 0.4] }, material: "glass" },
    ],
    lights: [
      { id: "key", type: "area", shape: { type: "disk", center: [0, 3, 1], normal: [0, -1, 0], radius: 0.5 }, power: 100, group: "key" },
      { id: "bulb", type: "point", position: [2, 2, 2], intensity: [2, 2, 2] },
    ],
  });

function shuffle<T>(a: T[], seed: number): T[] {
  const rng = new SampleStream();
  const out = a.slice();
  for (let i = out.length - 1; i > 0; i--) {
    rng.start(seed, i, 0);
    const j = Math.floor(rng.next() * (i + 1));
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

describe("exact, order-independent accumulation", () => {
  const c = scene();
  const reference = renderAll(c, 0, 12, 64); // one unit covering the image, passes 0..12
  const refHash = accumulationHash(reference);

  it("any tiling, pass split and unit order gives bit-identical buffers and the same hash", () => {
    const units: RenderUnit[] = [];
    // uneven tiles 5×4 and pass ranges [0,5) [5,7) [7,12)
    for (const [p0, p1] of [
      [0, 5],
      [5, 7],
      [7, 12],
    ]) {
      for (let y = 0; y < c.height; y += 4) {
        for (let x = 0; x < c.width; x += 5) units.push({ x0: x, y0: y, x1: Math.min(c.width, x + 5), y1: Math.min(c.height, y + 4), passStart: p0, passEnd: p1 });
      }
    }
    for (const seed of [1, 2, 3]) {
      const acc = createAccumulation(c.width, c.height, c.groupNames.length);
      const scratch = createRenderScratch(c);
      for (const u of shuffle(units, seed)) addUnit(acc, renderUnit(c, u, scratch));
      expect(accumulationHash(acc)).toBe(refHash);
      expect(Array.from(acc.sums)).toEqual(Array.from(reference.sums));
      expect(Array.from(acc.sq)).toEqual(Array.from(reference.sq));
    }
  });

  it("split runs merged ([0, a) then [a, N)) equal one run, and continue-from-state through serialisation equals it too", () => {
    const a = renderAll(c, 0, 4, 7);
    const b = renderAll(c, 4, 12, 3);
    expect(accumulationHash(mergeAccumulations(a, b))).toBe(refHash);
    expect(accumulationHash(mergeAccumulations(b, a))).toBe(refHash);
    const restored = deserializeAccumulation(serializeAccumulation(a));
    expect(accumulationHash(restored)).toBe(accumulationHash(a));
    // continue: add units for the remaining passes to the restored state
    const scratch = createRenderScratch(c);
    addUnit(restored, renderUnit(c, { x0: 0, y0: 0, x1: c.width, y1: c.height, passStart: 4, passEnd: 12 }, scratch));
    expect(accumulationHash(restored)).toBe(refHash);
  });

  it("a fresh scratch, a reused scratch and a recompiled scene give the same unit", () => {
    const u = { x0: 2, y0: 1, x1: 9, y1: 6, passStart: 3, passEnd: 8 };
    const r1 = renderUnit(c, u);
    const scratch = createRenderScratch(c);
    renderUnit(c, { ...u, passStart: 0, passEnd: 2 }, scratch);
    const r2 = renderUnit(c, u, scratch);
    const r3 = renderUnit(scene(), u);
    expect(Array.from(r2.sums)).toEqual(Array.from(r1.sums));
    expect(Array.from(r3.sums)).toEqual(Array.from(r1.sums));
  });

  it("different seeds give different images (the seed reaches every random number)", () => {
    const other = compiled({ image: { width: 4, height: 4 }, camera: { position: [0, 1, 4], target: [0, 0, 0], fovY: 40 }, render: { spp: 4, seed: 1 }, environment: { type: "uniform", radiance: [1, 1, 1] }, materials: { m: { type: "diffuse", albedo: [0.5, 0.5, 0.5] } }, objects: [{ id: "s", shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "m" }] });
    const h1 = accumulationHash(renderAll(other));
    other.seed = 2;
    expect(accumulationHash(renderAll(other))).not.toBe(h1);
  });

  it("quantisation is unbiased: a constant radiance far below one step still averages to itself", () => {
    // stochastic rounding floor(x·S + u) has expectation x·S for u uniform on [0, 1)
    const x = 0.3 / QUANT_SCALE;
    const sums = new Float64Array(3);
    const sq = new Float64Array(2);
    const rgb = new Float64Array([x, x, x]);
    const words = new Uint32Array(4);
    const rng = new SampleStream();
    const n = 200000;
    for (let i = 0; i < n; i++) {
      rng.start(5, 0, i);
      rng.reserved(SALT_QUANTISE, words);
      quantiseInto(rgb, 1, words, sums, 0, sq, 0);
    }
    const mean = sums[0] / n / QUANT_SCALE;
    const se = Math.sqrt(0.3 * 0.7 / n) / QUANT_SCALE; // Bernoulli(0.3) steps
    expect(Math.abs(mean - x)).toBeLessThan(4 * se);
  });

  it("clamps before quantising, so a huge sample cannot overflow; refuses to pass the exact-sum headroom", () => {
    const sums = new Float64Array(3);
    const sq = new Float64Array(2);
    quantiseInto(new Float64Array([1e30, Number.NaN, -5]), 1, new Uint32Array(4), sums, 0, sq, 0);
    expect(sums[0]).toBe(2 ** 31);
    expect(sums[1]).toBe(0);
    expect(sums[2]).toBe(0);
    expect(sq[1]).toBeLessThan(2 ** 32);
    const acc = createAccumulation(1, 1, 1);
    acc.counts[0] = MAX_PASSES_PER_PIXEL;
    expect(() => addUnit(acc, { unit: { x0: 0, y0: 0, x1: 1, y1: 1, passStart: 0, passEnd: 1 }, sums: new Float64Array(3), sq: new Float64Array(2), samples: 1 })).toThrow(/passes/);
  });

  it("the sum of squares is exact beyond 2^53 (hi/lo words) and gives the sample variance", () => {
    // two samples of luminance exactly 2^30 and 0 per quantised unit: variance = (2^30)²/2 in steps²
    const acc = createAccumulation(1, 1, 1);
    const sums = new Float64Array(3);
    const sq = new Float64Array(2);
    const big = 2 ** 30 / QUANT_SCALE;
    quantiseInto(new Float64Array([big, big, big]), 1, new Uint32Array(4), sums, 0, sq, 0);
    quantiseInto(new Float64Array([0, 0, 0]), 1, new Uint32Array(4), sums, 0, sq, 0);
    expect(sq[0] * 2 ** 32 + sq[1]).toBe(2 ** 60);
    addUnit(acc, { unit: { x0: 0, y0: 0, x1: 1, y1: 1, passStart: 0, passEnd: 2 }, sums, sq, samples: 2 });
    const v = pixelVariance(acc)[0];
    expect(v / (big * big / 2)).toBeCloseTo(1, 5);
  });

  it("resolve gives the mean radiance; relative standard error falls as passes accumulate", () => {
    const few = renderAll(c, 0, 4, 64);
    const img = resolveBeauty(reference);
    expect(img.width).toBe(13);
    expect(img.data.every((v) => Number.isFinite(v) && v >= 0)).toBe(true);
    expect(relativeStdError(reference)).toBeLessThan(relativeStdError(few));
  });

  it("rejects corrupted state with the byte offset", () => {
    const bytes = serializeAccumulation(reference);
    expect(() => deserializeAccumulation(bytes.slice(0, 10))).toThrow(/too short/);
    const bad = bytes.slice();
    bad[0] = 0;
    expect(() => deserializeAccumulation(bad)).toThrow(/byte 0/);
    const trunc = bytes.slice(0, bytes.length - 8);
    expect(() => deserializeAccumulation(trunc)).toThrow(/expected/);
  });
});

describe("64-bit FNV-1a", () => {
  it("matches the published test vectors (Fowler–Noll–Vo reference test suite; value from memory)", () => {
    const h = (s: string) => {
      const f = new Fnv1a64();
      f.bytes(new TextEncoder().encode(s));
      return f.hex();
    };
    expect(h("")).toBe("cbf29ce484222325");
    expect(h("a")).toBe("af63dc4c8601ec8c");
    expect(h("foobar")).toBe("85944171f73967e8");
  });
});
