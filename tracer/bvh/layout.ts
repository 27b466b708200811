/**
 * Flat BVH node layout shared by the builder, the traversal loops and the workers.
 *
 * Every node is 8 consecutive 32-bit words (32 bytes) in one ArrayBuffer, read through two views
 * on the same memory: `nodes` (Float32Array) for the bounds and `words` (Uint32Array) for the
 * packed integers. Keeping both in one buffer means a node is one cache line half, and the whole
 * tree is a single transferable.
 *
 *   word 0..2  minX, minY, minZ   (float32; exact unions of the float32 primitive bounds)
 *   word 3..5  maxX, maxY, maxZ
 *   word 6     interior: index of the RIGHT child node
 *              leaf:     offset of the first primitive in `primIndices`
 *   word 7     (count << 2) | axis
 *              count = number of primitives (0 for an interior node, >= 1 for a leaf)
 *              axis  = split axis of an interior node (0 = x, 1 = y, 2 = z); 0 for leaves
 *
 * Node order is depth first: the LEFT child of interior node i is always node i + 1, so the near
 * child of a typical ray is the next 32 bytes in memory. Node 0 is the root. The primitives of a
 * leaf are `primIndices[first .. first + count)`, which map leaf slots back to the caller's
 * primitive numbers (the order of the `bounds` array given to `buildBvh`).
 *
 * Traversal (closest hit), as used by tracer/bvh/traverse.ts:
 *
 *   const stack = new Uint32Array(64); // preallocate once; 64 covers any tree buildBvh makes
 *   let sp = 0, node = 0;
 *   if (!rayHitsBox(node)) return;     // root box test
 *   for (;;) {
 *     const o = node * NODE_WORDS, meta = words[o + 7];
 *     const count = meta >>> 2;
 *     if (count === 0) {
 *       // interior: left = node + 1, right = words[o + 6]. Visit the child on the ray's side of the
 *       // split plane first: if dir[axis] < 0 the right child is nearer.
 *       const axis = meta & 3;
 *       let near = node + 1, far = words[o + 6];
 *       if (dir[axis] < 0) { const t = near; near = far; far = t; }
 *       stack[sp++] = far; node = near;   // (or test both child boxes here and push only hits)
 *       continue;
 *     }
 *     // leaf: test primIndices[words[o+6] .. +count), shrink tmax on every hit
 *     ...
 *     if (sp === 0) break; node = stack[--sp];  // and skip it if its box misses within tmax
 *   }
 *
 * With binned SAH the tree depth stays far below 64 for meshes up to the scene limits; the builder
 * also caps the depth (MAX_DEPTH) so a fixed 64-entry stack can never overflow.
 */

/** 32-bit words per node. */
export const NODE_WORDS = 8;
/** Bytes per node. */
export const NODE_BYTES = NODE_WORDS * 4;
/** Deepest node the builder will create (root = depth 0). A traversal stack of MAX_DEPTH + 2 is enough. */
export const MAX_DEPTH = 60;
/** Stack size a traversal loop needs for any tree from buildBvh. */
export const TRAVERSAL_STACK_SIZE = 64;

export type Bvh = {
  /** Node bounds view (float32, 8 words per node; words 6 and 7 must be read through `words`). */
  nodes: Float32Array;
  /** Same memory as `nodes`, for words 6 and 7. */
  words: Uint32Array;
  /** Leaf slot → caller primitive index. */
  primIndices: Uint32Array;
  nodeCount: number;
};

export const nodeOffset = (node: number): number => node * NODE_WORDS;
export const primCount = (bvh: Bvh, node: number): number => bvh.words[node * NODE_WORDS + 7] >>> 2;
export const isLeaf = (bvh: Bvh, node: number): boolean => bvh.words[node * NODE_WORDS + 7] >>> 2 !== 0;
export const splitAxis = (bvh: Bvh, node: number): number => bvh.words[node * NODE_WORDS + 7] & 3;
export const leftChild = (node: number): number => node + 1;
export const rightChild = (bvh: Bvh, node: number): number => bvh.words[node * NODE_WORDS + 6];
export const firstPrim = (bvh: Bvh, node: number): number => bvh.words[node * NODE_WORDS + 6];

/** Writes the bounds of `node` into out[0..6) as minX, minY, minZ, maxX, maxY, maxZ. */
export function nodeBounds(bvh: Bvh, node: number, out: Float32Array | number[] = new Float32Array(6)): Float32Array | number[] {
  const o = node * NODE_WORDS;
  for (let k = 0; k < 6; k++) out[k] = bvh.nodes[o + k];
  return out;
}

/** Allocates node storage for `count` nodes: both views over one ArrayBuffer. */
export function allocateNodes(count: number): { nodes: Float32Array; words: Uint32Array } {
  const buffer = new ArrayBuffer(count * NODE_BYTES);
  return { nodes: new Float32Array(buffer), words: new Uint32Array(buffer) };
}

/**
 * Rebuilds the two views after a structured clone or transfer (a clone keeps them sharing one
 * buffer, but a caller that only kept `nodes` can recover `words` here).
 */
export function bvhFromNodes(nodes: Float32Array, primIndices: Uint32Array, nodeCount: number): Bvh {
  return { nodes, words: new Uint32Array(nodes.buffer, nodes.byteOffset, nodes.length), primIndices, nodeCount };
}

/** Buffers to list as transferables when posting a Bvh to a worker. */
export function bvhTransferables(bvh: Bvh): ArrayBuffer[] {
  const list: ArrayBuffer[] = [];
  for (const b of [bvh.nodes.buffer, bvh.primIndices.buffer]) {
    if (b instanceof ArrayBuffer && !list.includes(b)) list.push(b);
  }
  return list;
}

/** Bytes held by a Bvh (nodes + primitive index map). */
export function bvhByteLength(bvh: Bvh): number {
  return bvh.nodes.byteLength + bvh.primIndices.byteLength;
}
