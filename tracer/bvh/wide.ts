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

// Collapse scratch: the binary subtree expanded into one wide node (at most 3 expansions, 7 nodes).
const expNode = new Int32Array(8), expLeft = new Int32Array(8), expSlot = new Int32Array(8);
/** Half surface area of an expansion node, or −1 for a leaf (never expanded). */
const expArea = new Float64Array(8);
const kidExp = new Int32Array(4), dfs = new Int32Array(8), visit = new Int32Array(4);

/**
 * Collapses the binary BVH into a 4-wide one: each wide node takes a binary interior node's
 * children and repeatedly replaces its largest-area interior child by that child's two children
 * until it holds four (a common practice for wide BVHs). Leaves stay as they are, so triangle
 * slots and `primIndices` are shared with the binary tree.
 */
export function collapseToWide(bvh: Bvh): WideBvh {
  const bn = bvh.nodes, bw = bvh.words;
  const capacity = Math.max(1, (bvh.nodeCount - 1) >> 1);
  const buffer = new ArrayBuffer(capacity * WIDE_WORDS * 4);
  const nodes = new Float32Array(buffer), words = new Uint32Array(buffer);
  const empty = bvh.primIndices.length === 0;
  // Work list: binary node whose children fill wide node `wide`, at `depth`.
  const workBinary = new Int32Array(capacity + 1), workWide = new Int32Array(capacity + 1), workDepth = new Int32Array(capacity + 1);
  let work = 1, count = 1, maxDepth = 0;
  workBinary[0] = 0; workWide[0] = 0; workDepth[0] = 0;
  while (work > 0) {
    work--;
    const b = workBinary[work]!, w = workWide[work]!, depth = workDepth[work]!;
    if (depth > maxDepth) maxDepth = depth;
    const o = w * WIDE_WORDS;
    // Expansion tree rooted at b; kidExp lists the expansion nodes that became children.
    expNode[0] = b; expLeft[0] = -1;
    let expCount = 1, kids = 0;
    if (empty) kids = 0;
    else if (bw[b * 8 + 7]! >>> 2 !== 0) { kidExp[0] = 0; kids = 1; } // a leaf root
    else {
      expand(bn, bw, 0, expCount); expCount += 2;
      kidExp[0] = 1; kidExp[1] = 2; kids = 2;
      while (kids < 4) {
        let pick = -1, pickArea = -1;
        for (let i = 0; i < kids; i++) {
          const a = expArea[kidExp[i]!]!;
          if (a > pickArea) { pickArea = a; pick = i; }
        }
        if (pick < 0) break;
        const x = kidExp[pick]!;
        expand(bn, bw, x, expCount); expCount += 2;
        kidExp[pick] = expLeft[x]!; kidExp[kids++] = expLeft[x]! + 1;
      }
    }
    for (let j = 0; j < kids; j++) expSlot[kidExp[j]!] = j;
    for (let j = 0; j < 4; j++) {
      const g = o + 24 + j;
      if (j >= kids) {
        for (let k = 0; k < 6; k++) nodes[o + k * 4 + j] = NaN;
        words[g] = 0; words[g + 4] = 0;
        continue;
      }
      const n = expNode[kidExp[j]!]!;
      for (let k = 0; k < 6; k++) nodes[o + k * 4 + j] = bn[n * 8 + k]!;
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
    // Visiting order for octants 0..3: depth-first through the expansion tree, near side first.
    for (let octant = 0; octant < 4; octant++) {
      let seen = 0, sp = 0;
      if (kids > 0) dfs[sp++] = 0;
      while (sp > 0) {
        const x = dfs[--sp]!;
        if (expLeft[x]! < 0) { visit[seen++] = expSlot[x]!; continue; }
        const negative = (octant >> (bw[expNode[x]! * 8 + 7]! & 3)) & 1;
        const near = expLeft[x]! + negative, far = expLeft[x]! + 1 - negative;
        dfs[sp++] = far; dfs[sp++] = near;
      }
      // Empty slots last, so every octant's order is a permutation of 0..3.
      for (let j = kids; j < 4; j++) visit[seen++] = j;
      const order = visit[0]! | (visit[1]! << 2) | (visit[2]! << 4) | (visit[3]! << 6);
      words[o + 28 + octant] = (words[o + 28 + octant]! | (order << 24)) >>> 0;
    }
  }
  const trimmed = buffer.slice(0, count * WIDE_WORDS * 4);
  return { nodes: new Float32Array(trimmed), words: new Uint32Array(trimmed), nodeCount: count, depth: maxDepth };
}

/** Adds the binary children of expansion node x as expansion nodes at..at+1 (left, right). */
function expand(bn: Float32Array, bw: Uint32Array, x: number, at: number): void {
  const n = expNode[x]!, left = n + 1, right = bw[n * 8 + 6]!;
  expLeft[x] = at;
  expNode[at] = left; expLeft[at] = -1; expArea[at] = expansionArea(bn, bw, left);
  expNode[at + 1] = right; expLeft[at + 1] = -1; expArea[at + 1] = expansionArea(bn, bw, right);
}

function expansionArea(bn: Float32Array, bw: Uint32Array, n: number): number {
  if (bw[n * 8 + 7]! >>> 2 !== 0) return -1;
  const o = n * 8;
  const x = bn[o + 3]! - bn[o]!, y = bn[o + 4]! - bn[o + 1]!, z = bn[o + 5]! - bn[o + 2]!;
  return x * y + y * z + z * x;
}
