/**
 * Binned surface-area-heuristic BVH builder (node format: see ./layout.ts).
 *
 * The build is iterative and allocation-free per node: a working copy of the primitive boxes is
 * partitioned in place together with the primitive ids, so every node's primitives sit in one
 * contiguous, sequentially scanned range. Each node bins its primitives by centroid, sweeps the
 * bins for the cheapest split, and the partition pass gathers both children's exact boxes and
 * centroid boxes, so each level costs two passes over its primitives. Nodes are emitted depth
 * first, so the left child of node i is node i + 1 and only the right child's index is stored.
 *
 * Split cost (SAH, relative units; common practice): C = Ct + (A_L·n_L + A_R·n_R) / A, against a
 * leaf cost of n. A node becomes a leaf when it holds at most `leafSize` primitives and splitting
 * does not pay; larger nodes whose centroids all coincide are split at the middle of their range so
 * leaves stay bounded.
 *
 * The hot loops live in small functions over preallocated scratch arrays: V8 keeps their doubles
 * in registers, which it does not do for one large function with dozens of live variables.
 */
import { allocateNodes, MAX_DEPTH, type Bvh } from "./layout";

export type BuildBvhOptions = {
  /** Largest leaf the SAH may choose to keep (default 8). Nodes with more primitives are always split. */
  leafSize?: number;
  /** Centroid bins per axis for large nodes (default 16, clamped to 4..64). */
  bins?: number;
  /** Cost of one node visit relative to one primitive test (default 1). */
  traversalCost?: number;
  /** Bin all three axes (default true). false bins only the axis of largest centroid extent: faster, slightly worse trees. */
  allAxes?: boolean;
};

const W = 8; // NODE_WORDS, local so the hot loop reads a constant

/**
 * Builds a BVH over `bounds` (minX, minY, minZ, maxX, maxY, maxZ per primitive, float32).
 * An empty input gives one root node with an empty box (+∞ min, −∞ max) that every ray misses.
 */
export function buildBvh(bounds: Float32Array, options: BuildBvhOptions = {}): Bvh {
  if (bounds.length % 6 !== 0) throw new Error(`buildBvh: bounds length ${bounds.length} is not a multiple of 6`);
  const n = bounds.length / 6;
  const leafSize = Math.max(1, Math.min(Math.floor(options.leafSize ?? 8), 1 << 20));
  const B = Math.max(4, Math.min(64, Math.floor(options.bins ?? 16)));
  const Ct = options.traversalCost ?? 1;
  const allAxes = options.allAxes ?? true;

  const ids = new Uint32Array(n);
  for (let i = 0; i < n; i++) ids[i] = i;
  if (n === 0) {
    const { nodes, words } = allocateNodes(1);
    nodes[0] = nodes[1] = nodes[2] = Infinity;
    nodes[3] = nodes[4] = nodes[5] = -Infinity;
    return { nodes, words, primIndices: ids, nodeCount: 1 };
  }
  const box = bounds.slice(); // working copy, permuted alongside ids
  const { nodes: nodeF, words: nodeU } = allocateNodes(2 * n - 1);

  const s: Scratch = {
    box, ids, B,
    binCount: new Int32Array(3 * B),
    binBox: new Float64Array(3 * B * 6),
    rightArea: new Float64Array(B),
    rightCnt: new Int32Array(B),
    // [0..6) node box, [6..12) doubled-centroid box of the current task; [12..24) left child, [24..36) right child
    cur: new Float64Array(36),
    best: new Float64Array(3), // cost, axis, split bin
  };

  // Pending right children: ints (start, end, parent, depth) + node box and centroid box (12 doubles).
  const STACK = MAX_DEPTH + 4;
  const stI = new Int32Array(STACK * 4);
  const stF = new Float64Array(STACK * 12);
  let sp = 0;

  let start = 0, end = n, parent = -1, depth = 0;
  rootBoxes(box, n, s.cur);

  let nodeCount = 0;
  const cur = s.cur;
  for (;;) {
    const node = nodeCount++;
    if (parent >= 0) nodeU[parent * W + 6] = node;
    const no = node * W;
    nodeF[no] = cur[0]; nodeF[no + 1] = cur[1]; nodeF[no + 2] = cur[2];
    nodeF[no + 3] = cur[3]; nodeF[no + 4] = cur[4]; nodeF[no + 5] = cur[5];
    const count = end - start;

    // -1: leaf, -2: split at the middle of the range, >= 0: split bin on axis `axis`.
    let split = -1, axis = 0;
    if (count > 1 && depth < MAX_DEPTH) {
      const bins = binsFor(count, B);
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
        else { split = s.best[2]; axis = s.best[1]; }
      }
    }

    if (split === -1) {
      nodeU[no + 6] = start;
      nodeU[no + 7] = count << 2;
      if (sp === 0) break;
      sp--;
      start = stI[sp * 4]; end = stI[sp * 4 + 1]; parent = stI[sp * 4 + 2]; depth = stI[sp * 4 + 3];
      for (let k = 0; k < 12; k++) cur[k] = stF[sp * 12 + k];
      continue;
    }

    const mid = split === -2 ? splitMiddle(s, start, end) : partition(s, start, end, axis, split, binsFor(count, B));

    nodeU[no + 7] = axis & 3;
    // Push the right child, continue with the left one (it becomes node + 1).
    stI[sp * 4] = mid; stI[sp * 4 + 1] = end; stI[sp * 4 + 2] = node; stI[sp * 4 + 3] = depth + 1;
    for (let k = 0; k < 12; k++) stF[sp * 12 + k] = cur[24 + k];
    sp++;
    end = mid; parent = -1; depth = depth + 1;
    for (let k = 0; k < 12; k++) cur[k] = cur[12 + k];
  }

  const trimmed = nodeF.buffer.slice(0, nodeCount * W * 4);
  return { nodes: new Float32Array(trimmed), words: new Uint32Array(trimmed), primIndices: ids, nodeCount };
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

/** Small nodes use fewer bins: there the per-node sweep, not the primitives, dominates. */
const binsFor = (count: number, B: number): number => (count < B ? (count < 4 ? 4 : count) : B);

/** Bin scale for one axis: maps the doubled-centroid range onto [0, nb); 0 if the axis is flat. */
function binScale(lo: number, hi: number, bins: number): number {
  const e = hi - lo;
  // Just under `bins` so the largest centroid still lands in the last bin.
  return e > 0 ? (bins * (1 - 1e-7)) / e : 0;
}

function rootBoxes(box: Float32Array, n: number, cur: Float64Array): void {
  let bx0 = Infinity, by0 = Infinity, bz0 = Infinity, bx1 = -Infinity, by1 = -Infinity, bz1 = -Infinity;
  let cx0 = Infinity, cy0 = Infinity, cz0 = Infinity, cx1 = -Infinity, cy1 = -Infinity, cz1 = -Infinity;
  for (let i = 0; i < n; i++) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    if (a0 < bx0) bx0 = a0; if (a1 < by0) by0 = a1; if (a2 < bz0) bz0 = a2;
    if (a3 > bx1) bx1 = a3; if (a4 > by1) by1 = a4; if (a5 > bz1) bz1 = a5;
    // Centroids are kept doubled (min + max): only comparisons and bin indices use them.
    const c0 = a0 + a3, c1 = a1 + a4, c2 = a2 + a5;
    if (c0 < cx0) cx0 = c0; if (c0 > cx1) cx1 = c0;
    if (c1 < cy0) cy0 = c1; if (c1 > cy1) cy1 = c1;
    if (c2 < cz0) cz0 = c2; if (c2 > cz1) cz1 = c2;
  }
  cur[0] = bx0; cur[1] = by0; cur[2] = bz0; cur[3] = bx1; cur[4] = by1; cur[5] = bz1;
  cur[6] = cx0; cur[7] = cy0; cur[8] = cz0; cur[9] = cx1; cur[10] = cy1; cur[11] = cz1;
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
  const cx0 = cur[6], cy0 = cur[7], cz0 = cur[8];
  const sx = binScale(cx0, cur[9], bins), sy = binScale(cy0, cur[10], bins), sz = binScale(cz0, cur[11], bins);
  s.best[0] = Infinity;
  if (sx === 0 && sy === 0 && sz === 0) return;
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
  if (sx > 0) sweep(s, 0, bins);
  if (sy > 0) sweep(s, 1, bins);
  if (sz > 0) sweep(s, 2, bins);
}

/** Bins [start, end) only along the axis of largest centroid extent. */
function binLongest(s: Scratch, start: number, end: number, bins: number): void {
  const { box, binCount, binBox, cur, B } = s;
  const ex = cur[9] - cur[6], ey = cur[10] - cur[7], ez = cur[11] - cur[8];
  const a = ex >= ey && ex >= ez ? 0 : ey >= ez ? 1 : 2;
  const c0 = cur[6 + a];
  const sc = binScale(c0, cur[9 + a], bins);
  s.best[0] = Infinity;
  if (sc === 0) return;
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

/**
 * Partitions [start, end) so primitives whose centroid bin on `axis` is <= `split` come first,
 * and writes both children's node and centroid boxes into cur[12..36). Returns the first right index.
 */
function partition(s: Scratch, start: number, end: number, axis: number, split: number, bins: number): number {
  const { box, ids, cur } = s;
  const cMin = cur[6 + axis];
  const scale = binScale(cMin, cur[9 + axis], bins);
  let lx0 = Infinity, ly0 = Infinity, lz0 = Infinity, lx1 = -Infinity, ly1 = -Infinity, lz1 = -Infinity;
  let rx0 = Infinity, ry0 = Infinity, rz0 = Infinity, rx1 = -Infinity, ry1 = -Infinity, rz1 = -Infinity;
  let lcx0 = Infinity, lcy0 = Infinity, lcz0 = Infinity, lcx1 = -Infinity, lcy1 = -Infinity, lcz1 = -Infinity;
  let rcx0 = Infinity, rcy0 = Infinity, rcz0 = Infinity, rcx1 = -Infinity, rcy1 = -Infinity, rcz1 = -Infinity;
  let i = start, j = end - 1;
  while (i <= j) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    const c0 = a0 + a3, c1 = a1 + a4, c2 = a2 + a5;
    if ((((axis === 0 ? c0 : axis === 1 ? c1 : c2) - cMin) * scale | 0) <= split) {
      if (a0 < lx0) lx0 = a0; if (a1 < ly0) ly0 = a1; if (a2 < lz0) lz0 = a2;
      if (a3 > lx1) lx1 = a3; if (a4 > ly1) ly1 = a4; if (a5 > lz1) lz1 = a5;
      if (c0 < lcx0) lcx0 = c0; if (c0 > lcx1) lcx1 = c0;
      if (c1 < lcy0) lcy0 = c1; if (c1 > lcy1) lcy1 = c1;
      if (c2 < lcz0) lcz0 = c2; if (c2 > lcz1) lcz1 = c2;
      i++;
    } else {
      if (a0 < rx0) rx0 = a0; if (a1 < ry0) ry0 = a1; if (a2 < rz0) rz0 = a2;
      if (a3 > rx1) rx1 = a3; if (a4 > ry1) ry1 = a4; if (a5 > rz1) rz1 = a5;
      if (c0 < rcx0) rcx0 = c0; if (c0 > rcx1) rcx1 = c0;
      if (c1 < rcy0) rcy0 = c1; if (c1 > rcy1) rcy1 = c1;
      if (c2 < rcz0) rcz0 = c2; if (c2 > rcz1) rcz1 = c2;
      const p = j * 6;
      box[o] = box[p]; box[o + 1] = box[p + 1]; box[o + 2] = box[p + 2];
      box[o + 3] = box[p + 3]; box[o + 4] = box[p + 4]; box[o + 5] = box[p + 5];
      box[p] = a0; box[p + 1] = a1; box[p + 2] = a2; box[p + 3] = a3; box[p + 4] = a4; box[p + 5] = a5;
      const t = ids[i]; ids[i] = ids[j]; ids[j] = t;
      j--;
    }
  }
  cur[12] = lx0; cur[13] = ly0; cur[14] = lz0; cur[15] = lx1; cur[16] = ly1; cur[17] = lz1;
  cur[18] = lcx0; cur[19] = lcy0; cur[20] = lcz0; cur[21] = lcx1; cur[22] = lcy1; cur[23] = lcz1;
  cur[24] = rx0; cur[25] = ry0; cur[26] = rz0; cur[27] = rx1; cur[28] = ry1; cur[29] = rz1;
  cur[30] = rcx0; cur[31] = rcy0; cur[32] = rcz0; cur[33] = rcx1; cur[34] = rcy1; cur[35] = rcz1;
  return i;
}

/** Degenerate node (all centroids equal): halves the range and computes both children's boxes. */
function splitMiddle(s: Scratch, start: number, end: number): number {
  const mid = start + ((end - start) >> 1);
  const { box, cur } = s;
  for (let side = 0; side < 2; side++) {
    const from = side === 0 ? start : mid, to = side === 0 ? mid : end;
    const out = 12 + side * 12;
    let x0 = Infinity, y0 = Infinity, z0 = Infinity, x1 = -Infinity, y1 = -Infinity, z1 = -Infinity;
    for (let i = from; i < to; i++) {
      const o = i * 6;
      if (box[o] < x0) x0 = box[o]; if (box[o + 1] < y0) y0 = box[o + 1]; if (box[o + 2] < z0) z0 = box[o + 2];
      if (box[o + 3] > x1) x1 = box[o + 3]; if (box[o + 4] > y1) y1 = box[o + 4]; if (box[o + 5] > z1) z1 = box[o + 5];
    }
    cur[out] = x0; cur[out + 1] = y0; cur[out + 2] = z0; cur[out + 3] = x1; cur[out + 4] = y1; cur[out + 5] = z1;
    // All centroids coincide: the parent's centroid box is the child's too.
    for (let k = 0; k < 6; k++) cur[out + 6 + k] = cur[6 + k];
  }
  return mid;
}
