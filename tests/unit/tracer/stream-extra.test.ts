import { describe, expect, it } from "vitest";
import { buildTriangleBvh } from "../../../tracer/bvh/batch";
import { sortRays } from "../../../tracer/bvh/ray-order";
import { closestHitStream } from "../../../tracer/bvh/stream";
import { loadBunny, makeRandom, sphereRays } from "../../bench/meshes";
import { expectSameAsClosestHit } from "../../support/closest-hit-reference";

/** Morton code (bit interleaving, common practice) written bit by bit, independent of ray-order.ts's shifts and masks. */
function morton3(x: number, y: number, z: number): number {
  let code = 0;
  for (let b = 0; b < 4; b++) code |= (((x >> b) & 1) << (3 * b)) | (((y >> b) & 1) << (3 * b + 1)) | (((z >> b) & 1) << (3 * b + 2));
  return code;
}

describe("ray order for the batch stream", () => {
  it("is a stable sort by direction octant, then by the Morton code of the origin in a 16³ grid", () => {
    const rnd = makeRandom(9);
    const n = 5000, rays = new Float32Array(n * 8);
    for (let i = 0; i < n; i++) {
      // Origins on a coarse lattice so many rays share a cell (stability is visible), some
      // direction components zero or negative zero (octant bit = the sign test d < 0).
      const o = [Math.floor(rnd() * 9) - 4, Math.floor(rnd() * 9) * 0.5, Math.floor(rnd() * 9) - 2];
      const d = [rnd() - 0.5, i % 5 === 0 ? -0 : rnd() - 0.5, i % 7 === 0 ? 0 : rnd() - 0.5];
      rays.set([o[0]!, o[1]!, o[2]!, d[0]!, d[1]!, d[2]!, 0, Infinity], i * 8);
    }
    const lo = [-4, 0, -2], hi = [4, 4, 6];
    const key = (i: number): number => {
      const cell = [0, 1, 2].map((k) => Math.min(15, Math.floor(((rays[i * 8 + k]! - lo[k]!) * 15.99) / (hi[k]! - lo[k]!))));
      const octant = (rays[i * 8 + 3]! < 0 ? 1 : 0) + (rays[i * 8 + 4]! < 0 ? 2 : 0) + (rays[i * 8 + 5]! < 0 ? 4 : 0);
      return octant * 2 ** 12 + morton3(cell[0]!, cell[1]!, cell[2]!);
    };
    // Array.prototype.sort is stable (ECMAScript 2019), so equal keys keep their input order.
    const expected = Array.from({ length: n }, (_, i) => i).sort((a, b) => key(a) - key(b));
    const { order, octants } = sortRays(rays, n);
    expect(Array.from(order.subarray(0, n))).toEqual(expected);
    for (let k = 0; k < n; k++) expect(octants[k]).toBe(key(expected[k]!) >>> 12);
  });
});

describe("stream traversal of chunks whose rays all start before the mesh's box", () => {
  const bunny = loadBunny();
  const mesh = buildTriangleBvh(bunny.positions, bunny.indices);

  it("matches closestHit with tmin before the box, and on the box's near face", () => {
    // Origins on a sphere around the bunny: every ray meets the root box (if at all) after tmin,
    // so the box tests may skip their tmin comparisons. Some rays get a tmin up to the middle of
    // the way to the box, some a tmax that ends inside it.
    const rays = sphereRays(bunny.positions, 4000, 31);
    for (let i = 0; i < 4000; i++) {
      if (i % 3 === 1) rays[i * 8 + 6] = 0.05 * ((i % 7) / 7);
      if (i % 5 === 2) rays[i * 8 + 7] = 0.25;
    }
    expect(expectSameAsClosestHit(mesh, rays)).toBeGreaterThan(1500);
  });

  it("matches closestHit when such rays are sparse enough to be traced one at a time below the top", () => {
    // 1100 rays over eight octants (about 140 per chunk), each aimed at its own random point: few
    // rays share a subtree past the first levels, so most leaves are reached by the single-ray loop.
    const rnd = makeRandom(8);
    const box = Array.from(mesh.bvh.nodes.subarray(0, 6));
    const n = 1100, rays = new Float32Array(n * 8);
    for (let i = 0; i < n; i++) {
      // Origin outside the box on one side of x, target anywhere inside the box.
      const o = [0, 1, 2].map((k) => box[k]! + (box[k + 3]! - box[k]!) * (3 * rnd() - 1));
      o[0] = rnd() < 0.5 ? box[0]! - 1 - rnd() : box[3]! + 1 + rnd();
      const target = [0, 1, 2].map((k) => box[k]! + (box[k + 3]! - box[k]!) * rnd());
      rays.set([o[0]!, o[1]!, o[2]!, target[0]! - o[0]!, target[1]! - o[1]!, target[2]! - o[2]!, 0, Infinity], i * 8);
    }
    expect(expectSameAsClosestHit(mesh, rays)).toBeGreaterThan(300);
  });

  it("keeps the tmin comparisons when one ray of the chunk starts inside the box", () => {
    // Sphere rays plus, in every chunk, rays starting inside the bunny's box (tmin 0.01): those
    // chunks take the box tests with the tmin comparisons, and every slot must still equal
    // closestHit.
    const rays = sphereRays(bunny.positions, 3000, 32);
    const rnd = makeRandom(33);
    for (let i = 0; i < 3000; i += 50) {
      rays.set([-0.02 + 0.02 * rnd(), 0.1 + 0.02 * rnd(), 0.02 * rnd(), rnd() - 0.5, rnd() - 0.5, rnd() - 0.5, 0.01, Infinity], i * 8);
    }
    expect(expectSameAsClosestHit(mesh, rays)).toBeGreaterThan(1000);
  });
});

describe("stream reading a sorted copy of the rays", () => {
  const bunny = loadBunny();
  const mesh = buildTriangleBvh(bunny.positions, bunny.indices);

  it("sortRays copies each ray's eight floats to its sorted position", () => {
    const rays = sphereRays(bunny.positions, 3000, 41);
    for (let i = 0; i < 3000; i += 9) { rays[i * 8 + 6] = 0.01 * (i % 4); rays[i * 8 + 7] = 1 + i; } // distinct tmin/tmax to see them move
    const { order, rays: sorted } = sortRays(rays, 3000, true);
    expect(sorted).not.toBeNull();
    for (let k = 0; k < 3000; k++) {
      for (let c = 0; c < 8; c++) expect(sorted![k * 8 + c]).toBe(rays[order[k]! * 8 + c]);
    }
    expect(sortRays(rays, 10).rays).toBeNull();
  });

  it("gives every ray the same result as closestHit, written at the ray's own index", () => {
    // Sphere rays (some ending early) plus rays starting inside the bunny, so both box-test forms run.
    const rays = sphereRays(bunny.positions, 5000, 42);
    const rnd = makeRandom(43);
    const box = Array.from(mesh.bvh.nodes.subarray(0, 6));
    for (let i = 0; i < 5000; i++) {
      if (i % 11 === 3) rays[i * 8 + 7] = 0.3;
      if (i % 13 === 5) {
        const o = [0, 1, 2].map((k) => box[k]! + (box[k + 3]! - box[k]!) * rnd());
        rays.set([o[0]!, o[1]!, o[2]!, rnd() - 0.5, rnd() - 0.5, rnd() - 0.5, 0, Infinity], i * 8);
      }
    }
    const hits = expectSameAsClosestHit(mesh, rays, (out) => {
      const sorted = sortRays(rays, 5000, true);
      return closestHitStream(mesh, rays, sorted.order, sorted.octants, 5000, out, sorted.rays);
    });
    expect(hits).toBeGreaterThan(2000);
  });
});
