/**
 * Closest hits for a large batch of rays traced together as a stream (breadth-first over rays,
 * depth-first over the tree), used by `intersectRays` for big batches, over a 4-wide tree
 * collapsed from the binary BVH.
 *
 * Rays come in an order that keeps each direction octant contiguous (see ray-order.ts). A chunk of
 * rays sharing one octant walks the tree together: at every wide node, one tight loop tests each
 * ray still active there against the node's two to four child boxes and appends it to the list of
 * every child it hits. Children are then visited in an order fixed per octant (near side of each
 * collapsed split plane first; for one octant that side is the same for every ray), and a leaf
 * tests each of its triangles against its whole list. Box and triangle tests read the ray's
 * closest hit so far, so rays that already hit something nearer drop out of far children. A child
 * reached by only one or two rays is traced below that point one ray at a time, eight such rays
 * interleaved (laneRound).
 *
 * Why it is built this way (each step measured A/B against the previous one on the 3.7k and 59k
 * bunnies, rays per CPU second, interleaved in one process):
 * - The 4-wide tree: each visit tests four child boxes, so the node's bookkeeping and each ray's
 *   record load are paid once per four boxes. A bunny ray makes about 9 wide visits and 35 box
 *   tests (the binary single-ray loop: 14 visits, 28 box tests), yet the stream ran 1.1–1.2×
 *   faster than on the binary tree.
 * - The box and triangle tests are branch-free: V8 compiles `Math.max`/`Math.min` on doubles, and
 *   early `continue`s, to compare-and-jump sequences whose outcome incoherent rays cannot predict.
 *   The slab test is instead the conjunction of the twelve comparisons "every entry plane ≤ every
 *   exit plane" (the three same-axis pairs hold by construction), each compiled to a flag set and
 *   an `&`: 1.2–1.3× already on the binary stream. The triangle test computes u, v and t in full
 *   and branches once on the combined condition: 1.07–1.14×.
 * - Nodes with two or three children have their own loops instead of testing empty slots
 *   (1.03–1.06×).
 * - The ray records and the active-ray lists are plain arrays of doubles and small integers, not
 *   typed arrays: in the benchmark process V8 guarded every typed-array access in these loops with
 *   a detached-buffer test (seen with --print-opt-code), which packed plain arrays do not need
 *   (1.05–1.1×). Index arithmetic is written `(q + k) | 0` so V8 needs no overflow check on it.
 *   The lists and the single-ray stack come from their own array literal so V8 keeps them as
 *   small-integer arrays; made by the same literal as the records they were double arrays, and
 *   every list read converted a double to an index (0.97–1.08×, mean 1.02× over the three bunnies
 *   and both ray sets).
 * - Chunks whose rays all meet the root box no earlier than their tmin (rays from outside the
 *   mesh, e.g. the sphere set) use four-child box tests without the three tmin comparisons per box
 *   (9 instead of 12; filter4Outside says why that cannot change a result): 1.08–1.11× on the
 *   sphere rays of the 3.7k, 59k and 941k bunnies; bounce rays start on the surface, inside the
 *   box, and keep the full test (0.98–1.05×, noise). A copy of the single-ray loop without them
 *   measured 0.98–1.03× (noise) against the one loop with all twelve, so there is only one.
 * - Given a copy of the rays in sorted order (sortRays(…, true)), the records are filled reading it
 *   in sequence instead of gathering each ray through the order: 1.02–1.07× on the three bunnies,
 *   the copy included.
 *
 * Each ray's result depends only on that ray: the nodes it visits and the order of its leaves
 * follow from its own box tests and its octant, never from the other rays in its chunk. (Whether a
 * chunk uses the box tests without tmin comparisons, and whether a subtree is walked by the stream
 * or one ray at a time, depends on the other rays, but neither changes any box test's outcome nor
 * the order of a ray's leaves.)
 *
 * Wide node layout: see wide.ts.
 */
import { TRAVERSAL_STACK_SIZE } from "./layout";
import { inverse, type TriangleBvh } from "./traverse";
import { COUNT_MASK, WIDE_WORDS } from "./wide";

/** Rays per chunk: large enough to pay for each node's bookkeeping, small enough to stay in cache. */
const CHUNK = 16384;
/** Doubles per ray record: ix iy iz ox·ix oy·iy oz·iz tmin best | ox oy oz dx dy dz u v. */
const REC = 16;

/** A plain array of `n` doubles, built by push so V8 keeps it packed. */
function packedDoubles(n: number, value: number): number[] {
  const a: number[] = [];
  for (let i = 0; i < n; i++) a.push(value);
  return a;
}

/**
 * A plain array of `n` zeros holding small integers. Its own array literal on purpose: V8 keeps
 * per-literal feedback on the element kind, and an array from the literal in packedDoubles is
 * created as a double array (every list read then converts a double to an index and every write
 * an index to a double).
 */
function packedSmallInts(n: number): number[] {
  const a: number[] = [];
  for (let i = 0; i < n; i++) a.push(0);
  return a;
}

/**
 * Scratch, allocated on first use and then reused: ray records (doubles), the slot of each ray's
 * closest triangle, the active-ray lists (child lists of every node on the current path, each at
 * most CHUNK long) and the node stack.
 */
let records: number[] = [];
let slots = new Int32Array(0);
let lists: number[] = [];
const STACK = 4 * TRAVERSAL_STACK_SIZE;
const stackSlot = new Int32Array(STACK), stackStart = new Int32Array(STACK), stackCount = new Int32Array(STACK), stackFree = new Int32Array(STACK);
const ends = new Int32Array(4);

function ensureScratch(depth: number): void {
  if (records.length === 0) {
    records = packedDoubles(CHUNK * REC, 0.5);
    slots = new Int32Array(CHUNK);
  }
  // The root's list plus up to four child lists per level of the path.
  const need = CHUNK * (4 * (depth + 1) + 1);
  if (lists.length < need) lists = packedSmallInts(need);
}

/**
 * Closest hit for rays order[0..n), where `order` keeps each direction octant contiguous and
 * octants[k] is the octant of ray order[k] (bit 0/1/2 set for a negative x/y/z direction, the
 * sign test `d < 0`). Writes t,u,v,triangle at each ray's own index exactly like closestHitBatch;
 * returns the hits. `sortedRays`, if given, holds the same rays already in that order (ray k of
 * the order at sortedRays[8k..8k+8), as sortRays(…, true) makes): they are then read in sequence
 * instead of through `order` (see ray-order.ts for the measured gain).
 */
export function closestHitStream(tb: TriangleBvh, rays: Float32Array, order: Uint32Array, octants: Uint32Array, n: number, out: Float32Array, sortedRays: Float32Array | null = null): number {
  ensureScratch(tb.wide.depth);
  let hits = 0;
  let i = 0;
  while (i < n) {
    const octant = octants[i]!;
    let j = i + 1;
    while (j < n && j - i < CHUNK && octants[j] === octant) j++;
    if (sortedRays !== null) loadSortedRecords(sortedRays, i, j - i);
    else loadRecords(rays, order, i, j - i);
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

/** loadRecords for rays given in sorted order: ray `begin + k` of the order at rays[8(begin + k)..). */
function loadSortedRecords(rays: Float32Array, begin: number, m: number): void {
  const R = records;
  for (let k = 0; k < m; k++) {
    const ro = (begin + k) * 8, q = k * REC;
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

/**
 * Lists this short or shorter go through the subtree one ray at a time (submitLane): a
 * node's list bookkeeping then costs more than it shares. Measured on the 941k-triangle bunny,
 * where a quarter to a third of the ray visits come in lists of 1–3 rays: 1.05–1.11× the rays per
 * CPU second; no difference on the 3.7k and 59k bunnies.
 */
const SINGLE_RAY_MAX = 2;

function traceChunk(tb: TriangleBvh, octant: number, m: number): void {
  const wide = tb.wide, nodes = wide.nodes, words = wide.words, tris = tb.tris;
  // Entry and exit planes in the SoA child boxes, the same for every ray of the octant.
  const nxo = octant & 1 ? 12 : 0, nyo = octant & 2 ? 16 : 4, nzo = octant & 4 ? 20 : 8;
  const reversed = octant >= 4, orderWord = 28 + (reversed ? 7 - octant : octant);
  const root = tb.bvh.nodes;
  const rx = octant & 1 ? 3 : 0, ry = octant & 2 ? 4 : 1, rz = octant & 4 ? 5 : 2;
  const active = rootFilter(root[rx]!, root[ry]!, root[rz]!, root[3 - rx]!, root[5 - ry]!, root[7 - rz]!, m);
  if (active === 0) return;
  const outside = allOutside;
  // A stack entry is a child slot (word index of its ref; -1 for the root node) with its list and
  // the first list index free for its own children's lists.
  stackSlot[0] = -1; stackStart[0] = 0; stackCount[0] = active; stackFree[0] = active;
  let sp = 1;
  while (sp > 0) {
    sp--;
    const slot = stackSlot[sp]!, from = stackStart[sp]!, count = stackCount[sp]!, free = stackFree[sp]!;
    let node = 0;
    if (slot >= 0) {
      const ref = words[slot]!, leafCount = words[slot + 4]! & COUNT_MASK;
      if (leafCount !== 0) {
        const last = ref + leafCount;
        for (let t = ref; t < last; t++) triangleAgainstList(tris, t, from, from + count);
        continue;
      }
      node = ref;
      if (count <= SINGLE_RAY_MAX) {
        for (let k = from; k < from + count; k++) submitLane(nodes, words, tris, slot, lists[k]!, nxo, nyo, nzo, orderWord, reversed);
        continue;
      }
    }
    const o = node * WIDE_WORDS;
    const kids = 2 + +(words[o + 26] !== 0 || (words[o + 30]! & COUNT_MASK) !== 0) + +(words[o + 27] !== 0 || (words[o + 31]! & COUNT_MASK) !== 0);
    if (kids === 4) {
      if (outside !== 0) filter4Outside(nodes, o, nxo, nyo, nzo, from, from + count, free, count);
      else filter4(nodes, o, nxo, nyo, nzo, from, from + count, free, count);
    }
    else if (kids === 3) filter3(nodes, o, nxo, nyo, nzo, from, from + count, free, count);
    else filter2(nodes, o, nxo, nyo, nzo, from, from + count, free, count);
    const visitOrder = words[o + orderWord]! >>> 24;
    const nextFree = free + kids * count;
    // Push in reverse visiting order so the first child to visit is on top.
    for (let k = 0; k < 4; k++) {
      const j = (visitOrder >>> (reversed ? 2 * k : 6 - 2 * k)) & 3;
      if (j >= kids) continue;
      const start = free + j * count, end = ends[j]!;
      if (end === start) continue;
      stackSlot[sp] = o + 24 + j; stackStart[sp] = start; stackCount[sp] = end - start; stackFree[sp] = nextFree; sp++;
    }
  }
  while (busyLanes > 0) laneRound(nodes, words, tris, nxo, nyo, nzo, orderWord, reversed);
}

/**
 * 1 when every ray of the chunk starts its interval at or before the root box (its entry distance
 * is at least tmin): see filter4Outside.
 */
let allOutside = 0;

/** Lists every ray of the chunk whose interval meets the root box in lists[0..); returns the count. */
function rootFilter(bx0: number, by0: number, bz0: number, bx1: number, by1: number, bz1: number, m: number): number {
  const L = lists, R = records;
  let top = 0, outside = 1;
  for (let r = 0; r < m; r++) {
    const q = r << 4;
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, ox = R[(q + 3) | 0]!, oy = R[(q + 4) | 0]!, oz = R[(q + 5) | 0]!;
    const tn = R[(q + 6) | 0]!, tf = R[(q + 7) | 0]!;
    const nx = bx0 * ix - ox, ny = by0 * iy - oy, nz = bz0 * iz - oz, fx = bx1 * ix - ox, fy = by1 * iy - oy, fz = bz1 * iz - oz;
    L[top] = r;
    top += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz) & +(tn <= tf));
    outside &= +(nx >= tn) | +(ny >= tn) | +(nz >= tn);
  }
  allOutside = outside;
  return top;
}

// filter2/3/4: appends each ray of lists[from..to) to the list of every child box it meets; child
// j's list starts at base + j·c (c = to − from). The ends go to `ends`. Written out per child count
// because a loop over children would keep the box planes in memory instead of registers.
// The hit test is the slab test (Kay & Kajiya 1986) as comparisons, see the file comment. The
// three same-axis pairs (entry ≤ exit on one axis) hold by construction: for one sign of the
// reciprocal both planes are multiplied by it and rounded monotonically.

function filter4(N: Float32Array, o: number, nxo: number, nyo: number, nzo: number, from: number, to: number, base: number, c: number): void {
  const L = lists, R = records;
  const fxo = 12 - nxo, fyo = 20 - nyo, fzo = 28 - nzo;
  const a0x = N[o + nxo]!, a0y = N[o + nyo]!, a0z = N[o + nzo]!, b0x = N[o + fxo]!, b0y = N[o + fyo]!, b0z = N[o + fzo]!;
  const a1x = N[o + 1 + nxo]!, a1y = N[o + 1 + nyo]!, a1z = N[o + 1 + nzo]!, b1x = N[o + 1 + fxo]!, b1y = N[o + 1 + fyo]!, b1z = N[o + 1 + fzo]!;
  const a2x = N[o + 2 + nxo]!, a2y = N[o + 2 + nyo]!, a2z = N[o + 2 + nzo]!, b2x = N[o + 2 + fxo]!, b2y = N[o + 2 + fyo]!, b2z = N[o + 2 + fzo]!;
  const a3x = N[o + 3 + nxo]!, a3y = N[o + 3 + nyo]!, a3z = N[o + 3 + nzo]!, b3x = N[o + 3 + fxo]!, b3y = N[o + 3 + fyo]!, b3z = N[o + 3 + fzo]!;
  let t0 = base, t1 = base + c, t2 = base + 2 * c, t3 = base + 3 * c;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r << 4;
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, ox = R[(q + 3) | 0]!, oy = R[(q + 4) | 0]!, oz = R[(q + 5) | 0]!;
    const tn = R[(q + 6) | 0]!, tf = R[(q + 7) | 0]!;
    {
      const nx = a0x * ix - ox, ny = a0y * iy - oy, nz = a0z * iz - oz, fx = b0x * ix - ox, fy = b0y * iy - oy, fz = b0z * iz - oz;
      L[t0] = r; t0 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a1x * ix - ox, ny = a1y * iy - oy, nz = a1z * iz - oz, fx = b1x * ix - ox, fy = b1y * iy - oy, fz = b1z * iz - oz;
      L[t1] = r; t1 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a2x * ix - ox, ny = a2y * iy - oy, nz = a2z * iz - oz, fx = b2x * ix - ox, fy = b2y * iy - oy, fz = b2z * iz - oz;
      L[t2] = r; t2 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a3x * ix - ox, ny = a3y * iy - oy, nz = a3z * iz - oz, fx = b3x * ix - ox, fy = b3y * iy - oy, fz = b3z * iz - oz;
      L[t3] = r; t3 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
  }
  ends[0] = t0; ends[1] = t1; ends[2] = t2; ends[3] = t3;
}

/**
 * filter4 for a chunk whose rays all meet the root box no earlier than their tmin (allOutside):
 * without the three tmin comparisons per box. They cannot fail there: a child box that passes the
 * cross-axis comparisons has every exit distance at or beyond each of its entry distances, which
 * are at or beyond the root box's (the child lies inside the root, and b·(1/d) − o·(1/d) rounds
 * monotonically in b), and the root's largest entry distance is at least tmin.
 */
function filter4Outside(N: Float32Array, o: number, nxo: number, nyo: number, nzo: number, from: number, to: number, base: number, c: number): void {
  const L = lists, R = records;
  const fxo = 12 - nxo, fyo = 20 - nyo, fzo = 28 - nzo;
  const a0x = N[o + nxo]!, a0y = N[o + nyo]!, a0z = N[o + nzo]!, b0x = N[o + fxo]!, b0y = N[o + fyo]!, b0z = N[o + fzo]!;
  const a1x = N[o + 1 + nxo]!, a1y = N[o + 1 + nyo]!, a1z = N[o + 1 + nzo]!, b1x = N[o + 1 + fxo]!, b1y = N[o + 1 + fyo]!, b1z = N[o + 1 + fzo]!;
  const a2x = N[o + 2 + nxo]!, a2y = N[o + 2 + nyo]!, a2z = N[o + 2 + nzo]!, b2x = N[o + 2 + fxo]!, b2y = N[o + 2 + fyo]!, b2z = N[o + 2 + fzo]!;
  const a3x = N[o + 3 + nxo]!, a3y = N[o + 3 + nyo]!, a3z = N[o + 3 + nzo]!, b3x = N[o + 3 + fxo]!, b3y = N[o + 3 + fyo]!, b3z = N[o + 3 + fzo]!;
  let t0 = base, t1 = base + c, t2 = base + 2 * c, t3 = base + 3 * c;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r << 4;
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, ox = R[(q + 3) | 0]!, oy = R[(q + 4) | 0]!, oz = R[(q + 5) | 0]!;
    const tf = R[(q + 7) | 0]!;
    {
      const nx = a0x * ix - ox, ny = a0y * iy - oy, nz = a0z * iz - oz, fx = b0x * ix - ox, fy = b0y * iy - oy, fz = b0z * iz - oz;
      L[t0] = r; t0 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf));
    }
    {
      const nx = a1x * ix - ox, ny = a1y * iy - oy, nz = a1z * iz - oz, fx = b1x * ix - ox, fy = b1y * iy - oy, fz = b1z * iz - oz;
      L[t1] = r; t1 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf));
    }
    {
      const nx = a2x * ix - ox, ny = a2y * iy - oy, nz = a2z * iz - oz, fx = b2x * ix - ox, fy = b2y * iy - oy, fz = b2z * iz - oz;
      L[t2] = r; t2 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf));
    }
    {
      const nx = a3x * ix - ox, ny = a3y * iy - oy, nz = a3z * iz - oz, fx = b3x * ix - ox, fy = b3y * iy - oy, fz = b3z * iz - oz;
      L[t3] = r; t3 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf));
    }
  }
  ends[0] = t0; ends[1] = t1; ends[2] = t2; ends[3] = t3;
}

function filter3(N: Float32Array, o: number, nxo: number, nyo: number, nzo: number, from: number, to: number, base: number, c: number): void {
  const L = lists, R = records;
  const fxo = 12 - nxo, fyo = 20 - nyo, fzo = 28 - nzo;
  const a0x = N[o + nxo]!, a0y = N[o + nyo]!, a0z = N[o + nzo]!, b0x = N[o + fxo]!, b0y = N[o + fyo]!, b0z = N[o + fzo]!;
  const a1x = N[o + 1 + nxo]!, a1y = N[o + 1 + nyo]!, a1z = N[o + 1 + nzo]!, b1x = N[o + 1 + fxo]!, b1y = N[o + 1 + fyo]!, b1z = N[o + 1 + fzo]!;
  const a2x = N[o + 2 + nxo]!, a2y = N[o + 2 + nyo]!, a2z = N[o + 2 + nzo]!, b2x = N[o + 2 + fxo]!, b2y = N[o + 2 + fyo]!, b2z = N[o + 2 + fzo]!;
  let t0 = base, t1 = base + c, t2 = base + 2 * c;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r << 4;
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, ox = R[(q + 3) | 0]!, oy = R[(q + 4) | 0]!, oz = R[(q + 5) | 0]!;
    const tn = R[(q + 6) | 0]!, tf = R[(q + 7) | 0]!;
    {
      const nx = a0x * ix - ox, ny = a0y * iy - oy, nz = a0z * iz - oz, fx = b0x * ix - ox, fy = b0y * iy - oy, fz = b0z * iz - oz;
      L[t0] = r; t0 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a1x * ix - ox, ny = a1y * iy - oy, nz = a1z * iz - oz, fx = b1x * ix - ox, fy = b1y * iy - oy, fz = b1z * iz - oz;
      L[t1] = r; t1 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a2x * ix - ox, ny = a2y * iy - oy, nz = a2z * iz - oz, fx = b2x * ix - ox, fy = b2y * iy - oy, fz = b2z * iz - oz;
      L[t2] = r; t2 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
  }
  ends[0] = t0; ends[1] = t1; ends[2] = t2;
}

function filter2(N: Float32Array, o: number, nxo: number, nyo: number, nzo: number, from: number, to: number, base: number, c: number): void {
  const L = lists, R = records;
  const fxo = 12 - nxo, fyo = 20 - nyo, fzo = 28 - nzo;
  const a0x = N[o + nxo]!, a0y = N[o + nyo]!, a0z = N[o + nzo]!, b0x = N[o + fxo]!, b0y = N[o + fyo]!, b0z = N[o + fzo]!;
  const a1x = N[o + 1 + nxo]!, a1y = N[o + 1 + nyo]!, a1z = N[o + 1 + nzo]!, b1x = N[o + 1 + fxo]!, b1y = N[o + 1 + fyo]!, b1z = N[o + 1 + fzo]!;
  let t0 = base, t1 = base + c;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r << 4;
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, ox = R[(q + 3) | 0]!, oy = R[(q + 4) | 0]!, oz = R[(q + 5) | 0]!;
    const tn = R[(q + 6) | 0]!, tf = R[(q + 7) | 0]!;
    {
      const nx = a0x * ix - ox, ny = a0y * iy - oy, nz = a0z * iz - oz, fx = b0x * ix - ox, fy = b0y * iy - oy, fz = b0z * iz - oz;
      L[t0] = r; t0 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = a1x * ix - ox, ny = a1y * iy - oy, nz = a1z * iz - oz, fx = b1x * ix - ox, fy = b1y * iy - oy, fz = b1z * iz - oz;
      L[t1] = r; t1 += (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
  }
  ends[0] = t0; ends[1] = t1;
}

/**
 * Rays traced one at a time below the stream, several at once. Below the point where the lists
 * thin out, a ray's walk is a chain of cache misses (node, then child node, then the leaf's
 * triangles), each waiting for the one before. Eight walks in lanes take turns one visit each, and
 * every turn first reads what each lane visits next, back to back, so those misses overlap.
 * Against the single walk per ray it replaced (same visits, same order within a ray): 1.15× the
 * rays per CPU second on the 941k-triangle bunny (median of interleaved rounds, both ray sets);
 * 4, 8 and 16 lanes measured the same. Lanes run until the chunk's stream is done, so a ray may
 * have a walk in a lane while the stream still tests its other lists: both read and write the
 * ray's record, which only ever moves its closest hit nearer.
 */
const LANES = 8;
/** Stack entries per lane: at most three more per level than it pops, levels ≤ the stack size. */
const LANE_STACK = 3 * TRAVERSAL_STACK_SIZE + 4;
const laneRay: number[] = packedSmallInts(LANES), laneSp: number[] = packedSmallInts(LANES);
const laneStack: number[] = packedSmallInts(LANES * LANE_STACK);
let busyLanes = 0;
/** Sum of the values read ahead of use; kept so the reads are not removed. */
let readAhead = 0;

/** Starts ray r below child slot `slot` in a free lane, first advancing the lanes until one is free. */
function submitLane(N: Float32Array, words: Uint32Array, tris: Float32Array, slot: number, r: number, nxo: number, nyo: number, nzo: number, orderWord: number, reversed: boolean): void {
  while (busyLanes === LANES) laneRound(N, words, tris, nxo, nyo, nzo, orderWord, reversed);
  let l = 0;
  while (laneSp[l]! !== 0) l++;
  laneRay[l] = r; laneStack[l * LANE_STACK] = slot; laneSp[l] = 1; busyLanes++;
}

/**
 * One step of every busy lane: first read the node or leaf each lane visits next, all lanes back
 * to back so the cache misses overlap, then visit them. A node is read at its first, middle and
 * last word: a 128-byte node in a buffer that starts 16 bytes past a cache line (as large
 * allocations do under glibc) spans three lines, and reading only two left the visiting-order
 * word's line a miss in every step (seen in a sampling profile: 11% of the lane steps at that load).
 */
function laneRound(N: Float32Array, words: Uint32Array, tris: Float32Array, nxo: number, nyo: number, nzo: number, orderWord: number, reversed: boolean): void {
  let ahead = 0;
  for (let l = 0; l < LANES; l++) {
    const sp = laneSp[l]!;
    if (sp === 0) continue;
    const slot = laneStack[(l * LANE_STACK + sp - 1) | 0]!;
    const ref = words[slot]!, leafCount = words[slot + 4]! & COUNT_MASK;
    if (leafCount === 0) ahead += N[ref * WIDE_WORDS]! + N[ref * WIDE_WORDS + 16]! + N[ref * WIDE_WORDS + 31]!;
    else {
      const end = (ref + leafCount) * 9;
      for (let k = ref * 9; k < end; k += 16) ahead += tris[k]!;
      ahead += tris[end - 1]!;
    }
  }
  readAhead += ahead;
  for (let l = 0; l < LANES; l++) {
    if (laneSp[l]! === 0) continue;
    laneStep(N, words, tris, l, nxo, nyo, nzo, orderWord, reversed);
  }
}

/** Lane l visits the top of its stack: a leaf's triangles, or a node's child boxes (hits pushed). */
function laneStep(N: Float32Array, words: Uint32Array, tris: Float32Array, l: number, nxo: number, nyo: number, nzo: number, orderWord: number, reversed: boolean): void {
  const R = records, S = laneStack, base = l * LANE_STACK;
  const r = laneRay[l]!, q = r << 4;
  let sp = laneSp[l]! - 1;
  const slot = S[(base + sp) | 0]!;
  const ref = words[slot]!, leafCount = words[slot + 4]! & COUNT_MASK;
  const tn = R[(q + 6) | 0]!;
  if (leafCount !== 0) {
    const ox = R[(q + 8) | 0]!, oy = R[(q + 9) | 0]!, oz = R[(q + 10) | 0]!, dx = R[(q + 11) | 0]!, dy = R[(q + 12) | 0]!, dz = R[(q + 13) | 0]!;
    const last = ref + leafCount;
    for (let t = ref; t < last; t++) {
      const q9 = t * 9;
      const e1x = tris[q9 + 3]!, e1y = tris[q9 + 4]!, e1z = tris[q9 + 5]!, e2x = tris[q9 + 6]!, e2y = tris[q9 + 7]!, e2z = tris[q9 + 8]!;
      const px = dy * e2z - dz * e2y, py = dz * e2x - dx * e2z, pz = dx * e2y - dy * e2x;
      const inv = 1 / (e1x * px + e1y * py + e1z * pz);
      const sx = ox - tris[q9]!, sy = oy - tris[q9 + 1]!, sz = oz - tris[q9 + 2]!;
      const u = (sx * px + sy * py + sz * pz) * inv;
      const qx = sy * e1z - sz * e1y, qy = sz * e1x - sx * e1z, qz = sx * e1y - sy * e1x;
      const v = (dx * qx + dy * qy + dz * qz) * inv;
      const hit = (e2x * qx + e2y * qy + e2z * qz) * inv;
      if ((+(u >= 0) & +(u <= 1) & +(v >= 0) & +(u + v <= 1) & +(hit > tn) & +(hit < R[(q + 7) | 0]!)) !== 0) {
        R[(q + 7) | 0] = hit; R[(q + 14) | 0] = u; R[(q + 15) | 0] = v; slots[r] = t;
      }
    }
  } else {
    const ix = R[q]!, iy = R[(q + 1) | 0]!, iz = R[(q + 2) | 0]!, oxi = R[(q + 3) | 0]!, oyi = R[(q + 4) | 0]!, ozi = R[(q + 5) | 0]!;
    const tf = R[(q + 7) | 0]!;
    const fxo = 12 - nxo, fyo = 20 - nyo, fzo = 28 - nzo;
    const o = ref * WIDE_WORDS;
    let mask = 0;
    {
      const nx = N[o + nxo]! * ix - oxi, ny = N[o + nyo]! * iy - oyi, nz = N[o + nzo]! * iz - ozi, fx = N[o + fxo]! * ix - oxi, fy = N[o + fyo]! * iy - oyi, fz = N[o + fzo]! * iz - ozi;
      mask = (+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz));
    }
    {
      const nx = N[o + 1 + nxo]! * ix - oxi, ny = N[o + 1 + nyo]! * iy - oyi, nz = N[o + 1 + nzo]! * iz - ozi, fx = N[o + 1 + fxo]! * ix - oxi, fy = N[o + 1 + fyo]! * iy - oyi, fz = N[o + 1 + fzo]! * iz - ozi;
      mask |= ((+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz))) << 1;
    }
    {
      const nx = N[o + 2 + nxo]! * ix - oxi, ny = N[o + 2 + nyo]! * iy - oyi, nz = N[o + 2 + nzo]! * iz - ozi, fx = N[o + 2 + fxo]! * ix - oxi, fy = N[o + 2 + fyo]! * iy - oyi, fz = N[o + 2 + fzo]! * iz - ozi;
      mask |= ((+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz))) << 2;
    }
    {
      const nx = N[o + 3 + nxo]! * ix - oxi, ny = N[o + 3 + nyo]! * iy - oyi, nz = N[o + 3 + nzo]! * iz - ozi, fx = N[o + 3 + fxo]! * ix - oxi, fy = N[o + 3 + fyo]! * iy - oyi, fz = N[o + 3 + fzo]! * iz - ozi;
      mask |= ((+(nx <= fy) & +(nx <= fz) & +(ny <= fx) & +(ny <= fz) & +(nz <= fx) & +(nz <= fy)) & (+(nx <= tf) & +(ny <= tf) & +(nz <= tf) & +(tn <= fx) & +(tn <= fy) & +(tn <= fz))) << 3;
    }
    // Empty slots have NaN bounds, so they never set their bit.
    const visitOrder = words[o + orderWord]! >>> 24;
    for (let k = 0; k < 4; k++) {
      const j = (visitOrder >>> (reversed ? 2 * k : 6 - 2 * k)) & 3;
      S[(base + sp) | 0] = o + 24 + j; sp += (mask >>> j) & 1;
    }
  }
  laneSp[l] = sp;
  if (sp === 0) busyLanes--;
}

/**
 * Möller–Trumbore (1997), double-sided, of triangle slot `t` against every ray of lists[from..to).
 * Same arithmetic as closestHit in traverse.ts, so the same t, u, v; only the acceptance is one
 * combined test. A zero determinant gives an infinite or NaN u that fails it.
 */
function triangleAgainstList(tris: Float32Array, t: number, from: number, to: number): void {
  const L = lists, R = records, q9 = t * 9;
  const vx = tris[q9]!, vy = tris[q9 + 1]!, vz = tris[q9 + 2]!;
  const e1x = tris[q9 + 3]!, e1y = tris[q9 + 4]!, e1z = tris[q9 + 5]!;
  const e2x = tris[q9 + 6]!, e2y = tris[q9 + 7]!, e2z = tris[q9 + 8]!;
  for (let k = from; k < to; k++) {
    const r = L[k]!, q = r << 4;
    const dx = R[(q + 11) | 0]!, dy = R[(q + 12) | 0]!, dz = R[(q + 13) | 0]!;
    const px = dy * e2z - dz * e2y, py = dz * e2x - dx * e2z, pz = dx * e2y - dy * e2x;
    const inv = 1 / (e1x * px + e1y * py + e1z * pz);
    const sx = R[(q + 8) | 0]! - vx, sy = R[(q + 9) | 0]! - vy, sz = R[(q + 10) | 0]! - vz;
    const u = (sx * px + sy * py + sz * pz) * inv;
    const qx = sy * e1z - sz * e1y, qy = sz * e1x - sx * e1z, qz = sx * e1y - sy * e1x;
    const v = (dx * qx + dy * qy + dz * qz) * inv;
    const hit = (e2x * qx + e2y * qy + e2z * qz) * inv;
    if ((+(u >= 0) & +(u <= 1) & +(v >= 0) & +(u + v <= 1) & +(hit > R[(q + 6) | 0]!) & +(hit < R[(q + 7) | 0]!)) !== 0) {
      R[(q + 7) | 0] = hit; R[(q + 14) | 0] = u; R[(q + 15) | 0] = v; slots[r] = t;
    }
  }
}
