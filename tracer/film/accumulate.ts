/**
 * Exact, order-independent accumulation of samples.
 *
 * Floating-point addition is not associative, so summing radiance as floats would make the result depend on
 * how passes were split between workers and in which order units arrived. Instead every sample's radiance
 * is quantised to a fixed-point integer and integers are summed; integer sums below 2^53 are exact in a
 * float64, so any split and order of units gives bit-identical buffers.
 *
 * Scale and headroom:
 * - QUANT_SCALE = 2^12: one radiance unit is 4096 integer steps. Quantisation uses stochastic rounding
 *   (floor(x·S + u), u uniform from the sample's own counter-based random numbers), which is unbiased, so
 *   even a constant radiance far below one step averages to the right value; it adds at most
 *   1/(2·4096) ≈ 1.2e-4 of noise per sample, which averages away like the rest of the Monte Carlo noise.
 * - Each sample is clamped to QUANT_MAX_RADIANCE = 2^19 per channel (beauty; groups are scaled down with
 *   it) before quantising, so one quantised value is ≤ 2^31.
 * - A pixel may accumulate at most MAX_PASSES_PER_PIXEL = 2^22 passes (64 × the largest spp a scene may
 *   ask for), so a per-pixel sum is ≤ 2^22 · 2^31 = 2^53: exact in a float64, never overflowing.
 * - Variance: per pixel we sum the square of the sample's quantised luminance Yq ≤ 2^31. Squares reach
 *   2^62, beyond float64's exact range, so the sum of squares is kept as two float64 words (hi·2^32 + lo,
 *   lo < 2^32, carried after every add: hi ≤ 2^22 · 2^30 + carries < 2^53).
 */
import { luminance } from "../math/sampling";
import type { FloatImage } from "../io/image";

export const QUANT_SCALE = 4096;
export const QUANT_MAX_RADIANCE = 524288;
export const MAX_PASSES_PER_PIXEL = 4194304;
export const MAX_QUANTISED = QUANT_MAX_RADIANCE * QUANT_SCALE; // 2^31
const TWO_32 = 4294967296;

export type RenderUnit = { x0: number; y0: number; x1: number; y1: number; passStart: number; passEnd: number };

/** The exact integer sums of one unit: `sums` holds groups×3 per tile pixel (row-major, tile row 0 first), `sq` holds [hi, lo] per tile pixel. */
export type UnitResult = { unit: RenderUnit; sums: Float64Array; sq: Float64Array; samples: number };

export type Accumulation = {
  width: number;
  height: number;
  groupCount: number;
  /** groupCount×3 integer sums per pixel */
  sums: Float64Array;
  /** [hi, lo] sum of squared quantised luminance per pixel */
  sq: Float64Array;
  /** passes accumulated per pixel */
  counts: Float64Array;
};

export function createAccumulation(width: number, height: number, groupCount: number): Accumulation {
  if (!(width >= 1 && height >= 1 && groupCount >= 1)) {
    throw new Error(`accumulation: width, height and groupCount must be ≥ 1 (got ${width}×${height}, ${groupCount} groups)`);
  }
  const n = width * height;
  return {
    width,
    height,
    groupCount,
    sums: new Float64Array(n * groupCount * 3),
    sq: new Float64Array(n * 2),
    counts: new Float64Array(n),
  };
}

/** Sample quantiser used by renderUnit: adds one sample's per-group radiance to a unit's integer sums. */
export function quantiseInto(
  groupRgb: Float64Array,
  groupCount: number,
  dither: Uint32Array,
  sums: Float64Array,
  sumBase: number,
  sq: Float64Array,
  sqBase: number,
): void {
  let qr = 0;
  let qg = 0;
  let qb = 0;
  const n3 = groupCount * 3;
  for (let i = 0; i < n3; i++) {
    // negative, NaN → 0. One expression, not a variable reassigned with integer constants: V8 kept such a
    // variable as a tagged value and boxed every double it held (one heap number per value quantised).
    const x0 = groupRgb[i];
    const x = x0 > 0 ? Math.min(x0, QUANT_MAX_RADIANCE) : 0;
    // 16 bits of dither per value: two values per uint32 word of the reserved random block
    const word = dither[(i >>> 1) & 3];
    const u = ((i & 1) === 0 ? word & 0xffff : word >>> 16) * (1 / 65536);
    const q = Math.floor(x * QUANT_SCALE + u);
    sums[sumBase + i] += q;
    const c = i % 3;
    if (c === 0) qr += q;
    else if (c === 1) qg += q;
    else qb += q;
  }
  let y = Math.round(luminance(qr, qg, qb));
  if (y > MAX_QUANTISED) y = MAX_QUANTISED;
  // y² = a²·2^32 + 2ab·2^16 + b² with y = a·2^16 + b, every piece exact in float64
  const a = Math.floor(y / 65536);
  const b = y - a * 65536;
  const c2 = 2 * a * b;
  const cHi = Math.floor(c2 / 65536);
  let hi = sq[sqBase] + a * a + cHi;
  let lo = sq[sqBase + 1] + (c2 - cHi * 65536) * 65536 + b * b;
  const carry = Math.floor(lo / TWO_32);
  lo -= carry * TWO_32;
  hi += carry;
  sq[sqBase] = hi;
  sq[sqBase + 1] = lo;
}

/** Add one unit's sums into the accumulation (integer adds: exact, order-independent). */
export function addUnit(acc: Accumulation, r: UnitResult): void {
  const { x0, y0, x1, y1 } = r.unit;
  if (x0 < 0 || y0 < 0 || x1 > acc.width || y1 > acc.height || x1 <= x0 || y1 <= y0) {
    throw new Error(`addUnit: tile [${x0},${y0})–[${x1},${y1}) lies outside the ${acc.width}×${acc.height} image`);
  }
  const tw = x1 - x0;
  const g3 = acc.groupCount * 3;
  if (r.sums.length !== tw * (y1 - y0) * g3 || r.sq.length !== tw * (y1 - y0) * 2) {
    throw new Error("addUnit: unit result size does not match its tile and the accumulation's group count");
  }
  for (let y = y0; y < y1; y++) {
    for (let x = x0; x < x1; x++) {
      const p = y * acc.width + x;
      const t = (y - y0) * tw + (x - x0);
      if (acc.counts[p] + r.samples > MAX_PASSES_PER_PIXEL) {
        throw new Error(`addUnit: pixel (${x},${y}) would exceed ${MAX_PASSES_PER_PIXEL} passes, the exact-sum headroom`);
      }
      acc.counts[p] += r.samples;
      const sb = p * g3;
      const tb = t * g3;
      for (let i = 0; i < g3; i++) acc.sums[sb + i] += r.sums[tb + i];
      addWide(acc.sq, p * 2, r.sq[t * 2], r.sq[t * 2 + 1]);
    }
  }
}

function addWide(dst: Float64Array, i: number, hi: number, lo: number): void {
  let l = dst[i + 1] + lo;
  let h = dst[i] + hi;
  const carry = Math.floor(l / TWO_32);
  l -= carry * TWO_32;
  h += carry;
  dst[i] = h;
  dst[i + 1] = l;
}

/** a + b as a new accumulation (both must have the same size and group count). */
export function mergeAccumulations(a: Accumulation, b: Accumulation): Accumulation {
  if (a.width !== b.width || a.height !== b.height || a.groupCount !== b.groupCount) {
    throw new Error("mergeAccumulations: accumulations differ in size or group count");
  }
  const out = createAccumulation(a.width, a.height, a.groupCount);
  const n = a.width * a.height;
  for (let p = 0; p < n; p++) {
    if (a.counts[p] + b.counts[p] > MAX_PASSES_PER_PIXEL) {
      throw new Error(`mergeAccumulations: pixel ${p} would exceed ${MAX_PASSES_PER_PIXEL} passes`);
    }
    out.counts[p] = a.counts[p] + b.counts[p];
    out.sq[p * 2] = a.sq[p * 2];
    out.sq[p * 2 + 1] = a.sq[p * 2 + 1];
    addWide(out.sq, p * 2, b.sq[p * 2], b.sq[p * 2 + 1]);
  }
  for (let i = 0; i < a.sums.length; i++) out.sums[i] = a.sums[i] + b.sums[i];
  return out;
}

function resolve(acc: Accumulation, group: number): FloatImage {
  const { width, height, groupCount } = acc;
  const data = new Float32Array(width * height * 3);
  const g3 = groupCount * 3;
  for (let p = 0; p < width * height; p++) {
    const n = acc.counts[p];
    if (n === 0) continue;
    const k = 1 / (n * QUANT_SCALE);
    for (let c = 0; c < 3; c++) {
      let s = 0;
      if (group < 0) for (let g = 0; g < groupCount; g++) s += acc.sums[p * g3 + g * 3 + c];
      else s = acc.sums[p * g3 + group * 3 + c];
      data[p * 3 + c] = s * k;
    }
  }
  return { width, height, data };
}

/** Mean radiance per pixel, summed over all groups (row 0 = top). */
export function resolveBeauty(acc: Accumulation): FloatImage {
  return resolve(acc, -1);
}

/** Mean radiance per pixel of one light group. */
export function resolveGroup(acc: Accumulation, group: number): FloatImage {
  if (!(group >= 0 && group < acc.groupCount)) throw new Error(`resolveGroup: no group ${group}`);
  return resolve(acc, group);
}

/** Per-pixel sample variance of luminance (radiance units², unbiased; 0 where fewer than 2 passes). */
export function pixelVariance(acc: Accumulation, out?: Float32Array): Float32Array {
  const n = acc.width * acc.height;
  const res = out ?? new Float32Array(n);
  const g3 = acc.groupCount * 3;
  for (let p = 0; p < n; p++) {
    const c = acc.counts[p];
    if (c < 2) {
      res[p] = 0;
      continue;
    }
    let r = 0;
    let g = 0;
    let b = 0;
    for (let k = 0; k < acc.groupCount; k++) {
      r += acc.sums[p * g3 + k * 3];
      g += acc.sums[p * g3 + k * 3 + 1];
      b += acc.sums[p * g3 + k * 3 + 2];
    }
    const sumY = luminance(r, g, b);
    const sumSq = acc.sq[p * 2] * TWO_32 + acc.sq[p * 2 + 1];
    const v = (sumSq - (sumY * sumY) / c) / (c - 1);
    res[p] = v > 0 ? v / (QUANT_SCALE * QUANT_SCALE) : 0;
  }
  return res;
}

/**
 * A single noise figure for progress displays: the root mean square, over pixels, of each pixel's standard
 * error of the mean divided by its mean luminance. Means are floored at 1% of the image's average
 * luminance so black pixels do not dominate. Infinity when no pixel has 2 passes yet.
 */
export function relativeStdError(acc: Accumulation): number {
  const n = acc.width * acc.height;
  const varY = pixelVariance(acc);
  const g3 = acc.groupCount * 3;
  const means = new Float64Array(n);
  let total = 0;
  let counted = 0;
  for (let p = 0; p < n; p++) {
    const c = acc.counts[p];
    if (c < 2) continue;
    let r = 0;
    let g = 0;
    let b = 0;
    for (let k = 0; k < acc.groupCount; k++) {
      r += acc.sums[p * g3 + k * 3];
      g += acc.sums[p * g3 + k * 3 + 1];
      b += acc.sums[p * g3 + k * 3 + 2];
    }
    means[p] = luminance(r, g, b) / (c * QUANT_SCALE);
    total += means[p];
    counted++;
  }
  if (counted === 0) return Infinity;
  const floor = Math.max(1e-12, (0.01 * total) / counted);
  let s = 0;
  for (let p = 0; p < n; p++) {
    const c = acc.counts[p];
    if (c < 2) continue;
    const se2 = varY[p] / c;
    const m = Math.max(means[p], floor);
    s += se2 / (m * m);
  }
  return Math.sqrt(s / counted);
}

// ---------------------------------------------------------------------------------------------------------
// Hash: 64-bit FNV-1a (Fowler–Noll–Vo; offset basis 0xcbf29ce484222325, prime 2^40 + 0x1b3) over the
// little-endian bytes of every integer of the header, counts, sums and sums of squares. Written with four
// 16-bit limbs so it is pure TypeScript with no BigInt.

export class Fnv1a64 {
  private h0 = 0x2325;
  private h1 = 0x8422;
  private h2 = 0x9ce4;
  private h3 = 0xcbf2;

  byte(v: number): void {
    this.h0 ^= v & 0xff;
    const t0 = this.h0 * 0x1b3;
    let t1 = this.h1 * 0x1b3;
    let t2 = this.h2 * 0x1b3 + (this.h0 << 8);
    let t3 = this.h3 * 0x1b3 + (this.h1 << 8);
    t1 += t0 >>> 16;
    t2 += t1 >>> 16;
    t3 += t2 >>> 16;
    this.h0 = t0 & 0xffff;
    this.h1 = t1 & 0xffff;
    this.h2 = t2 & 0xffff;
    this.h3 = t3 & 0xffff;
  }

  uint32(v: number): void {
    this.byte(v);
    this.byte(v >>> 8);
    this.byte(v >>> 16);
    this.byte(v >>> 24);
  }

  /** A non-negative integer < 2^64 held exactly in a float64, as 8 little-endian bytes. */
  integer(v: number): void {
    const hi = Math.floor(v / TWO_32);
    this.uint32(v - hi * TWO_32);
    this.uint32(hi);
  }

  bytes(b: Uint8Array): void {
    for (let i = 0; i < b.length; i++) this.byte(b[i]);
  }

  hex(): string {
    const h = (x: number) => x.toString(16).padStart(4, "0");
    return h(this.h3) + h(this.h2) + h(this.h1) + h(this.h0);
  }
}

/** Hash of the exact integer buffers; equal hashes ⇔ (with overwhelming probability) bit-identical renders. */
export function accumulationHash(acc: Accumulation): string {
  const f = new Fnv1a64();
  f.uint32(acc.width);
  f.uint32(acc.height);
  f.uint32(acc.groupCount);
  for (let i = 0; i < acc.counts.length; i++) f.integer(acc.counts[i]);
  for (let i = 0; i < acc.sums.length; i++) f.integer(acc.sums[i]);
  for (let i = 0; i < acc.sq.length; i++) f.integer(acc.sq[i]);
  return "fnv1a64:" + f.hex();
}

// ---------------------------------------------------------------------------------------------------------
// Serialisation (continue-from-state, storage). Layout, little-endian:
//   bytes 0..7  magic "TWACC\x00\x00\x01" (format 1)
//   uint32 width, uint32 height, uint32 groupCount, uint32 reserved (0)
//   float64 counts[w·h], float64 sums[w·h·groups·3], float64 sq[w·h·2]

const MAGIC = [0x54, 0x57, 0x41, 0x43, 0x43, 0, 0, 1];

export function serializeAccumulation(acc: Accumulation): Uint8Array {
  const n = acc.width * acc.height;
  const values = n + acc.sums.length + acc.sq.length;
  const buf = new ArrayBuffer(24 + values * 8);
  const dv = new DataView(buf);
  const bytes = new Uint8Array(buf);
  bytes.set(MAGIC, 0);
  dv.setUint32(8, acc.width, true);
  dv.setUint32(12, acc.height, true);
  dv.setUint32(16, acc.groupCount, true);
  dv.setUint32(20, 0, true);
  let o = 24;
  for (const arr of [acc.counts, acc.sums, acc.sq]) {
    for (let i = 0; i < arr.length; i++, o += 8) dv.setFloat64(o, arr[i], true);
  }
  return bytes;
}

export function deserializeAccumulation(bytes: Uint8Array): Accumulation {
  if (bytes.length < 24) throw new Error(`accumulation state: ${bytes.length} bytes is too short for the 24-byte header`);
  for (let i = 0; i < MAGIC.length; i++) {
    if (bytes[i] !== MAGIC[i]) throw new Error(`accumulation state: byte ${i} does not match the format-1 magic`);
  }
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const width = dv.getUint32(8, true);
  const height = dv.getUint32(12, true);
  const groupCount = dv.getUint32(16, true);
  if (width < 1 || height < 1 || groupCount < 1 || width * height > 8192 * 8192 || groupCount > 4096) {
    throw new Error(`accumulation state: bad header (width ${width}, height ${height}, groups ${groupCount}) at byte 8`);
  }
  const acc = createAccumulation(width, height, groupCount);
  const expected = 24 + (acc.counts.length + acc.sums.length + acc.sq.length) * 8;
  if (bytes.length !== expected) {
    throw new Error(`accumulation state: expected ${expected} bytes for ${width}×${height}×${groupCount} groups, got ${bytes.length}`);
  }
  let o = 24;
  for (const arr of [acc.counts, acc.sums, acc.sq]) {
    for (let i = 0; i < arr.length; i++, o += 8) {
      const v = dv.getFloat64(o, true);
      if (!(Number.isInteger(v) && v >= 0 && v <= 9007199254740992)) {
        throw new Error(`accumulation state: value at byte ${o} is not a non-negative integer`);
      }
      arr[i] = v;
    }
  }
  return acc;
}
