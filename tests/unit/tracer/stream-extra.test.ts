import { describe, expect, it } from "vitest";
import { sortRays } from "../../../tracer/bvh/ray-order";
import { makeRandom } from "../../bench/meshes";

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
