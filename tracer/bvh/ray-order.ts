/**
 * Ray order for the batch stream: large batches are sorted so neighbours come together (direction
 * octant, then a Morton code of the origin), and each octant's run is handed to the stream whole.
 */

/**
 * Reused between calls (grown, never shrunk): ray order and the radix sort's keys. The query is
 * single-threaded per module instance.
 */
let order = new Uint32Array(0), orderTmp = new Uint32Array(0), keys = new Uint32Array(0), keysTmp = new Uint32Array(0);
const counts = new Int32Array(4096);
const originBox = new Float64Array(6);

function ensureCapacity(n: number): void {
  if (order.length >= n) return;
  const size = Math.max(n, order.length * 2);
  order = new Uint32Array(size); orderTmp = new Uint32Array(size); keys = new Uint32Array(size); keysTmp = new Uint32Array(size);
}

/** Rays 0..n in their given order (a view of the shared scratch, valid until the next call). */
export function identityRayOrder(n: number): Uint32Array {
  ensureCapacity(n);
  identityOrder(order, n);
  return order;
}

/**
 * Sorts rays 0..n by direction octant, then by a Morton code of the origin. Returns the ray order
 * and each sorted ray's octant (bit 0/1/2 set for a negative x/y/z direction); both are views of
 * shared scratch, valid until the next call.
 */
export function sortRays(rays: Float32Array, n: number): { order: Uint32Array; octants: Uint32Array } {
  ensureCapacity(n);
  originBounds(rays, n, originBox);
  rayKeys(rays, n, originBox, keys);
  // Least-significant-digit radix sort of the 21-bit keys, 11 bits per pass (2 passes end in `order`).
  digitCounts(keys, n, counts);
  firstPass(keys, keysTmp, orderTmp, n, counts);
  secondPass(keysTmp, orderTmp, keys, order, n, counts);
  keyOctants(keys, n);
  return { order, octants: keys };
}

function identityOrder(o: Uint32Array, n: number): void {
  for (let i = 0; i < n; i++) o[i] = i;
}

function originBounds(rays: Float32Array, n: number, box: Float64Array): void {
  let x0 = Infinity, y0 = Infinity, z0 = Infinity, x1 = -Infinity, y1 = -Infinity, z1 = -Infinity;
  for (let i = 0; i < n; i++) {
    const x = rays[i * 8]!, y = rays[i * 8 + 1]!, z = rays[i * 8 + 2]!;
    if (x < x0) x0 = x; if (x > x1) x1 = x;
    if (y < y0) y0 = y; if (y > y1) y1 = y;
    if (z < z0) z0 = z; if (z > z1) z1 = z;
  }
  box[0] = x0; box[1] = y0; box[2] = z0; box[3] = x1; box[4] = y1; box[5] = z1;
}

/** 6 bits spread to every third bit (Morton code, common practice). */
function spread6(v: number): number {
  v = (v | (v << 8)) & 0x0000f00f;
  v = (v | (v << 4)) & 0x000c30c3;
  return (v | (v << 2)) & 0x00249249;
}

/**
 * Key = direction octant (3 bits) above an 18-bit Morton code of the origin in a 64³ grid over the
 * origins' box. A finer grid (512³) measured no faster for the traversal and costs a third sort pass.
 */
function rayKeys(rays: Float32Array, n: number, box: Float64Array, out: Uint32Array): void {
  const x0 = box[0]!, y0 = box[1]!, z0 = box[2]!;
  const ex = box[3]! - x0, ey = box[4]! - y0, ez = box[5]! - z0;
  // 63.99 so the maximum maps to 63; a flat or non-finite extent maps everything to cell 0.
  const sx = ex > 0 && ex < Infinity ? 63.99 / ex : 0, sy = ey > 0 && ey < Infinity ? 63.99 / ey : 0, sz = ez > 0 && ez < Infinity ? 63.99 / ez : 0;
  for (let i = 0; i < n; i++) {
    const r = i * 8;
    // `| 0` then `& 63` is the same ToInt32 as `& 63` alone, and the sign bits come from comparisons
    // instead of conditional expressions: no branch on the incoherent directions (about half the
    // time of the conditional form).
    const qx = ((rays[r]! - x0) * sx) | 0, qy = ((rays[r + 1]! - y0) * sy) | 0, qz = ((rays[r + 2]! - z0) * sz) | 0;
    const octant = +(rays[r + 3]! < 0) | (+(rays[r + 4]! < 0) << 1) | (+(rays[r + 5]! < 0) << 2);
    out[i] = (octant << 18) | spread6(qx & 63) | (spread6(qy & 63) << 1) | (spread6(qz & 63) << 2);
  }
}

/** Sorted keys → their octants, so the stream finds each octant's run without reading the rays again. */
function keyOctants(k: Uint32Array, n: number): void {
  for (let i = 0; i < n; i++) k[i] = k[i]! >>> 18;
}

/**
 * Both digits' counts in one read of the keys, turned into start offsets: count[0..2048) for bits
 * 0..10, count[2048..4096) for bits 11..21.
 */
function digitCounts(k: Uint32Array, n: number, count: Int32Array): void {
  count.fill(0);
  for (let i = 0; i < n; i++) {
    const key = k[i]!;
    count[key & 2047]++;
    count[2048 + (key >>> 11)]++;
  }
  let low = 0, high = 0;
  for (let b = 0; b < 2048; b++) {
    const a = count[b]!, c = count[2048 + b]!;
    count[b] = low; count[2048 + b] = high;
    low += a; high += c;
  }
}

/** Stable counting-sort pass on bits 0..10; the ray order starts as the identity, so it is i. */
function firstPass(keyIn: Uint32Array, keyOut: Uint32Array, idxOut: Uint32Array, n: number, count: Int32Array): void {
  for (let i = 0; i < n; i++) {
    const k = keyIn[i]!, d = count[k & 2047]++;
    keyOut[d] = k; idxOut[d] = i;
  }
}

/** Stable counting-sort pass on bits 11..21. */
function secondPass(keyIn: Uint32Array, idxIn: Uint32Array, keyOut: Uint32Array, idxOut: Uint32Array, n: number, count: Int32Array): void {
  for (let i = 0; i < n; i++) {
    const k = keyIn[i]!, d = count[2048 + (k >>> 11)]++;
    keyOut[d] = k; idxOut[d] = idxIn[i]!;
  }
}
