/**
 * Closest hits for a large batch of rays traced together as a stream (breadth-first over rays,
 * depth-first over the tree), used by `intersectRays` for big batches.
 *
 * Rays come in an order that keeps each direction octant contiguous (see batch.ts). A chunk of
 * rays sharing one octant walks the tree together: at every node, one tight loop tests the node's
 * box against each ray still active there and compacts the survivors into a new list; interior
 * nodes pass that list to both children, near child first (for one octant the near side of a split
 * plane is the same for every ray), and a leaf tests each of its triangles against the whole list.
 * The far child is tested only after the near subtree is done, with every ray's closest hit so far
 * as its far bound, so rays that already hit something nearer drop out there.
 *
 * The work per ray and node is the same box test as the single-ray loop in traverse.ts, but the
 * iterations of the inner loops are independent (no pointer chase from one node to the next within
 * a ray), and the per-node bookkeeping is paid once per chunk instead of once per ray. Measured
 * against the single-ray loop on the same sorted rays (CPU time, interleaved): 1.25–1.35× the rays
 * per second on the 3.7k-triangle bunny, 1.1–1.15× on 59k triangles, about equal on 941k.
 *
 * Each ray's result depends only on that ray: the nodes it visits and the order of its leaves
 * follow from its own box tests and its octant, never from the other rays in its chunk.
 */
import { TRAVERSAL_STACK_SIZE } from "./layout";
import type { TriangleBvh } from "./traverse";

/** Rays per chunk: large enough to pay for each node's bookkeeping, small enough to stay in cache. */
const CHUNK = 16384;
/** Doubles per ray record: ix iy iz ox·ix oy·iy oz·iz tmin best | ox oy oz dx dy dz u v. */
const REC = 16;

/**
 * Scratch, allocated on first use and then reused: ray records, the slot of each ray's closest
 * triangle, the active-ray lists (one per level of the current path, each at most CHUNK long) and
 * the node stack.
 */
let records = new Float64Array(0);
let slots = new Int32Array(0);
let lists = new Int32Array(0);
const stackNode = new Int32Array(TRAVERSAL_STACK_SIZE * 2);
const stackStart = new Int32Array(TRAVERSAL_STACK_SIZE * 2);
const stackCount = new Int32Array(TRAVERSAL_STACK_SIZE * 2);

function ensureScratch(): void {
  if (records.length > 0) return;
  records = new Float64Array(CHUNK * REC);
  slots = new Int32Array(CHUNK);
  lists = new Int32Array(CHUNK * (TRAVERSAL_STACK_SIZE + 2));
}

/** Same as traverse.ts: 1/d, finite for d = 0 so slab distances never become ∞ − ∞. */
function inverse(d: number): number {
  const a = 1 / d;
  return a < 1e30 && a > -1e30 ? a : d < 0 ? -1e30 : 1e30;
}

function octantOf(rays: Float32Array, ray: number): number {
  const r = ray * 8;
  return (rays[r + 3]! < 0 ? 1 : 0) | (rays[r + 4]! < 0 ? 2 : 0) | (rays[r + 5]! < 0 ? 4 : 0);
}

/**
 * Closest hit for rays order[0..n), where `order` keeps each direction octant contiguous.
 * Writes t,u,v,triangle at each ray's own index exactly like closestHitBatch; returns the hits.
 */
export function closestHitStream(tb: TriangleBvh, rays: Float32Array, order: Uint32Array, n: number, out: Float32Array): number {
  ensureScratch();
  let hits = 0;
  let i = 0;
  while (i < n) {
    const octant = octantOf(rays, order[i]!);
    let j = i + 1;
    while (j < n && j - i < CHUNK && octantOf(rays, order[j]!) === octant) j++;
    loadRecords(rays, order, i, j - i);
    traceChunk(tb, octant, j - i);
    hits += storeResults(tb, order, i, j - i, out);
    i = j;
  }
  return hits;
}

function loadRecords(rays: Float32Array, order: Uint32Array, begin: number, m: number): void {
  const R = records;
  for (let k = 0; k < m; k++) {
    const ro = order[begin + k]! * 8, q = k * REC;
    const ox = rays[ro]!, oy = rays[ro + 1]!, oz = rays[ro + 2]!, dx = rays[ro + 3]!, dy = rays[ro + 4]!, dz = rays[ro + 5]!;
    const ix = inverse(dx), iy = inverse(dy), iz = inverse(dz);
    R[q] = ix; R[q + 1] = iy; R[q + 2] = iz;
    R[q + 3] = ox * ix; R[q + 4] = oy * iy; R[q + 5] = oz * iz;
    R[q + 6] = rays[ro + 6]!; R[q + 7] = rays[ro + 7]!;
    R[q + 8] = ox; R[q + 9] = oy; R[q + 10] = oz; R[q + 11] = dx; R[q + 12] = dy; R[q + 13] = dz;
    R[q + 14] = 0; R[q + 15] = 0;
    slots[k] = -1;
  }
}

function traceChunk(tb: TriangleBvh, octant: number, m: number): void {
  const nodes = tb.bvh.nodes, words = tb.bvh.words, tris = tb.tris;
  // Near and far slab offsets, the same for every ray of the octant.
  const nxo = octant & 1 ? 3 : 0, nyo = octant & 2 ? 4 : 1, nzo = octant & 4 ? 5 : 2;
  const fxo = 3 - nxo, fyo = 5 - nyo, fzo = 7 - nzo;
  for (let k = 0; k < m; k++) lists[k] = k;
  // A stack entry is a node still to be tested against its parent's list.
  stackNode[0] = 0; stackStart[0] = 0; stackCount[0] = m;
  let sp = 1;
  while (sp > 0) {
    sp--;
    const node = stackNode[sp]!, from = stackStart[sp]!, count = stackCount[sp]!;
    // Lists above the parent's belong to subtrees already finished: reuse their space.
    const start = from + count;
    const o = node << 3;
    const end = filterRays(nodes[o + nxo]!, nodes[o + nyo]!, nodes[o + nzo]!, nodes[o + fxo]!, nodes[o + fyo]!, nodes[o + fzo]!, from, start);
    if (end === start) continue;
    const meta = words[o + 7]!;
    if (meta < 4) {
      const negative = (octant >> (meta & 3)) & 1;
      const left = node + 1, right = words[o + 6]!;
      stackNode[sp] = negative ? left : right; stackStart[sp] = start; stackCount[sp] = end - start; sp++;
      stackNode[sp] = negative ? right : left; stackStart[sp] = start; stackCount[sp] = end - start; sp++;
    } else {
      const first = words[o + 6]!, last = first + (meta >>> 2);
      for (let t = first; t < last; t++) triangleAgainstList(tris, t, start, end);
    }
  }
}

/** Appends to lists[to..] every ray of lists[from..to) whose interval meets the box; returns the new end. */
function filterRays(bx0: number, by0: number, bz0: number, bx1: number, by1: number, bz1: number, from: number, to: number): number {
  const L = lists, R = records;
  let top = to;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r * REC;
    const ix = R[q]!, iy = R[q + 1]!, iz = R[q + 2]!, ox = R[q + 3]!, oy = R[q + 4]!, oz = R[q + 5]!;
    const e = Math.max(bx0 * ix - ox, by0 * iy - oy, bz0 * iz - oz, R[q + 6]!);
    const x = Math.min(bx1 * ix - ox, by1 * iy - oy, bz1 * iz - oz, R[q + 7]!);
    // Written unconditionally, kept only on a hit: no unpredictable branch in the loop.
    L[top] = r;
    top += +(e <= x);
  }
  return top;
}

/** Möller–Trumbore (1997), double-sided, of triangle slot `t` against every ray of lists[from..to). */
function triangleAgainstList(tris: Float32Array, t: number, from: number, to: number): void {
  const L = lists, R = records, q9 = t * 9;
  const vx = tris[q9]!, vy = tris[q9 + 1]!, vz = tris[q9 + 2]!;
  const e1x = tris[q9 + 3]!, e1y = tris[q9 + 4]!, e1z = tris[q9 + 5]!;
  const e2x = tris[q9 + 6]!, e2y = tris[q9 + 7]!, e2z = tris[q9 + 8]!;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r * REC;
    const dx = R[q + 11]!, dy = R[q + 12]!, dz = R[q + 13]!;
    const px = dy * e2z - dz * e2y, py = dz * e2x - dx * e2z, pz = dx * e2y - dy * e2x;
    const det = e1x * px + e1y * py + e1z * pz;
    if (det === 0) continue;
    const inv = 1 / det;
    const sx = R[q + 8]! - vx, sy = R[q + 9]! - vy, sz = R[q + 10]! - vz;
    const u = (sx * px + sy * py + sz * pz) * inv;
    if (u < 0 || u > 1) continue;
    const qx = sy * e1z - sz * e1y, qy = sz * e1x - sx * e1z, qz = sx * e1y - sy * e1x;
    const v = (dx * qx + dy * qy + dz * qz) * inv;
    if (v < 0 || u + v > 1) continue;
    const hit = (e2x * qx + e2y * qy + e2z * qz) * inv;
    if (hit > R[q + 6]! && hit < R[q + 7]!) { R[q + 7] = hit; R[q + 14] = u; R[q + 15] = v; slots[r] = t; }
  }
}

function storeResults(tb: TriangleBvh, order: Uint32Array, begin: number, m: number, out: Float32Array): number {
  const R = records, prim = tb.bvh.primIndices;
  let hits = 0;
  for (let k = 0; k < m; k++) {
    const offset = order[begin + k]! * 4, slot = slots[k]!, q = k * REC;
    if (slot < 0) { out[offset] = Infinity; out[offset + 1] = 0; out[offset + 2] = 0; out[offset + 3] = -1; }
    else { out[offset] = R[q + 7]!; out[offset + 1] = R[q + 14]!; out[offset + 2] = R[q + 15]!; out[offset + 3] = prim[slot]!; hits++; }
  }
  return hits;
}
