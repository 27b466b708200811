/**
 * The 4-wide BVH the batch stream (stream.ts) walks, collapsed from the binary BVH of layout.ts.
 *
 * Layout (WIDE_WORDS = 32 words, one ArrayBuffer read as float32 and uint32):
 *
 *   words 0..3   minX of children 0..3      words 12..15  maxX
 *   words 4..7   minY                       words 16..19  maxY
 *   words 8..11  minZ                       words 20..23  maxZ
 *   words 24..27 child j: wide node index (interior) or first triangle slot (leaf)
 *   words 28..31 child j: bits 0..23 triangle count (0 = interior child),
 *                bits 24..31 visiting order for direction octant j (four 2-bit child numbers,
 *                first visited in the low bits); octant 7 − j visits in the reverse order
 *
 * Children are packed into slots 0..k−1 (k = 2..4; the root has 1 when the whole tree is one leaf
 * and 0 for an empty mesh); an empty slot has NaN bounds, which fail every comparison, and
 * ref = count = 0 (node 0, the root, is never a child). The root's own box is the binary tree's
 * root box.
 */
import type { Bvh } from "./layout";

/** 32-bit words per wide node. */
export const WIDE_WORDS = 32;

export type WideBvh = {
  /** Child bounds (float32, SoA per node, see the layout above). */
  nodes: Float32Array;
  /** Same memory as `nodes`, for words 24..31. */
  words: Uint32Array;
  nodeCount: number;
  /** Deepest wide node (root = 0): sizes the stream's list scratch. */
  depth: number;
};

/** Bits 0..23 of words 28..31: a leaf child's triangle count. */
export const COUNT_MASK = 0xffffff;

// Collapse scratch, one entry per child of the wide node being filled: its binary node, the half
// surface area of an interior one (−1 for a leaf, never expanded), and its path below the wide
// node's binary node: one bit per level (0 = left, MSB = first level, padded with zeros to 3).
const kidNode = new Int32Array(4), kidPath = new Int32Array(4), kidDepth = new Int32Array(4);
/**
 * Path bits whose binary node splits on x (flipped for rays with negative x), and on y. Bits past
 * the end of a path may be set too: two children first differ at a bit within both paths.
 */
const kidFlipX = new Int32Array(4), kidFlipY = new Int32Array(4);
const kidArea = new Float64Array(4);
/** Set bits of a byte. */
const SET_BITS = new Uint8Array(256);
for (let i = 1; i < 256; i++) SET_BITS[i] = SET_BITS[i >> 1]! + (i & 1);

/**
 * Collapses the binary BVH into a 4-wide one: each wide node takes a binary interior node's
 * children and repeatedly replaces its largest-area interior child by that child's two children
 * until it holds four (a common practice for wide BVHs). Leaves stay as they are, so triangle
 * slots and `primIndices` are shared with the binary tree.
 *
 * The visiting order for an octant is the depth-first order through the expanded binary nodes,
 * near side first. That equals sorting the children by their paths with each level's bit flipped
 * where the ray's direction is negative on that level's split axis (no path is a prefix of
 * another, so zero padding keeps the keys distinct). Ranking four 3-bit keys instead of a stack
 * walk per octant, the six bounds copied unrolled, measured 0.68× the collapse time on the 3.7k and
 * 59k bunnies (same output; old and new code interleaved in one process).
 */
export function collapseToWide(bvh: Bvh): WideBvh {
  const capacity = Math.max(1, (bvh.nodeCount - 1) >> 1);
  const buffer = new ArrayBuffer(capacity * WIDE_WORDS * 4);
  const nodes = new Float32Array(buffer), words = new Uint32Array(buffer);
  deepest[0] = 0;
  const count = fillWide(bvh.nodes, bvh.words, bvh.primIndices.length === 0, nodes, words, new Int32Array(3 * (capacity + 1)));
  const trimmed = buffer.slice(0, count * WIDE_WORDS * 4);
  return { nodes: new Float32Array(trimmed), words: new Uint32Array(trimmed), nodeCount: count, depth: deepest[0]! };
}

/** Deepest wide node of the last fillWide. */
const deepest = new Int32Array(1);

/**
 * Fills the wide nodes; returns their count. The loop sits alone in its function with only a
 * return after it: V8 compiles long loops on-stack, and code after such a loop that never ran yet
 * lacked type feedback and deoptimised on each of the next three calls (the 941k-triangle bunny's
 * collapse took 110–180 ms on calls 1–4 and 50 ms from the fifth on).
 */
function fillWide(bn: Float32Array, bw: Uint32Array, empty: boolean, nodes: Float32Array, words: Uint32Array, list: Int32Array): number {
  // Work list: binary node whose children fill wide node `wide`, at `depth`.
  const third = list.length / 3;
  const workBinary = list.subarray(0, third), workWide = list.subarray(third, 2 * third), workDepth = list.subarray(2 * third);
  let work = 1, count = 1;
  workBinary[0] = 0; workWide[0] = 0; workDepth[0] = 0;
  while (work > 0) {
    work--;
    const b = workBinary[work]!, w = workWide[work]!, depth = workDepth[work]!;
    if (depth > deepest[0]!) deepest[0] = depth;
    const o = w * WIDE_WORDS;
    let kids = 0;
    if (empty) kids = 0;
    else if (bw[b * 8 + 7]! >>> 2 !== 0) { // a leaf root
      kidNode[0] = b; kidPath[0] = 0; kidDepth[0] = 0; kidFlipX[0] = kidFlipY[0] = 0; kids = 1;
    } else {
      const axis = bw[b * 8 + 7]! & 3;
      const fx = axis === 0 ? 7 : 0, fy = axis === 1 ? 7 : 0;
      setKid(bn, bw, 0, b + 1, 0, 1, fx, fy);
      setKid(bn, bw, 1, bw[b * 8 + 6]!, 4, 1, fx, fy);
      kids = 2;
      while (kids < 4) {
        let pick = -1, pickArea = -1;
        for (let i = 0; i < kids; i++) {
          const a = kidArea[i]!;
          if (a > pickArea) { pickArea = a; pick = i; }
        }
        if (pick < 0) break;
        const n = kidNode[pick]!, path = kidPath[pick]!, level = kidDepth[pick]!, axis = bw[n * 8 + 7]! & 3;
        // This level's bit and the ones below it (all zero) flip with the new split's axis.
        const below = (8 >> level) - 1;
        const fx = (kidFlipX[pick]! & ~below) | (axis === 0 ? below : 0);
        const fy = (kidFlipY[pick]! & ~below) | (axis === 1 ? below : 0);
        setKid(bn, bw, kids, bw[n * 8 + 6]!, path | (4 >> level), level + 1, fx, fy);
        setKid(bn, bw, pick, n + 1, path, level + 1, fx, fy);
        kids++;
      }
    }
    for (let j = 0; j < 4; j++) {
      const g = o + 24 + j;
      if (j >= kids) {
        for (let k = 0; k < 6; k++) nodes[o + k * 4 + j] = NaN;
        words[g] = 0; words[g + 4] = 0;
        continue;
      }
      const n = kidNode[j]!;
      const q = n * 8;
      nodes[o + j] = bn[q]!; nodes[o + 4 + j] = bn[q + 1]!; nodes[o + 8 + j] = bn[q + 2]!;
      nodes[o + 12 + j] = bn[q + 3]!; nodes[o + 16 + j] = bn[q + 4]!; nodes[o + 20 + j] = bn[q + 5]!;
      const leafCount = bw[n * 8 + 7]! >>> 2;
      if (leafCount !== 0) {
        if (leafCount > COUNT_MASK) throw new Error(`collapseToWide: a leaf holds ${leafCount} triangles`);
        words[g] = bw[n * 8 + 6]!; words[g + 4] = leafCount;
      } else {
        const child = count++;
        words[g] = child; words[g + 4] = 0;
        workBinary[work] = n; workWide[work] = child; workDepth[work] = depth + 1; work++;
      }
    }
    // Visiting order for octants 0..3 (their z bit is 0, so a z split never flips): a child's
    // position is the number of smaller keys, read from a bit set of the keys in use.
    let use0 = 0, use1 = 0, use2 = 0, use3 = 0;
    for (let j = 0; j < kids; j++) {
      const p = kidPath[j]!, x = kidFlipX[j]!, y = kidFlipY[j]!;
      use0 |= 1 << p; use1 |= 1 << (p ^ x); use2 |= 1 << (p ^ y); use3 |= 1 << (p ^ x ^ y);
    }
    let order0 = 0, order1 = 0, order2 = 0, order3 = 0;
    for (let j = 0; j < 4; j++) {
      if (j < kids) {
        const p = kidPath[j]!, x = kidFlipX[j]!, y = kidFlipY[j]!;
        order0 |= j << (2 * SET_BITS[use0 & ((1 << p) - 1)]!);
        order1 |= j << (2 * SET_BITS[use1 & ((1 << (p ^ x)) - 1)]!);
        order2 |= j << (2 * SET_BITS[use2 & ((1 << (p ^ y)) - 1)]!);
        order3 |= j << (2 * SET_BITS[use3 & ((1 << (p ^ x ^ y)) - 1)]!);
      } else {
        const e = j << (2 * j); // empty slots last, in slot order
        order0 |= e; order1 |= e; order2 |= e; order3 |= e;
      }
    }
    words[o + 28] = (words[o + 28]! | (order0 << 24)) >>> 0;
    words[o + 29] = (words[o + 29]! | (order1 << 24)) >>> 0;
    words[o + 30] = (words[o + 30]! | (order2 << 24)) >>> 0;
    words[o + 31] = (words[o + 31]! | (order3 << 24)) >>> 0;
  }
  return count;
}

/** Child slot j := binary node n with the given path, depth and flip masks. */
function setKid(bn: Float32Array, bw: Uint32Array, j: number, n: number, path: number, level: number, flipX: number, flipY: number): void {
  kidNode[j] = n; kidPath[j] = path; kidDepth[j] = level; kidFlipX[j] = flipX; kidFlipY[j] = flipY;
  if (bw[n * 8 + 7]! >>> 2 !== 0) { kidArea[j] = -1; return; }
  const o = n * 8;
  const x = bn[o + 3]! - bn[o]!, y = bn[o + 4]! - bn[o + 1]!, z = bn[o + 5]! - bn[o + 2]!;
  kidArea[j] = x * y + y * z + z * x;
}
