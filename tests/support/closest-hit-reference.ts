// Shared check for the batch closest-hit query: every output slot must equal the single-ray closestHit
// (itself checked against brute force in batch.test.ts), written at the ray's own index.
import { expect } from "vitest";
import { intersectRays } from "../../tracer/bvh/batch";
import { closestHit, type TriangleBvh } from "../../tracer/bvh/traverse";

/**
 * Runs `query` (by default intersectRays) into a fresh output array and compares every ray's t, u, v and
 * triangle with closestHit's, and the hit count; returns the hits.
 */
export function expectSameAsClosestHit(mesh: TriangleBvh, rays: Float32Array, query: (out: Float32Array) => number = (out) => intersectRays(mesh, rays, out)): number {
  const n = rays.length / 8;
  const out = new Float32Array(n * 4), one = new Float64Array(4);
  const hits = query(out);
  let expectedHits = 0;
  for (let i = 0; i < n; i++) {
    const r = rays.subarray(i * 8, i * 8 + 8);
    if (closestHit(mesh, r[0]!, r[1]!, r[2]!, r[3]!, r[4]!, r[5]!, r[6]!, r[7]!, one, 0)) expectedHits++;
    expect([out[i * 4], out[i * 4 + 1], out[i * 4 + 2], out[i * 4 + 3]]).toEqual(Array.from(one, (x) => Math.fround(x)));
  }
  expect(hits).toBe(expectedHits);
  return hits;
}
