/**
 * Binned surface-area-heuristic BVH builder (node format: see ./layout.ts).
 *
 * The build is iterative and allocation-free per node: a working copy of the primitive boxes is
 * partitioned in place together with the primitive ids, so every node's primitives sit in one
 * contiguous, sequentially scanned range. Each node bins its primitives by centroid over the node's
 * own box (binned SAH after Wald, "On fast Construction of SAH-based Bounding Volume Hierarchies",
 * 2007: by default only along the node's longest axis) and sweeps the bins for the cheapest split.
 * Nodes are emitted depth first, so the left child of node i is node i + 1 and only the right
 * child's index is stored.
 *
 * Split cost (SAH, relative units; common practice): C = Ct + (A_L·n_L + A_R·n_R) / A, against a
 * leaf cost of n. A node becomes a leaf when it holds at most `leafSize` primitives and splitting
 * does not pay. When all centroids fall in one bin of the node box (a few large primitives, such
 * as a floor among small ones, stretch the box far beyond the rest), the node is binned again over
 * its centroids' own extent; only nodes whose centroids coincide are split at the middle of their
 * range, so leaves stay bounded. On the example scenes this halved the SAH cost of the scene trees
 * holding such primitives (osier-lamp-study 10.9 → 5.5, wren-kettle-turntable 15.5 → 7.4; path
 * tracing samples per CPU second 1.03–1.1× and 1.4×, glass-carafe-sky 1.2–1.25×).
 *
 * A node of at most Ct + 1 primitives whose primitive boxes' areas sum to at least (n − Ct)·A stays a
 * leaf without binning: that sum bounds A_L·n_L + A_R·n_R from below for every split, so none can
 * pay. On the bunny meshes (Ct = 4) it settles 90% of the 5-primitive nodes; build time 0.98×,
 * same trees. Nodes of 6–8 primitives rarely meet the bound and are binned as before.
 *
 * Where the time goes, measured on the bunny meshes (3.7k–941k triangles) on a 2-core machine:
 * data-dependent branches that mispredict, and passes over the primitives, not arithmetic. Hence:
 * - Nodes of more than 2·SAMPLE_SIZE primitives bin an evenly strided sample of about SAMPLE_SIZE
 *   of them. The full binning pass was a third of the build; the sampled planes cost 0.7–1.1%
 *   of SAH cost, 1–3% more node visits and up to 2% fewer triangle tests per ray on these meshes
 *   (closest-hit rays per CPU second 0.98–1.03× those of fully binned trees). A sample can miss the few
 *   large primitives that decide a split, so the partition's exact boxes are checked against the
 *   sample's prediction (see buildInto).
 * - Bin boxes and the sweep's running boxes are updated branch-free, min(a, b) = b + (d − |d|)/2
 *   with d = a − b (V8 compiles the compare-and-store, and Math.min, to branches; the exact
 *   compare-and-store binning measured 1.12–1.14× the build time). Rounding makes those boxes
 *   approximate, which only affects the choice of plane: the partition gathers the children's
 *   exact boxes.
 * - Binning stores each primitive's bin in `keys`, so the partition compares one byte instead of
 *   recomputing the bin, and a mispredicted side resolves sooner.
 * - The partition scans from both ends and swaps only misplaced pairs (Hoare): meshes come in
 *   spatially coherent order, so most primitives already sit on their side.
 * - Nodes under BRANCH_FREE_MAX primitives gather their children's boxes in the partition with the
 *   same branch-free min/max, which is exact when every coordinate pair on an axis differs by a
 *   double-exact amount (checked once per build in rootBox; otherwise compare-and-store is kept).
 *   Build time 0.94–0.95× on the 3.7k/59k bunnies and 0.89–0.95× on the 941k one, same trees.
 *   Larger nodes keep compare-and-store: their running boxes settle early, so its branches predict
 *   well (a whole-mesh partition measured 13 ns per primitive against 15 branch-free).
 * - Small nodes stay binned: an exact sweep over insertion-sorted centroids for nodes of at most
 *   8/16/32 primitives gave up to 0.16% lower SAH cost (59k bunny) but 1.03/1.06/1.10× the build time.
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
  /**
   * Nodes of at most this many primitives (and at most leafSize) become leaves without evaluating
   * any split (default: the traversal cost, below which no split can pay).
   */
  leafWithoutSplitAtMost?: number;
  /** Cost of one node visit relative to one primitive test (default 2). */
  traversalCost?: number;
  /** Bin all three axes instead of only the longest one (default false): slower builds, slightly better trees. */
  allAxes?: boolean;
};

const W = 8; // NODE_WORDS, local so the hot loop reads a constant
/** Sample size for binning large nodes (see the file comment); warmUp lowers it for a moment. */
const SAMPLE_SIZE = 64;
let SAMPLE = SAMPLE_SIZE;
/** Nodes below this many primitives gather their children's boxes branch-free (see partitionBranchFree). */
const BRANCH_FREE_MAX = 1024;

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
  const direct = options.leafWithoutSplitAtMost ?? Ct;

  const ids = identity(n);
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
    box, ids, B, keys: new Uint8Array(n),
    binCount: new Int32Array(3 * B),
    binBox: new Float64Array(3 * B * 6),
    rightArea: new Float64Array(B),
    // [0..6) box of the current node, [6..12) its left child, [12..18) its right child
    cur: new Float64Array(18),
    best: new Float64Array(6), // cost, axis, split bin, bin count, bin origin, bin scale
    exact: false,
  };

  // Pending right children: ints (start, end, parent, depth) + node box (6 doubles).
  const STACK = MAX_DEPTH + 4;
  const stI = new Int32Array(STACK * 4);
  const stF = new Float64Array(STACK * 6);
  let sp = 0;

  let start = 0, end = n, parent = -1, depth = 0;
  const cur = s.cur;
  s.exact = rootBox(box, n, cur);

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
    let split = -1, axis = 0, keyed = false, sampled = false;
    // Splitting costs at least Ct, so nodes of at most Ct primitives (and at most leafSize) stay leaves
    // unbinned; a caller may raise that count (leafWithoutSplitAtMost) to trade a little tree quality for time.
    if (count > 1 && depth < MAX_DEPTH && !(count <= direct && count <= leafSize) &&
        !(count <= leafSize && count <= Ct + 1 && boxAreaSum(box, start, end) >= (count - Ct) * halfArea(cur))) {
      const bins = count < B ? (count < 4 ? 4 : count) : B;
      if (allAxes) binAll(s, start, end, bins);
      else if (count > 2 * SAMPLE) {
        const step = Math.floor(count / SAMPLE);
        binLongest(s, start, end, bins, step);
        sampled = true;
        // Scale the sample's cost to the whole node for the leaf test below.
        s.best[0] *= count / Math.ceil(count / step);
        // All sampled centroids in one bin says little about the rest: bin them all.
        if (s.best[0] === Infinity) { binLongest(s, start, end, bins, 1); keyed = true; sampled = false; }
      } else { binLongest(s, start, end, bins, 1); keyed = true; }
      // All centroids in one bin of the node box (a few large primitives can stretch the box far
      // beyond the rest): bin over the centroids' own extent on its widest axis before falling
      // back to halving the list, whose outcome depends on the primitives' order.
      if (s.best[0] === Infinity && count > leafSize && binCentroidRange(s, start, end, bins)) keyed = true;
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
      if (!keyed) computeKeys(s, start, end, axis);
      mid = s.exact && count < BRANCH_FREE_MAX ? partitionBranchFree(s, start, end, split) : partition(s, start, end, split);
      // A sample can miss the few large primitives that decide the split (a floor or wall among
      // thousands of small triangles). The partition measured the chosen split exactly: if it
      // costs far more than the sample predicted (measured on meshes: median 1.1×, 99th
      // percentile 1.35×; scenes with large walls: up to 580×), bin the whole node and split again.
      if (sampled && splitCostOf(cur, mid - start, end - mid) > 1.5 * s.best[0]) {
        binLongest(s, start, end, s.best[3], 1);
        if (s.best[0] !== Infinity) { axis = s.best[1]; mid = partition(s, start, end, s.best[2]); }
      }
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

/**
 * 0, 1, …, n − 1. Its own function: a long loop inside buildInto had V8 compile all of buildInto
 * on-stack for it, and once more for the node loop (about 60–100 ms of compiler time each on the
 * 941k-triangle bunny's first build).
 */
function identity(n: number): Uint32Array {
  const ids = new Uint32Array(n);
  for (let i = 0; i < n; i++) ids[i] = i;
  return ids;
}

let warmed = false;

/**
 * Runs every path of the builder once on a small input. Without it, the first large build has V8
 * compile the binning loop on-stack before the code after the loop ever ran; that code then lacks
 * type feedback and deoptimises on every later call (measured: ~1000 deopts and 5× slower builds).
 * The consuming call with a traversal cost is the batch query's; without it the first optimised
 * buildInto saw other input shapes and deoptimised ("wrong map") in the second or third build.
 */
function warmUp(): void {
  warmed = true;
  SAMPLE = 8;
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
    buildBvhConsuming(b.slice(), { traversalCost: 4 });
    buildBvh(b);
  }
  buildBvh(new Float32Array(n * 6), { leafSize: 2 }); // all boxes equal: middle splits
  // One huge primitive the sample skips (index 1): first around a cluster, so every centroid
  // shares a bin of the node box (centroid-range binning), then beside a row of small boxes
  // along x, so the sampled split costs far more than predicted (binning the whole node again).
  for (const spread of [1, 10]) {
    const c = new Float32Array(n * 6);
    for (let i = 0; i < n; i++) {
      for (let k = 0; k < 3; k++) c[i * 6 + k] = ((b[i * 6 + k] / 256) * (k === 0 ? spread : 1));
      for (let k = 0; k < 3; k++) c[i * 6 + 3 + k] = c[i * 6 + k] + 0.01;
    }
    c.set([spread / 2 - 100, -100, -100, spread / 2 + 100, 100, 100], 6);
    for (let r = 0; r < 3; r++) buildBvh(c, { leafSize: 2 });
  }
  SAMPLE = SAMPLE_SIZE;
}

type Scratch = {
  /** Bin of each primitive along the chosen axis, written by the binning pass (bins <= 64 fit a byte). */
  keys: Uint8Array;
  box: Float32Array;
  ids: Uint32Array;
  B: number;
  binCount: Int32Array;
  binBox: Float64Array;
  /** A_R·n_R of the plane after each bin, from the sweep's first pass. */
  rightArea: Float64Array;
  cur: Float64Array;
  best: Float64Array;
  /** True when the branch-free min/max is exact on every coordinate of this input (see rootBox). */
  exact: boolean;
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

/** Half surface area of the node box in cur[0..6). */
function halfArea(cur: Float64Array): number {
  const dx = cur[3] - cur[0], dy = cur[4] - cur[1], dz = cur[5] - cur[2];
  return dx * dy + dy * dz + dz * dx;
}

/**
 * Sum of the half areas of the primitive boxes in [start, end): a lower bound of A_L·n_L + A_R·n_R
 * for every split, since each child's box holds each of its primitives' boxes.
 */
function boxAreaSum(box: Float32Array, start: number, end: number): number {
  let sum = 0;
  for (let i = start; i < end; i++) {
    const o = i * 6;
    const x = box[o + 3] - box[o], y = box[o + 4] - box[o + 1], z = box[o + 5] - box[o + 2];
    sum += x * y + y * z + z * x;
  }
  return sum;
}

/** A_L·n_L + A_R·n_R of the children's boxes in cur[6..18). */
function splitCostOf(cur: Float64Array, nL: number, nR: number): number {
  const lx = cur[9] - cur[6], ly = cur[10] - cur[7], lz = cur[11] - cur[8];
  const rx = cur[15] - cur[12], ry = cur[16] - cur[13], rz = cur[17] - cur[14];
  return (lx * ly + ly * lz + lz * lx) * nL + (rx * ry + ry * rz + rz * rx) * nR;
}

/**
 * Root box into cur[0..6). Returns true when min(a, b) = b + (d − |d|)/2, d = a − b, is exact for
 * every pair of same-axis coordinates: all are finite and, per axis, the largest magnitude is
 * under 2^28 times the smallest non-zero one. Then a − b of two float32 values needs at most
 * 28 + 25 = 53 bits, so d is exact in a double and b + d gives a back exactly (a zero may lose
 * its sign, which no comparison sees).
 */
function rootBox(box: Float32Array, n: number, cur: Float64Array): boolean {
  let bx0 = Infinity, by0 = Infinity, bz0 = Infinity, bx1 = -Infinity, by1 = -Infinity, bz1 = -Infinity;
  let sx = Infinity, sy = Infinity, sz = Infinity, sum = 0;
  for (let i = 0; i < n; i++) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    if (a0 < bx0) bx0 = a0; if (a1 < by0) by0 = a1; if (a2 < bz0) bz0 = a2;
    if (a3 > bx1) bx1 = a3; if (a4 > by1) by1 = a4; if (a5 > bz1) bz1 = a5;
    // Smallest non-zero magnitudes; the sum turns NaN or infinite if any coordinate is.
    sum += a0 + a1 + a2 + a3 + a4 + a5;
    let t = Math.abs(a0); if (t < sx && t !== 0) sx = t;
    t = Math.abs(a3); if (t < sx && t !== 0) sx = t;
    t = Math.abs(a1); if (t < sy && t !== 0) sy = t;
    t = Math.abs(a4); if (t < sy && t !== 0) sy = t;
    t = Math.abs(a2); if (t < sz && t !== 0) sz = t;
    t = Math.abs(a5); if (t < sz && t !== 0) sz = t;
  }
  cur[0] = bx0; cur[1] = by0; cur[2] = bz0; cur[3] = bx1; cur[4] = by1; cur[5] = bz1;
  const R = 268435456; // 2^28
  return Number.isFinite(sum) &&
    Math.max(-bx0, bx1) < sx * R && Math.max(-by0, by1) < sy * R && Math.max(-bz0, bz1) < sz * R;
}

function clearBins(s: Scratch, a: number, bins: number): void {
  const { binCount, binBox, cur } = s;
  // Empty bins hold the node box turned inside out: neutral for min/max against any primitive
  // inside the node, and finite, so the branch-free sweep below never meets ∞ − ∞.
  const x1 = cur[3], y1 = cur[4], z1 = cur[5], x0 = cur[0], y0 = cur[1], z0 = cur[2];
  const base = a * s.B;
  for (let b = base; b < base + bins; b++) {
    binCount[b] = 0;
    const o = b * 6;
    binBox[o] = x1; binBox[o + 1] = y1; binBox[o + 2] = z1;
    binBox[o + 3] = x0; binBox[o + 4] = y0; binBox[o + 5] = z0;
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
  const a = s.best[1];
  s.best[4] = 2 * cur[a];
  s.best[5] = binScale(cur[a], cur[a + 3], bins);
}

/** Bins every `step`-th primitive of [start, end) along the longest axis of the node box. */
function binLongest(s: Scratch, start: number, end: number, bins: number, step: number): void {
  const { cur } = s;
  const ex = cur[3] - cur[0], ey = cur[4] - cur[1], ez = cur[5] - cur[2];
  const a = ex >= ey && ex >= ez ? 0 : ey >= ez ? 1 : 2;
  binAxis(s, start, end, bins, step, a, cur[a], cur[a + 3]);
}

/**
 * Bins every `step`-th primitive of [start, end) by centroid on axis `a` over [lo, hi], recording
 * each binned primitive's bin in `keys` and the mapping in best[4..6) for computeKeys.
 */
function binAxis(s: Scratch, start: number, end: number, bins: number, step: number, a: number, lo: number, hi: number): void {
  const { box, binCount, binBox, B, keys, best } = s;
  const c0 = 2 * lo;
  const sc = binScale(lo, hi, bins);
  best[0] = Infinity;
  best[3] = bins;
  best[4] = c0;
  best[5] = sc;
  clearBins(s, a, bins);
  const base = a * B;
  for (let i = start; i < end; i += step) {
    const o = i * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    const k = ((box[o + a] + box[o + a + 3] - c0) * sc) | 0;
    keys[i] = k;
    const b = base + k;
    binCount[b]++;
    const q = b * 6;
    let d = a0 - binBox[q]; binBox[q] += 0.5 * (d - Math.abs(d));
    d = a1 - binBox[q + 1]; binBox[q + 1] += 0.5 * (d - Math.abs(d));
    d = a2 - binBox[q + 2]; binBox[q + 2] += 0.5 * (d - Math.abs(d));
    d = a3 - binBox[q + 3]; binBox[q + 3] += 0.5 * (d + Math.abs(d));
    d = a4 - binBox[q + 4]; binBox[q + 4] += 0.5 * (d + Math.abs(d));
    d = a5 - binBox[q + 5]; binBox[q + 5] += 0.5 * (d + Math.abs(d));
  }
  sweep(s, a, bins);
}

/**
 * Bins [start, end) over the centroids' own extent on the axis where it is widest; false (and
 * nothing binned) if all centroids coincide.
 */
function binCentroidRange(s: Scratch, start: number, end: number, bins: number): boolean {
  const { box } = s;
  // Doubled centroids (min + max), as the bin arithmetic uses them.
  let x0 = Infinity, y0 = Infinity, z0 = Infinity, x1 = -Infinity, y1 = -Infinity, z1 = -Infinity;
  for (let i = start; i < end; i++) {
    const o = i * 6;
    const cx = box[o] + box[o + 3], cy = box[o + 1] + box[o + 4], cz = box[o + 2] + box[o + 5];
    if (cx < x0) x0 = cx; if (cx > x1) x1 = cx;
    if (cy < y0) y0 = cy; if (cy > y1) y1 = cy;
    if (cz < z0) z0 = cz; if (cz > z1) z1 = cz;
  }
  const ex = x1 - x0, ey = y1 - y0, ez = z1 - z0;
  const a = ex >= ey && ex >= ez ? 0 : ey >= ez ? 1 : 2;
  const lo = a === 0 ? x0 : a === 1 ? y0 : z0, hi = a === 0 ? x1 : a === 1 ? y1 : z1;
  if (!(hi > lo)) return false;
  binAxis(s, start, end, bins, 1, a, 0.5 * lo, 0.5 * hi);
  return true;
}

/**
 * SAH sweep over the bins of one axis; improves s.best (cost = A_L·n_L + A_R·n_R). The running
 * boxes use min(a, b) = b + (d − |d|)/2 with d = a − b: branch-free (compares of bin boxes
 * mispredict often), and exact enough for choosing a plane; the partition gathers the children's
 * exact boxes.
 */
function sweep(s: Scratch, a: number, bins: number): void {
  const { binCount, binBox, rightArea, best, cur } = s;
  const base = a * s.B;
  // Only planes between the first and the last non-empty bin leave both sides non-empty.
  let lo = base, hi = base + bins - 1;
  while (binCount[lo] === 0) lo++;
  while (binCount[hi] === 0) hi--;
  let m0 = cur[3], m1 = cur[4], m2 = cur[5], M0 = cur[0], M1 = cur[1], M2 = cur[2], c = 0;
  for (let b = hi; b > lo; b--) {
    const q = b * 6;
    let d = binBox[q] - m0; m0 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 1] - m1; m1 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 2] - m2; m2 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 3] - M0; M0 += 0.5 * (d + Math.abs(d));
    d = binBox[q + 4] - M1; M1 += 0.5 * (d + Math.abs(d));
    d = binBox[q + 5] - M2; M2 += 0.5 * (d + Math.abs(d));
    c += binCount[b];
    const dx = M0 - m0, dy = M1 - m1, dz = M2 - m2;
    rightArea[b - 1 - base] = (dx * dy + dy * dz + dz * dx) * c;
  }
  m0 = cur[3]; m1 = cur[4]; m2 = cur[5]; M0 = cur[0]; M1 = cur[1]; M2 = cur[2]; c = 0;
  let bestCost = best[0], bestBin = -1;
  for (let b = lo; b < hi; b++) {
    const q = b * 6;
    let d = binBox[q] - m0; m0 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 1] - m1; m1 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 2] - m2; m2 += 0.5 * (d - Math.abs(d));
    d = binBox[q + 3] - M0; M0 += 0.5 * (d + Math.abs(d));
    d = binBox[q + 4] - M1; M1 += 0.5 * (d + Math.abs(d));
    d = binBox[q + 5] - M2; M2 += 0.5 * (d + Math.abs(d));
    c += binCount[b];
    const dx = M0 - m0, dy = M1 - m1, dz = M2 - m2;
    const cost = (dx * dy + dy * dz + dz * dx) * c + rightArea[b - base];
    if (cost < bestCost) { bestCost = cost; bestBin = b - base; }
  }
  if (bestBin >= 0) { best[0] = bestCost; best[1] = a; best[2] = bestBin; }
}

/** Bins of [start, end) on `axis`, same arithmetic as the binning pass, for nodes binned on a sample or on all axes. */
function computeKeys(s: Scratch, start: number, end: number, axis: number): void {
  const { box, keys, best } = s;
  const c0 = best[4], scale = best[5];
  for (let i = start; i < end; i++) {
    const o = i * 6;
    keys[i] = ((box[o + axis] + box[o + axis + 3] - c0) * scale) | 0;
  }
}

/**
 * Partitions [start, end) so primitives whose key is <= `split` come first, scanning from both ends
 * and swapping only misplaced pairs, and gathers both sides' exact boxes into cur[6..18) on the way.
 * Returns the first index of the right side.
 */
function partition(s: Scratch, start: number, end: number, split: number): number {
  const { box, ids, cur, keys } = s;
  let l0 = Infinity, l1 = Infinity, l2 = Infinity, L0 = -Infinity, L1 = -Infinity, L2 = -Infinity;
  let r0 = Infinity, r1 = Infinity, r2 = Infinity, R0 = -Infinity, R1 = -Infinity, R2 = -Infinity;
  let i = start, j = end - 1;
  for (;;) {
    while (i <= j) {
      if (keys[i] > split) break;
      const o = i * 6;
      const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
      if (a0 < l0) l0 = a0; if (a1 < l1) l1 = a1; if (a2 < l2) l2 = a2;
      if (a3 > L0) L0 = a3; if (a4 > L1) L1 = a4; if (a5 > L2) L2 = a5;
      i++;
    }
    // box[i] (if i <= j) belongs right; find a left one from the end.
    while (j > i) {
      if (keys[j] <= split) break;
      const p = j * 6;
      const a0 = box[p], a1 = box[p + 1], a2 = box[p + 2], a3 = box[p + 3], a4 = box[p + 4], a5 = box[p + 5];
      if (a0 < r0) r0 = a0; if (a1 < r1) r1 = a1; if (a2 < r2) r2 = a2;
      if (a3 > R0) R0 = a3; if (a4 > R1) R1 = a4; if (a5 > R2) R2 = a5;
      j--;
    }
    if (j <= i) {
      if (i === j) {
        const o = i * 6;
        const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
        if (a0 < r0) r0 = a0; if (a1 < r1) r1 = a1; if (a2 < r2) r2 = a2;
        if (a3 > R0) R0 = a3; if (a4 > R1) R1 = a4; if (a5 > R2) R2 = a5;
      }
      break;
    }
    const o = i * 6, p = j * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    const b0 = box[p], b1 = box[p + 1], b2 = box[p + 2], b3 = box[p + 3], b4 = box[p + 4], b5 = box[p + 5];
    box[o] = b0; box[o + 1] = b1; box[o + 2] = b2; box[o + 3] = b3; box[o + 4] = b4; box[o + 5] = b5;
    box[p] = a0; box[p + 1] = a1; box[p + 2] = a2; box[p + 3] = a3; box[p + 4] = a4; box[p + 5] = a5;
    const t = ids[i]; ids[i] = ids[j]; ids[j] = t;
    if (b0 < l0) l0 = b0; if (b1 < l1) l1 = b1; if (b2 < l2) l2 = b2;
    if (b3 > L0) L0 = b3; if (b4 > L1) L1 = b4; if (b5 > L2) L2 = b5;
    if (a0 < r0) r0 = a0; if (a1 < r1) r1 = a1; if (a2 < r2) r2 = a2;
    if (a3 > R0) R0 = a3; if (a4 > R1) R1 = a4; if (a5 > R2) R2 = a5;
    i++; j--;
  }
  cur[6] = l0; cur[7] = l1; cur[8] = l2; cur[9] = L0; cur[10] = L1; cur[11] = L2;
  cur[12] = r0; cur[13] = r1; cur[14] = r2; cur[15] = R0; cur[16] = R1; cur[17] = R2;
  return i;
}

/**
 * `partition` with the boxes gathered branch-free (min(a, b) = b + (d − |d|)/2, d = a − b): only for
 * inputs where that is exact (s.exact, see rootBox). The node box turned inside out starts the
 * running boxes: finite, so the arithmetic never meets ∞ − ∞.
 */
function partitionBranchFree(s: Scratch, start: number, end: number, split: number): number {
  const { box, ids, cur, keys } = s;
  let l0 = cur[3], l1 = cur[4], l2 = cur[5], L0 = cur[0], L1 = cur[1], L2 = cur[2];
  let r0 = l0, r1 = l1, r2 = l2, R0 = L0, R1 = L1, R2 = L2;
  let i = start, j = end - 1, d = 0;
  for (;;) {
    while (i <= j) {
      if (keys[i] > split) break;
      const o = i * 6;
      const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
      d = a0 - l0; l0 += 0.5 * (d - Math.abs(d)); d = a1 - l1; l1 += 0.5 * (d - Math.abs(d)); d = a2 - l2; l2 += 0.5 * (d - Math.abs(d));
      d = a3 - L0; L0 += 0.5 * (d + Math.abs(d)); d = a4 - L1; L1 += 0.5 * (d + Math.abs(d)); d = a5 - L2; L2 += 0.5 * (d + Math.abs(d));
      i++;
    }
    // box[i] (if i <= j) belongs right; find a left one from the end.
    while (j > i) {
      if (keys[j] <= split) break;
      const p = j * 6;
      const a0 = box[p], a1 = box[p + 1], a2 = box[p + 2], a3 = box[p + 3], a4 = box[p + 4], a5 = box[p + 5];
      d = a0 - r0; r0 += 0.5 * (d - Math.abs(d)); d = a1 - r1; r1 += 0.5 * (d - Math.abs(d)); d = a2 - r2; r2 += 0.5 * (d - Math.abs(d));
      d = a3 - R0; R0 += 0.5 * (d + Math.abs(d)); d = a4 - R1; R1 += 0.5 * (d + Math.abs(d)); d = a5 - R2; R2 += 0.5 * (d + Math.abs(d));
      j--;
    }
    if (j <= i) {
      if (i === j) {
        const o = i * 6;
        const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
        d = a0 - r0; r0 += 0.5 * (d - Math.abs(d)); d = a1 - r1; r1 += 0.5 * (d - Math.abs(d)); d = a2 - r2; r2 += 0.5 * (d - Math.abs(d));
        d = a3 - R0; R0 += 0.5 * (d + Math.abs(d)); d = a4 - R1; R1 += 0.5 * (d + Math.abs(d)); d = a5 - R2; R2 += 0.5 * (d + Math.abs(d));
      }
      break;
    }
    const o = i * 6, p = j * 6;
    const a0 = box[o], a1 = box[o + 1], a2 = box[o + 2], a3 = box[o + 3], a4 = box[o + 4], a5 = box[o + 5];
    const b0 = box[p], b1 = box[p + 1], b2 = box[p + 2], b3 = box[p + 3], b4 = box[p + 4], b5 = box[p + 5];
    box[o] = b0; box[o + 1] = b1; box[o + 2] = b2; box[o + 3] = b3; box[o + 4] = b4; box[o + 5] = b5;
    box[p] = a0; box[p + 1] = a1; box[p + 2] = a2; box[p + 3] = a3; box[p + 4] = a4; box[p + 5] = a5;
    const t = ids[i]; ids[i] = ids[j]; ids[j] = t;
    d = b0 - l0; l0 += 0.5 * (d - Math.abs(d)); d = b1 - l1; l1 += 0.5 * (d - Math.abs(d)); d = b2 - l2; l2 += 0.5 * (d - Math.abs(d));
    d = b3 - L0; L0 += 0.5 * (d + Math.abs(d)); d = b4 - L1; L1 += 0.5 * (d + Math.abs(d)); d = b5 - L2; L2 += 0.5 * (d + Math.abs(d));
    d = a0 - r0; r0 += 0.5 * (d - Math.abs(d)); d = a1 - r1; r1 += 0.5 * (d - Math.abs(d)); d = a2 - r2; r2 += 0.5 * (d - Math.abs(d));
    d = a3 - R0; R0 += 0.5 * (d + Math.abs(d)); d = a4 - R1; R1 += 0.5 * (d + Math.abs(d)); d = a5 - R2; R2 += 0.5 * (d + Math.abs(d));
    i++; j--;
  }
  cur[6] = l0; cur[7] = l1; cur[8] = l2; cur[9] = L0; cur[10] = L1; cur[11] = L2;
  cur[12] = r0; cur[13] = r1; cur[14] = r2; cur[15] = R0; cur[16] = R1; cur[17] = R2;
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
