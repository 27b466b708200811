/**
 * Ray order for the batch stream: large batches are sorted so neighbours come together (direction
 * octant, then a Morton code of the origin), and each octant's run is handed to the stream whole.
 */

/**
 * Reused between calls (grown, never shrunk): ray order, the sort keys, the sorted octants and the
 * sorted copy of the rays (allocated on the first request). The query is single-threaded per
 * module instance.
 */
let order = new Uint32Array(0), keys = new Uint32Array(0), octants = new Uint32Array(0), sortedRays = new Float32Array(0);
/** Morton bits per axis: a 16³ grid over the origins' box. */
const GRID_BITS = 4;
const MORTON_BITS = 3 * GRID_BITS;
/** One counter per key (3 octant bits above the Morton code): 32768 counters, 128 KiB. */
const counts = new Int32Array(8 << MORTON_BITS);
const originBox = new Float64Array(6);

function ensureCapacity(n: number): void {
  if (order.length >= n) return;
  const size = Math.max(n, order.length * 2);
  order = new Uint32Array(size); keys = new Uint32Array(size); octants = new Uint32Array(size);
}

/** Rays 0..n in their given order (a view of the shared scratch, valid until the next call). */
export function identityRayOrder(n: number): Uint32Array {
  ensureCapacity(n);
  identityOrder(order, n);
  return order;
}

/**
 * Sorts rays 0..n by direction octant, then by a Morton code of the origin in a 16³ grid (stable:
 * rays with the same key keep their given order). Returns the ray order and each sorted ray's
 * octant (bit 0/1/2 set for a negative x/y/z direction) and, with `copyRays`, the rays themselves
 * in that order (8 floats each, else null); all are views of shared scratch, valid until the next
 * call.
 *
 * The 15-bit key takes one counting-sort pass. Against the 64³ grid sorted in two radix passes it
 * measured 1.02–1.035× the rays per CPU second on the 3.7k and 59k bunnies and 0.99–1.01× on the
 * 941k one (8³ and 32³ grids the same within noise): within one chunk the stream's work does not
 * depend on the order, which only groups the chunks of octants larger than a chunk and keeps
 * neighbouring rays' records close.
 *
 * The copy is written while scattering, where the input is read in order and the writes go to
 * scattered places without waiting on them; the stream then reads the rays in sequence instead of
 * gathering them through `order` (closestHitStream's sortedRays: 1.02–1.07× the rays per CPU
 * second on the three bunnies, copy included).
 */
export function sortRays(rays: Float32Array, n: number, copyRays = false): { order: Uint32Array; octants: Uint32Array; rays: Float32Array | null } {
  ensureCapacity(n);
  originBounds(rays, n, originBox);
  counts.fill(0);
  rayKeys(rays, n, originBox, keys, counts);
  startOffsets(counts);
  if (!copyRays) {
    scatter(keys, n, counts, order, octants);
    return { order, octants, rays: null };
  }
  if (sortedRays.length < n * 8) sortedRays = new Float32Array(order.length * 8);
  scatterWithRays(keys, n, counts, order, octants, rays, sortedRays);
  return { order, octants, rays: sortedRays };
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

/** 4 bits spread to every third bit (Morton code, common practice). */
function spread4(v: number): number {
  v = (v | (v << 4)) & 0x0c3;
  return (v | (v << 2)) & 0x249;
}

/**
 * Key = direction octant (3 bits) above a 12-bit Morton code of the origin's cell; counts each key.
 * `| 0` then `& 15` is ToInt32 like `& 15` alone, and the sign bits come from comparisons instead of
 * conditional expressions: no branch on the incoherent directions (about half the time of the
 * conditional form).
 */
function rayKeys(rays: Float32Array, n: number, box: Float64Array, out: Uint32Array, count: Int32Array): void {
  const x0 = box[0]!, y0 = box[1]!, z0 = box[2]!;
  const ex = box[3]! - x0, ey = box[4]! - y0, ez = box[5]! - z0;
  // 15.99 so the maximum maps to 15; a flat or non-finite extent maps everything to cell 0.
  const sx = ex > 0 && ex < Infinity ? 15.99 / ex : 0, sy = ey > 0 && ey < Infinity ? 15.99 / ey : 0, sz = ez > 0 && ez < Infinity ? 15.99 / ez : 0;
  for (let i = 0; i < n; i++) {
    const r = i * 8;
    const qx = ((rays[r]! - x0) * sx) | 0, qy = ((rays[r + 1]! - y0) * sy) | 0, qz = ((rays[r + 2]! - z0) * sz) | 0;
    const octant = +(rays[r + 3]! < 0) | (+(rays[r + 4]! < 0) << 1) | (+(rays[r + 5]! < 0) << 2);
    const key = (octant << MORTON_BITS) | spread4(qx & 15) | (spread4(qy & 15) << 1) | (spread4(qz & 15) << 2);
    out[i] = key;
    count[key]++;
  }
}

/** Key counts → the first sorted position of each key. */
function startOffsets(count: Int32Array): void {
  let sum = 0;
  for (let b = 0; b < count.length; b++) { const c = count[b]!; count[b] = sum; sum += c; }
}

/** Stable counting-sort scatter: ray i goes to the next free position of its key. */
function scatter(k: Uint32Array, n: number, count: Int32Array, orderOut: Uint32Array, octantOut: Uint32Array): void {
  for (let i = 0; i < n; i++) {
    const key = k[i]!, d = count[key]++;
    orderOut[d] = i; octantOut[d] = key >>> MORTON_BITS;
  }
}

/** scatter, also copying each ray's 8 floats to its sorted position. */
function scatterWithRays(k: Uint32Array, n: number, count: Int32Array, orderOut: Uint32Array, octantOut: Uint32Array, rays: Float32Array, raysOut: Float32Array): void {
  for (let i = 0; i < n; i++) {
    const key = k[i]!, d = count[key]++;
    orderOut[d] = i; octantOut[d] = key >>> MORTON_BITS;
    const s = i * 8, t = d * 8;
    raysOut[t] = rays[s]!; raysOut[t + 1] = rays[s + 1]!; raysOut[t + 2] = rays[s + 2]!; raysOut[t + 3] = rays[s + 3]!;
    raysOut[t + 4] = rays[s + 4]!; raysOut[t + 5] = rays[s + 5]!; raysOut[t + 6] = rays[s + 6]!; raysOut[t + 7] = rays[s + 7]!;
  }
}
