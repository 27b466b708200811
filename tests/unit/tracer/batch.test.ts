import { describe, expect, it } from "vitest";
import { Ray, Vector3 } from "three";
import { buildTriangleBvh, intersectRays } from "../../../tracer/bvh/batch";
import { anyHit, closestHit, type TriangleBvh } from "../../../tracer/bvh/traverse";
import { collapseToWide, WIDE_WORDS } from "../../../tracer/bvh/wide";
import { bounceRays, loadBunny, makeRandom, sphereRays } from "../../bench/meshes";
import { expectSameAsClosestHit } from "../../support/closest-hit-reference";

const one = (positions: number[], indices: number[]) => buildTriangleBvh(new Float32Array(positions), new Uint32Array(indices));

function castOne(mesh: ReturnType<typeof one>, o: number[], d: number[], tmin = 0, tmax = Infinity): Float32Array {
  const out = new Float32Array(4);
  intersectRays(mesh, new Float32Array([...o, ...d, tmin, tmax]), out);
  return out;
}

describe("ray–triangle (Möller & Trumbore 1997)", () => {
  it("matches the published example of the ray-triangle-intersection package README", () => {
    // Source: ray-triangle-intersection 1.0.3 README example: hit point (10.12195…, 6.12195…, 3.97561…);
    // t = 11.2195122, u = 0.1121951, v = 0.4560976 from an independent Möller–Trumbore evaluation
    // (REFERENCE_CHECKS.md, ray-triangle-intersection row).
    const mesh = one([5, 5, 5, 10, 15, 4, 15, 5, 3], [0, 1, 2]);
    const [t, u, v, tri] = castOne(mesh, [9, 5, -5], [0.1, 0.1, 0.8]);
    expect(tri).toBe(0);
    expect(t).toBeCloseTo(11.2195122, 5);
    expect(u).toBeCloseTo(0.1121951, 5);
    expect(v).toBeCloseTo(0.4560976, 5);
    expect(9 + t! * 0.1).toBeCloseTo(10.121951219512194, 4);
    expect(5 + t! * 0.1).toBeCloseTo(6.121951219512195, 4);
    expect(-5 + t! * 0.8).toBeCloseTo(3.97560975609756, 4);
  });

  it("handles the reference cases: front, back (two-sided), outside, oblique", () => {
    // Cases from REFERENCE_CHECKS.md "More Möller–Trumbore reference cases" (independent computation).
    const tri = one([0, 0, 0, 1, 0, 0, 0, 1, 0], [0, 1, 2]);
    expect(Array.from(castOne(tri, [0.25, 0.25, 1], [0, 0, -1]))).toEqual([1, 0.25, 0.25, 0]);
    expect(Array.from(castOne(tri, [0.25, 0.25, -1], [0, 0, 1]))).toEqual([1, 0.25, 0.25, 0]);
    expect(Array.from(castOne(tri, [0.6, 0.6, 1], [0, 0, -1]))).toEqual([Infinity, 0, 0, -1]);
    const big = one([2, 0, 0, 0, 2, 0, 0, 0, 2], [0, 1, 2]);
    const [t, u, v] = castOne(big, [0, 0, 0], [1, 1, 1]);
    expect(t).toBeCloseTo(2 / 3, 6);
    expect(u).toBeCloseTo(1 / 3, 6);
    expect(v).toBeCloseTo(1 / 3, 6);
  });

  it("hits with axis-parallel rays whose origin lies on a box face", () => {
    // Both x and y direction components are 0 and the origin sits on the box's min-x plane: a
    // slab test with an infinite reciprocal would compute ∞ − ∞ here.
    const tri = one([0, 0, 0, 1, 0, 0, 0, 1, 0], [0, 1, 2]);
    expect(castOne(tri, [0, 0.25, 1], [0, 0, -1])[0]).toBe(1);
    expect(castOne(tri, [0.25, 0, -3], [0, 0, 1])[0]).toBe(3);
    expect(castOne(tri, [-1e-9, 0.25, 1], [0, 0, -1])[0]).toBe(Infinity);
  });

  it("respects tmin and tmax and reports the nearer of two stacked triangles", () => {
    const mesh = one([0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0, -2, 1, 0, -2, 0, 1, -2], [0, 1, 2, 3, 4, 5]);
    expect(castOne(mesh, [0.2, 0.2, 1], [0, 0, -1])[3]).toBe(0);
    expect(castOne(mesh, [0.2, 0.2, 1], [0, 0, -1], 1.5)[3]).toBe(1);
    expect(castOne(mesh, [0.2, 0.2, 1], [0, 0, -1], 0, 0.5)[0]).toBe(Infinity);
    expect(castOne(mesh, [0.2, 0.2, -5], [0, 0, 1])[3]).toBe(1);
  });

  it("rejects malformed inputs with messages naming the problem", () => {
    expect(() => buildTriangleBvh(new Float32Array(9), new Uint32Array([0, 1, 3]))).toThrow(/triangle 0 refers to vertex 3/);
    expect(() => buildTriangleBvh(new Float32Array(9), new Uint32Array([0, 1]))).toThrow(/multiple of 3/);
    const mesh = one([0, 0, 0, 1, 0, 0, 0, 1, 0], [0, 1, 2]);
    expect(() => intersectRays(mesh, new Float32Array(7), new Float32Array(4))).toThrow(/multiple of 8/);
    expect(() => intersectRays(mesh, new Float32Array(16), new Float32Array(4))).toThrow(/out holds 4/);
  });

  it("an empty mesh misses everything", () => {
    const mesh = buildTriangleBvh(new Float32Array(0), new Uint32Array(0));
    expect(castOne(mesh, [0, 0, 0], [1, 0, 0])[0]).toBe(Infinity);
  });
});

describe("intersectRays on the Stanford bunny", () => {
  const bunny = loadBunny();
  const mesh = buildTriangleBvh(bunny.positions, bunny.indices);
  const triCount = bunny.indices.length / 3;

  /** Closest hit by testing every triangle with three.js Ray.intersectTriangle (an independent formulation). */
  function threeClosest(o: number[], d: number[]): { t: number; tri: number } {
    const ray = new Ray(new Vector3(o[0], o[1], o[2]), new Vector3(d[0], d[1], d[2]));
    const a = new Vector3(), b = new Vector3(), c = new Vector3(), hit = new Vector3();
    let best = Infinity, bestTri = -1;
    for (let t = 0; t < triCount; t++) {
      a.fromArray(bunny.positions, bunny.indices[t * 3]! * 3);
      b.fromArray(bunny.positions, bunny.indices[t * 3 + 1]! * 3);
      c.fromArray(bunny.positions, bunny.indices[t * 3 + 2]! * 3);
      if (ray.intersectTriangle(a, b, c, false, hit)) {
        const dist = hit.distanceTo(ray.origin);
        if (dist < best) { best = dist; bestTri = t; }
      }
    }
    return { t: best, tri: bestTri };
  }

  it("agrees with brute force three.js Ray.intersectTriangle on incoherent and bounce rays", () => {
    // More rays than intersectRays' sorting threshold, so the reordered path is checked too.
    const primary = sphereRays(bunny.positions, 1200, 11);
    const out = new Float32Array(1200 * 4);
    const hits = intersectRays(mesh, primary, out);
    expect(hits).toBeGreaterThan(100);
    const bounce = bounceRays(bunny, primary, out, 12);
    const bounceOut = new Float32Array((bounce.length / 8) * 4);
    intersectRays(mesh, bounce, bounceOut);
    let mismatches = 0, compared = 0;
    for (const [rays, res] of [[primary, out], [bounce, bounceOut]] as const) {
      for (let i = 0; i < rays.length / 8; i++) {
        const o = Array.from(rays.subarray(i * 8, i * 8 + 3)), d = Array.from(rays.subarray(i * 8 + 3, i * 8 + 6));
        const ref = threeClosest(o, d);
        compared++;
        const t = res[i * 4]!;
        if (ref.tri < 0) { if (t !== Infinity) mismatches++; continue; }
        // Rays are unit length, so t is a distance. Float32 vertex/edge storage allows ~1e-5 relative.
        if (Math.abs(t - ref.t) > 1e-4 * Math.max(1, ref.t)) mismatches++;
        else if (res[i * 4 + 3] !== ref.tri) {
          // A different triangle at the same distance is a shared edge or vertex: accept it.
          if (Math.abs(t - ref.t) > 1e-6 * Math.max(1, ref.t)) mismatches++;
        }
      }
    }
    expect(compared).toBeGreaterThan(1600);
    // Grazing hits exactly on shared edges may go either way between formulations.
    expect(mismatches).toBeLessThanOrEqual(1);
  });

  it("reports barycentrics that reconstruct the hit point", () => {
    const rays = sphereRays(bunny.positions, 200, 5);
    const out = new Float32Array(200 * 4);
    intersectRays(mesh, rays, out);
    for (let i = 0; i < 200; i++) {
      const t = out[i * 4]!;
      if (t === Infinity) continue;
      const u = out[i * 4 + 1]!, v = out[i * 4 + 2]!, tri = out[i * 4 + 3]!;
      for (let k = 0; k < 3; k++) {
        const pa = bunny.positions[bunny.indices[tri * 3]! * 3 + k]!, pb = bunny.positions[bunny.indices[tri * 3 + 1]! * 3 + k]!, pc = bunny.positions[bunny.indices[tri * 3 + 2]! * 3 + k]!;
        const bary = (1 - u - v) * pa + u * pb + v * pc;
        expect(Math.abs(bary - (rays[i * 8 + k]! + t * rays[i * 8 + 3 + k]!))).toBeLessThan(1e-4);
      }
    }
  });

  it("writes each result at its own ray's index when a large batch is traced in sorted order", () => {
    // Per-ray closestHit (checked against brute force above) is the reference for every slot.
    const rays = sphereRays(bunny.positions, 3000, 21);
    for (let i = 0; i < 3000; i += 7) rays[i * 8 + 7] = 0.3; // some rays end early: misses at known slots
    expectSameAsClosestHit(mesh, rays);
  });

  it("anyHit agrees with closestHit inside and beyond the hit distance", () => {
    const rays = sphereRays(bunny.positions, 200, 9);
    const hit = new Float64Array(4);
    for (let i = 0; i < 200; i++) {
      const r = rays.subarray(i * 8, i * 8 + 8);
      const found = closestHit(mesh, r[0]!, r[1]!, r[2]!, r[3]!, r[4]!, r[5]!, 0, Infinity, hit, 0);
      expect(anyHit(mesh, r[0]!, r[1]!, r[2]!, r[3]!, r[4]!, r[5]!, 0, Infinity)).toBe(found);
      if (found) expect(anyHit(mesh, r[0]!, r[1]!, r[2]!, r[3]!, r[4]!, r[5]!, 0, hit[0]! * 0.999)).toBe(false);
    }
  });
});

describe("4-wide stream traversal of large batches", () => {
  const bunny = loadBunny();
  const mesh = buildTriangleBvh(bunny.positions, bunny.indices);

  it("collapses the binary tree into child boxes that bound their subtrees and cover every triangle once", () => {
    // Bounding-volume invariant of any BVH (common practice): a child's box holds every triangle
    // below it; each triangle slot is reached through exactly one leaf.
    const wide = collapseToWide(mesh.bvh);
    const covered = new Uint8Array(mesh.triCount);
    const subtreeBox = (node: number, slot: number): number[] => {
      const o = node * WIDE_WORDS, ref = wide.words[o + 24 + slot]!, count = wide.words[o + 28 + slot]! & 0xffffff;
      const box = [Infinity, Infinity, Infinity, -Infinity, -Infinity, -Infinity];
      const grow = (b: number[]) => { for (let k = 0; k < 3; k++) { box[k] = Math.min(box[k]!, b[k]!); box[k + 3] = Math.max(box[k + 3]!, b[k + 3]!); } };
      if (count > 0) {
        for (let t = ref; t < ref + count; t++) {
          covered[t]++;
          const q = t * 9, v = [0, 1, 2].map((k) => mesh.tris[q + k]!);
          for (const e of [[0, 0, 0], [3, 4, 5], [6, 7, 8]]) {
            const p = e[0] === 0 ? v : v.map((x, k) => x + mesh.tris[q + e[k]!]!);
            grow([...p, ...p]);
          }
        }
      } else {
        for (let j = 0; j < 4; j++) if (!Number.isNaN(wide.nodes[ref * WIDE_WORDS + j]!)) grow(subtreeBox(ref, j));
      }
      for (let k = 0; k < 3; k++) {
        // v0 + e1 is rounded again here, so allow one float32 step.
        expect(wide.nodes[o + k * 4 + slot]!).toBeLessThanOrEqual(box[k]! + 1e-6 * Math.max(1, Math.abs(box[k]!)));
        expect(wide.nodes[o + 12 + k * 4 + slot]!).toBeGreaterThanOrEqual(box[k + 3]! - 1e-6 * Math.max(1, Math.abs(box[k + 3]!)));
      }
      return box;
    };
    for (let j = 0; j < 4; j++) if (!Number.isNaN(wide.nodes[j]!)) subtreeBox(0, j);
    expect(Array.from(covered).every((c) => c === 1)).toBe(true);
    for (let node = 0; node < wide.nodeCount; node++) {
      for (let octant = 0; octant < 4; octant++) {
        const order = wide.words[node * WIDE_WORDS + 28 + octant]! >>> 24;
        expect([0, 2, 4, 6].map((s) => (order >> s) & 3).sort()).toEqual([0, 1, 2, 3]);
      }
    }
    expect(wide.nodeCount).toBeLessThan(mesh.bvh.nodeCount / 3);
  });

  it("orders each wide node's children near side first, as a depth-first walk of the binary tree would visit them", () => {
    // Front-to-back child order of a collapsed wide BVH (common practice): for a ray whose direction
    // is negative on a binary node's split axis, that node's right subtree comes first. The reference
    // walks the binary tree itself, identifying nodes by the triangle slots they cover.
    const bvh = mesh.bvh, wide = collapseToWide(bvh);
    const range = new Map<string, number>(); // "first,end" of a binary node's slots -> node
    const slotsOf = (node: number): [number, number] => {
      const o = node * 8, count = bvh.words[o + 7]! >>> 2;
      const r: [number, number] = count ? [bvh.words[o + 6]!, bvh.words[o + 6]! + count] : [slotsOf(node + 1)[0], slotsOf(bvh.words[o + 6]!)[1]];
      range.set(r.join(), node);
      return r;
    };
    slotsOf(0);
    const wideSlots = (w: number): [number, number] => {
      let lo = Infinity, hi = -Infinity;
      for (let j = 0; j < 4; j++) {
        const o = w * WIDE_WORDS, ref = wide.words[o + 24 + j]!, count = wide.words[o + 28 + j]! & 0xffffff;
        if (Number.isNaN(wide.nodes[o + j]!)) continue;
        const [a, b] = count ? [ref, ref + count] : wideSlots(ref);
        lo = Math.min(lo, a); hi = Math.max(hi, b);
      }
      return [lo, hi];
    };
    let checked = 0;
    for (let w = 0; w < wide.nodeCount; w++) {
      const o = w * WIDE_WORDS;
      const kidOf = new Map<number, number>(); // binary node -> slot
      let kids = 0;
      for (let j = 0; j < 4; j++) {
        if (Number.isNaN(wide.nodes[o + j]!)) continue;
        const ref = wide.words[o + 24 + j]!, count = wide.words[o + 28 + j]! & 0xffffff;
        kidOf.set(range.get((count ? [ref, ref + count] : wideSlots(ref)).join())!, j);
        kids++;
      }
      const top = range.get(wideSlots(w).join())!;
      for (let octant = 0; octant < 4; octant++) {
        const expected: number[] = [];
        const visit = (node: number): void => {
          if (kidOf.has(node)) { expected.push(kidOf.get(node)!); return; }
          const q = node * 8, negative = (octant >> (bvh.words[q + 7]! & 3)) & 1;
          const near = negative ? bvh.words[q + 6]! : node + 1, far = negative ? node + 1 : bvh.words[q + 6]!;
          visit(near); visit(far);
        };
        visit(top);
        for (let j = kids; j < 4; j++) expected.push(j);
        const order = wide.words[o + 28 + octant]! >>> 24;
        expect([0, 2, 4, 6].map((s) => (order >> s) & 3)).toEqual(expected);
        checked++;
      }
    }
    expect(checked).toBe(wide.nodeCount * 4);
  });

  it("matches closestHit on axis-parallel rays, rays starting on or inside the mesh and empty intervals", () => {
    const rnd = makeRandom(41);
    const n = 2400, rays = new Float32Array(n * 8);
    const lo = [-0.1, 0.03, -0.06], hi = [0.06, 0.19, 0.06]; // around the bunny's box
    for (let i = 0; i < n; i++) {
      const o = [0, 1, 2].map((k) => lo[k]! + (hi[k]! - lo[k]!) * rnd());
      let d = [rnd() - 0.5, rnd() - 0.5, rnd() - 0.5];
      const kind = i % 6;
      if (kind === 1) d = [0, 0, rnd() < 0.5 ? -1 : 1]; // two zero components
      if (kind === 2) d = [-0, rnd() - 0.5, 0]; // a negative zero
      if (kind === 3) o[0] = mesh.bvh.nodes[0]!; // origin on the root box's min-x plane
      const tmin = kind === 4 ? 0.02 : 0, tmax = kind === 5 ? (rnd() < 0.5 ? 0.05 : -1) : Infinity; // -1: empty interval
      rays.set([o[0]!, o[1]!, o[2]!, d[0]!, d[1]!, d[2]!, tmin, tmax], i * 8);
    }
    expect(expectSameAsClosestHit(mesh, rays)).toBeGreaterThan(300);
  });

  it("matches closestHit when only one or two rays of a chunk reach each subtree", () => {
    // A large batch (so it is sorted and streamed) where almost every ray points away from the
    // bunny: the few that reach it arrive in lists short enough to be traced one ray at a time.
    const aimed = sphereRays(bunny.positions, 24, 77);
    const n = 1200, rays = new Float32Array(n * 8);
    for (let i = 0; i < n; i++) {
      const a = aimed.subarray((i % 24) * 8, (i % 24) * 8 + 8);
      rays.set(a, i * 8);
      if (i >= 24) { rays[i * 8 + 3] = -a[3]!; rays[i * 8 + 4] = -a[4]!; rays[i * 8 + 5] = -a[5]!; } // turned away
    }
    expect(expectSameAsClosestHit(mesh, rays)).toBeGreaterThan(10);
  });

  it("traces large batches against a one-triangle mesh and an empty mesh", () => {
    const tri = buildTriangleBvh(new Float32Array([0, 0, 0, 1, 0, 0, 0, 1, 0]), new Uint32Array([0, 1, 2]));
    const rnd = makeRandom(5);
    const n = 1500, rays = new Float32Array(n * 8);
    for (let i = 0; i < n; i++) rays.set([rnd(), rnd(), i % 2 ? 1 : -1, 0.2 * (rnd() - 0.5), 0.2 * (rnd() - 0.5), i % 2 ? -1 : 1, 0, Infinity], i * 8);
    expect(expectSameAsClosestHit(tri, rays)).toBeGreaterThan(500);
    // Rays through the vertex (0, 1, 0) along (1, −1, −1): they enter the flat box on all three
    // axes and leave it through z at the same t, so a strict comparison anywhere in the slab test
    // would miss them (dyadic numbers keep every product exact).
    const grazing = new Float32Array(1100 * 8);
    for (let i = 0; i < 1100; i++) { const s = 1 + i / 1024; grazing.set([-s, 1 + s, s, 1, -1, -1, 0, Infinity], i * 8); }
    expect(expectSameAsClosestHit(tri, grazing)).toBe(1100);
    const none = buildTriangleBvh(new Float32Array(0), new Uint32Array(0));
    const out = new Float32Array(n * 4);
    expect(intersectRays(none, rays, out)).toBe(0);
    for (let i = 0; i < n; i++) expect(out[i * 4]).toBe(Infinity);
  });
});
