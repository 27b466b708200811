import { describe, expect, it } from "vitest";
import { Ray, Vector3 } from "three";
import { buildTriangleBvh, intersectRays } from "../../../tracer/bvh/batch";
import { anyHit, closestHit } from "../../../tracer/bvh/traverse";
import { bounceRays, loadBunny, sphereRays } from "../../bench/meshes";

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
    const out = new Float32Array(3000 * 4), one = new Float64Array(4);
    const hits = intersectRays(mesh, rays, out);
    let expectedHits = 0;
    for (let i = 0; i < 3000; i++) {
      const r = rays.subarray(i * 8, i * 8 + 8);
      if (closestHit(mesh, r[0]!, r[1]!, r[2]!, r[3]!, r[4]!, r[5]!, r[6]!, r[7]!, one, 0)) expectedHits++;
      expect([out[i * 4], out[i * 4 + 1], out[i * 4 + 2], out[i * 4 + 3]]).toEqual(Array.from(one, (x) => Math.fround(x)));
    }
    expect(hits).toBe(expectedHits);
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
