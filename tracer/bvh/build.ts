/**
 * Binned surface-area-heuristic BVH builder (node format: see ./layout.ts).
 *
 * The build is iterative and allocation-free per node: a working copy of the primitive boxes is
 * partitioned in place together with the primitive ids, so every node's primitives sit in one
 * contiguous, sequentially scanned range. Each node bins its primitives by centroid over the node's
 * own box (binned SAH after Wald, "On fast Construction of SAH-based Bounding Volume Hierarchies",
 * 2007: by default only along the node's longest axis), sweeps the bins for the cheapest split and
 * takes both children's exact boxes from the bin boxes, so the partition pass only classifies and
 * swaps. Nodes are emitted depth first, so the left child of node i is node i + 1 and only the right
 * child's index is stored.
 *
 * Split cost (SAH, relative units; common practice): C = Ct + (A_L·n_L + A_R·n_R) / A, against a
 * leaf cost of n. A node becomes a leaf when it holds at most `leafSize` primitives and splitting
 * does not pay; larger nodes whose centroids all fall in one bin are split at the middle of their
 * range so leaves stay bounded.
 *
 * The hot loops live in small functions over preallocated scratch arrays: V8 keeps their doubles
 * in registers, which it does not do for one large function with dozens of live variables.
 */
import { allocateNodes, MAX_DEPTH, type Bvh } from "./layout";

export type BuildBvhOptions = {
  /** Largest leaf the SAH may choose to keep (default 8). Nodes with more primitives are always split. */
  leafSize?: number;
  /** Centroid bins per axis for large nodes (default 12, clamped to 4..64). */
  bins?: number;
  /** Cost of one node visit relative to one primitive test (default 2). */
  traversalCost?: number;
  /** Bin all three axes instead of only the longest one (default false): slower builds, slightly better trees. */
  allAxes?: boolean;
};

const W = 8; // NODE_WORDS, local so the hot loop reads a constant

/**
 * Builds a BVH over `bounds` (minX, minY, minZ, maxX, maxY, maxZ per primitive, float32).
 * An empty input gives one root node with an empty box (+∞ min, −∞ max) that every ray misses.
 */
export function buildBvh(bounds: Float32Array, options: BuildBvhOptions = {}): Bvh {
  return buildInto(bounds, false, options);
}

/**
 * Same as buildBvh, but may reorder `bounds` in place instead of copying it: for callers that
 * computed the boxes only to build the tree (saves one copy of 24 bytes per primitive).
 */
export function buildBvhConsuming(bounds: Float32Array, options: BuildBvhOptions = {}): Bvh {
  return buildInto(bounds, true, options);
}

function buildInto(bounds: Float32Array, consume: boolean, options: BuildBvhOptions): Bvh {
  if (!warmed) warmUp();
  if (bounds.length % 6 !== 0) throw new Error(`buildBvh: bounds length ${bounds.length} is not a multiple of 6`);
  const n = bounds.length / 6;
  const leafSize = Math.max(1, Math.min(Math.floor(options.leafSize ?? 8), 1 << 20));
  const B = Math.max(4, Math.min(64, Math.floor(options.bins ?? 12)));
  const Ct = options.traversalCost ?? 2;
  const allAxes = options.allAxes ?? false;

  const ids = new Uint32Array(n);
  for (let i = 0; i < n; i++) ids[i] = i;
  if (n === 0) {
    const { nodes, words } = allocateNodes(1);
    nodes[0] = nodes[1] = nodes[2] = Infinity;
    nodes[3] = nodes[4] = nodes[5] = -Infinity;
    return { nodes, words, primIndices: ids, nodeCount: 1 };
  }
  const box = consume ? bounds : bounds.slice(); // permuted alongside ids
  // 2n − 1 nodes is the worst case (one primitive per leaf); most trees need far fewer, so start
  // smaller and grow, which keeps untouched memory from being zeroed and copied.
  let capacity = Math.min(2 * n - 1, n + 1024);
  let { nodes: nodeF, words: nodeU } = allocateNodes(capacity);

  const s: Scratch = {
    box, ids, B,
    binCount: new Int32Array(3 * B),
    binBox: new Float64Array(3 * B * 6),
    rightArea: new Float64Array(B),
    rightCnt: new Int32Array(B),
    // [0..6) box of the current node, [6..12) its left child, [12..18) its right child
    cur: new Float64Array(18),
    best: new Float64Array(4), // cost, axis, split bin, bin count
  };

  // Pending right children: ints (start, end, parent, depth) + node box (6 doubles).
  const STACK = MAX_DEPTH + 4;
  const stI = new Int32Array(STACK * 4);
  const stF = new Float64Array(STACK * 6);
  let sp = 0;

  let start = 0, end = n, parent = -1, depth = 0;
  const cur = s.cur;
  rootBox(box, n, cur);

  let nodeCount = 0;
  for (;;) {
    const node = nodeCount++;
    if (node >= capacity) {
      capacity = Math.min(2 * n - 1, capacity * 2);
      const grown = allocateNodes(capacity);
      grown.nodes.set(nodeF);
      nodeF = grown.nodes;
      nodeU = grown.words;
    }
    if (parent >= 0) nodeU[parent * W + 6] = node;
    const no = node * W;
    nodeF[no] = cur[0]; nodeF[no + 1] = cur[1]; nodeF[no + 2] = cur[2];
    nodeF[no + 3] = cur[3]; nodeF[no + 4] = cur[4]; nodeF[no + 5] = cur[5];
    const count = end - start;

    // -1: leaf, -2: split at the middle of the range, >= 0: split after this bin on `axis`.
    let split = -1, axis = 0;
    // Splitting costs at least Ct, so nodes of at most Ct primitives (and at most leafSize) stay leaves unbinned.
    if (count > 1 && depth < MAX_DEPTH && !(count <= Ct && count <= leafSize)) {
      const bins = count < B ? (count < 4 ? 4 : count) : B;
      if (allAxes) binAll(s, start, end, bins);
      else binLongest(s, start, end, bins);
      const bestCost = s.best[0];
      if (bestCost === Infinity) {
        split = count <= leafSize ? -1 : -2;
      } else {
        const dx = cur[3] - cur[0], dy = cur[4] - cur[1], dz = cur[5] - cur[2];
        const area = dx * dy + dy * dz + dz * dx;
        const splitCost = Ct + (area > 0 ? bestCost / area : count);
        if (count <= leafSize && count <= splitCost) split = -1;
        else { axis = s.best[1]; split = s.best[2]; }
      }
    }

    if (split === -1) {
      nodeU[no + 6] = start;
      nodeU[no + 7] = count << 2;
      if (sp === 0) break;
      sp--;
      start = stI[sp * 4]; end = stI[sp * 4 + 1]; parent = stI[sp * 4 + 2]; depth = stI[sp * 4 + 3];
      const f = sp * 6;
      cur[0] = stF[f]; cur[1] = stF[f + 1]; cur[2] = stF[f + 2]; cur[3] = stF[f + 3]; cur[4] = stF[f + 4]; cur[5] = stF[f + 5];
      continue;
    }

    let mid: number;
    if (split === -2) {
      mid = splitMiddle(s, start, end);
    } else {
      childBoxes(s, axis, split, s.best[3]);
      mid = partition(s, start, end, axis, split, s.best[3]);
    }

    nodeU[no + 7] = axis & 3;
    // Push the right child, continue with the left one (it becomes node + 1).
    stI[sp * 4] = mid; stI[sp * 4 + 1] = end; stI[sp * 4 + 2] = node; stI[sp * 4 + 3] = depth + 1;
    const f = sp * 6;
    stF[f] = cur[12]; stF[f + 1] = cur[13]; stF[f + 2] = cur[14]; stF[f + 3] = cur[15]; stF[f + 4] = cur[16]; stF[f + 5] = cur[17];
    sp++;
    end = mid; parent = -1; depth = depth + 1;
    cur[0] = cur[6]; cur[1] = cur[7]; cur[2] = cur[8]; cur[3] = cur[9]; cur[4] = cur[10]; cur[5] = cur[11];
  }

  const trimmed = nodeF.buffer.slice(0, nodeCount * W * 4);
  return { nodes: new Float32Array(trimmed), words: new Uint32Array(trimmed), primIndices: ids, nodeCount };
}

let warmed = false;

/**
 * Runs every path of the builder once on a small input. Without it, the first large build has V8
 * compile the binning loop on-stack before the code after the loop ever ran; that code then lacks
 * type feedback and deoptimises on every later call (measured: ~1000 deopts and 5× slower builds).
 */
function warmUp(): void {
  warmed = true;
  const n = 96;
  const b = new Float32Array(n * 6);
  let x = 12345;
  for (let i = 0; i < b.length; i += 6) {
    for (let k = 0; k < 3; k++) {
      x = (Math.imul(x, 1103515245) + 12345) >>> 0;
      const v = (x >>> 8) / 65536;
      b[i + k] = v;
      b[i + 3 + k] = v + 1;
    }
  }
  for (let r = 0; r < 3; r++) {
    buildBvh(b, { leafSize: 2 });
    buildBvh(b, { leafSize: 2, allAxes: true });
  }
  buildBvh(new Float32Array(n * 6), { leafSize: 2 }); // all boxes equal: middle splits
}

type Scratch = {
  box: Float32Array;
  ids: Uint32Array;
  B: number;
  binCount: Int32Array;
  binBox: Float64Array;
  rightArea: Float64Array;
  rightCnt: Int32Array;
  cur: Float64Array;
  best: Float64Array;
};

/**
 * Bin scale for one axis of the node box: maps doubled centroids (min + max, which lie in
 * [2·lo, 2·hi]) onto [0, bins); 0 if the box is flat on that axis.
 */
function binScale(lo: number, hi: number, bins: number): number {
  const e = 2 * (hi - lo);
  // Just under `bins` so a centroid on the upper face still lands in the last bin.
  return e > 0 ? (bins * (1 - 1e-7)) / e : 0;
}

function rootBox(box: Float32Array, n: number, cur: Float64Array): void {
  let bx0 = Infinity, by0 = Infinity, bz0 = Infinity, bx1 = -Infinity, by1 = -Infinity, bz1 = -Infinity;
  for (let i = 0; i < n; i++) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    if (a0 < bx0) bx0 = a0; if (a1 < by0) by0 = a1; if (a2 < bz0) bz0 = a2;
    if (a3 > bx1) bx1 = a3; if (a4 > by1) by1 = a4; if (a5 > bz1) bz1 = a5;
  }
  cur[0] = bx0; cur[1] = by0; cur[2] = bz0; cur[3] = bx1; cur[4] = by1; cur[5] = bz1;
}

function clearBins(s: Scratch, a: number, bins: number): void {
  const { binCount, binBox } = s;
  const base = a * s.B;
  for (let b = base; b < base + bins; b++) {
    binCount[b] = 0;
    const o = b * 6;
    binBox[o] = Infinity; binBox[o + 1] = Infinity; binBox[o + 2] = Infinity;
    binBox[o + 3] = -Infinity; binBox[o + 4] = -Infinity; binBox[o + 5] = -Infinity;
  }
}

/** Bins [start, end) on all three axes and leaves the cheapest split in s.best. */
function binAll(s: Scratch, start: number, end: number, bins: number): void {
  const { box, binCount, binBox, cur, B } = s;
  const cx0 = 2 * cur[0], cy0 = 2 * cur[1], cz0 = 2 * cur[2];
  const sx = binScale(cur[0], cur[3], bins), sy = binScale(cur[1], cur[4], bins), sz = binScale(cur[2], cur[5], bins);
  s.best[0] = Infinity;
  s.best[3] = bins;
  clearBins(s, 0, bins); clearBins(s, 1, bins); clearBins(s, 2, bins);
  const yb = B, zb = 2 * B;
  for (let i = start; i < end; i++) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    let b = ((a0 + a3 - cx0) * sx) | 0;
    binCount[b]++;
    let q = b * 6;
    if (a0 < binBox[q]) binBox[q] = a0; if (a1 < binBox[q + 1]) binBox[q + 1] = a1; if (a2 < binBox[q + 2]) binBox[q + 2] = a2;
    if (a3 > binBox[q + 3]) binBox[q + 3] = a3; if (a4 > binBox[q + 4]) binBox[q + 4] = a4; if (a5 > binBox[q + 5]) binBox[q + 5] = a5;
    b = yb + (((a1 + a4 - cy0) * sy) | 0);
    binCount[b]++;
    q = b * 6;
    if (a0 < binBox[q]) binBox[q] = a0; if (a1 < binBox[q + 1]) binBox[q + 1] = a1; if (a2 < binBox[q + 2]) binBox[q + 2] = a2;
    if (a3 > binBox[q + 3]) binBox[q + 3] = a3; if (a4 > binBox[q + 4]) binBox[q + 4] = a4; if (a5 > binBox[q + 5]) binBox[q + 5] = a5;
    b = zb + (((a2 + a5 - cz0) * sz) | 0);
    binCount[b]++;
    q = b * 6;
    if (a0 < binBox[q]) binBox[q] = a0; if (a1 < binBox[q + 1]) binBox[q + 1] = a1; if (a2 < binBox[q + 2]) binBox[q + 2] = a2;
    if (a3 > binBox[q + 3]) binBox[q + 3] = a3; if (a4 > binBox[q + 4]) binBox[q + 4] = a4; if (a5 > binBox[q + 5]) binBox[q + 5] = a5;
  }
  sweep(s, 0, bins);
  sweep(s, 1, bins);
  sweep(s, 2, bins);
}

/** Bins [start, end) only along the longest axis of the node box. */
function binLongest(s: Scratch, start: number, end: number, bins: number): void {
  const { box, binCount, binBox, cur, B } = s;
  const ex = cur[3] - cur[0], ey = cur[4] - cur[1], ez = cur[5] - cur[2];
  const a = ex >= ey && ex >= ez ? 0 : ey >= ez ? 1 : 2;
  const c0 = 2 * cur[a];
  const sc = binScale(cur[a], cur[a + 3], bins);
  s.best[0] = Infinity;
  s.best[3] = bins;
  clearBins(s, a, bins);
  const base = a * B;
  for (let i = start; i < end; i++) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    const b = base + (((box[o + a] + box[o + a + 3] - c0) * sc) | 0);
    binCount[b]++;
    const q = b * 6;
    if (a0 < binBox[q]) binBox[q] = a0; if (a1 < binBox[q + 1]) binBox[q + 1] = a1; if (a2 < binBox[q + 2]) binBox[q + 2] = a2;
    if (a3 > binBox[q + 3]) binBox[q + 3] = a3; if (a4 > binBox[q + 4]) binBox[q + 4] = a4; if (a5 > binBox[q + 5]) binBox[q + 5] = a5;
  }
  sweep(s, a, bins);
}

/** SAH sweep over the bins of one axis; improves s.best (cost = A_L·n_L + A_R·n_R). */
function sweep(s: Scratch, a: number, bins: number): void {
  const { binCount, binBox, rightArea, rightCnt, best } = s;
  const base = a * s.B;
  let m0 = Infinity, m1 = Infinity, m2 = Infinity, M0 = -Infinity, M1 = -Infinity, M2 = -Infinity, c = 0;
  for (let k = bins - 1; k > 0; k--) {
    const q = (base + k) * 6;
    if (binBox[q] < m0) m0 = binBox[q]; if (binBox[q + 1] < m1) m1 = binBox[q + 1]; if (binBox[q + 2] < m2) m2 = binBox[q + 2];
    if (binBox[q + 3] > M0) M0 = binBox[q + 3]; if (binBox[q + 4] > M1) M1 = binBox[q + 4]; if (binBox[q + 5] > M2) M2 = binBox[q + 5];
    c += binCount[base + k];
    const dx = M0 - m0, dy = M1 - m1, dz = M2 - m2;
    rightArea[k - 1] = c > 0 ? dx * dy + dy * dz + dz * dx : 0;
    rightCnt[k - 1] = c;
  }
  m0 = Infinity; m1 = Infinity; m2 = Infinity; M0 = -Infinity; M1 = -Infinity; M2 = -Infinity; c = 0;
  for (let k = 0; k < bins - 1; k++) {
    const q = (base + k) * 6;
    if (binBox[q] < m0) m0 = binBox[q]; if (binBox[q + 1] < m1) m1 = binBox[q + 1]; if (binBox[q + 2] < m2) m2 = binBox[q + 2];
    if (binBox[q + 3] > M0) M0 = binBox[q + 3]; if (binBox[q + 4] > M1) M1 = binBox[q + 4]; if (binBox[q + 5] > M2) M2 = binBox[q + 5];
    c += binCount[base + k];
    const rc = rightCnt[k];
    if (c === 0 || rc === 0) continue;
    const dx = M0 - m0, dy = M1 - m1, dz = M2 - m2;
    const cost = (dx * dy + dy * dz + dz * dx) * c + rightArea[k] * rc;
    if (cost < best[0]) { best[0] = cost; best[1] = a; best[2] = k; }
  }
}

/** Children's exact boxes from the bin boxes of the chosen axis: bins [0, split] and (split, bins). */
function childBoxes(s: Scratch, axis: number, split: number, bins: number): void {
  const { binBox, cur } = s;
  const base = axis * s.B;
  for (let side = 0; side < 2; side++) {
    const from = side === 0 ? 0 : split + 1, to = side === 0 ? split + 1 : bins;
    let m0 = Infinity, m1 = Infinity, m2 = Infinity, M0 = -Infinity, M1 = -Infinity, M2 = -Infinity;
    for (let k = from; k < to; k++) {
      const q = (base + k) * 6;
      if (binBox[q] < m0) m0 = binBox[q]; if (binBox[q + 1] < m1) m1 = binBox[q + 1]; if (binBox[q + 2] < m2) m2 = binBox[q + 2];
      if (binBox[q + 3] > M0) M0 = binBox[q + 3]; if (binBox[q + 4] > M1) M1 = binBox[q + 4]; if (binBox[q + 5] > M2) M2 = binBox[q + 5];
    }
    const o = 6 + side * 6;
    cur[o] = m0; cur[o + 1] = m1; cur[o + 2] = m2; cur[o + 3] = M0; cur[o + 4] = M1; cur[o + 5] = M2;
  }
}

/**
 * Partitions [start, end) so primitives whose centroid bin on `axis` is <= `split` come first
 * (same bin arithmetic as the binning pass). Returns the first index of the right side.
 */
function partition(s: Scratch, start: number, end: number, axis: number, split: number, bins: number): number {
  const { box, ids, cur } = s;
  const c0 = 2 * cur[axis];
  const scale = binScale(cur[axis], cur[axis + 3], bins);
  let i = start, j = end - 1;
  while (i <= j) {
    const o = i * 6;
    if (((box[o + axis] + box[o + axis + 3] - c0) * scale | 0) <= split) {
      i++;
    } else {
      const p = j * 6;
      let t = box[o]; box[o] = box[p]; box[p] = t;
      t = box[o + 1]; box[o + 1] = box[p + 1]; box[p + 1] = t;
      t = box[o + 2]; box[o + 2] = box[p + 2]; box[p + 2] = t;
      t = box[o + 3]; box[o + 3] = box[p + 3]; box[p + 3] = t;
      t = box[o + 4]; box[o + 4] = box[p + 4]; box[p + 4] = t;
      t = box[o + 5]; box[o + 5] = box[p + 5]; box[p + 5] = t;
      t = ids[i]; ids[i] = ids[j]; ids[j] = t;
      j--;
    }
  }
  return i;
}

/** Degenerate node (all centroids in one bin): halves the range and computes both children's boxes. */
function splitMiddle(s: Scratch, start: number, end: number): number {
  const mid = start + ((end - start) >> 1);
  const { box, cur } = s;
  for (let side = 0; side < 2; side++) {
    const from = side === 0 ? start : mid, to = side === 0 ? mid : end;
    let x0 = Infinity, y0 = Infinity, z0 = Infinity, x1 = -Infinity, y1 = -Infinity, z1 = -Infinity;
    for (let i = from; i < to; i++) {
      const o = i * 6;
      if (box[o] < x0) x0 = box[o]; if (box[o + 1] < y0) y0 = box[o + 1]; if (box[o + 2] < z0) z0 = box[o + 2];
      if (box[o + 3] > x1) x1 = box[o + 3]; if (box[o + 4] > y1) y1 = box[o + 4]; if (box[o + 5] > z1) z1 = box[o + 5];
    }
    const out = 6 + side * 6;
    cur[out] = x0; cur[out + 1] = y0; cur[out + 2] = z0; cur[out + 3] = x1; cur[out + 4] = y1; cur[out + 5] = z1;
  }
  return mid;
}
