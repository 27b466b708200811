/**
 * Batch closest-hit query for tools and benchmarks.
 *
 *   const mesh = buildTriangleBvh(positions, indices);   // xyz per vertex, 3 indices per triangle
 *   intersectRays(mesh, rays, out);                      // rays: ox,oy,oz,dx,dy,dz,tmin,tmax per ray
 *   // out: t,u,v,triangle per ray; t = Infinity and triangle = -1 on a miss
 *
 * u and v are the barycentric weights of the triangle's second and third vertex. Triangle indices
 * are written as float32, exact up to 2^24 triangles (far above the scene limits).
 */
import { buildBvhConsuming, type BuildBvhOptions } from "./build";
import { closestHitBatch, createTraversalScratch, type TriangleBvh } from "./traverse";

export type { TriangleBvh } from "./traverse";

export function buildTriangleBvh(positions: Float32Array, indices: Uint32Array, options?: BuildBvhOptions): TriangleBvh {
  if (indices.length % 3 !== 0) throw new Error(`buildTriangleBvh: indices length ${indices.length} is not a multiple of 3`);
  if (positions.length % 3 !== 0) throw new Error(`buildTriangleBvh: positions length ${positions.length} is not a multiple of 3`);
  const triCount = indices.length / 3;
  const bad = firstBadTriangle(indices, positions.length / 3);
  if (bad >= 0) {
    const worst = Math.max(indices[bad * 3]!, indices[bad * 3 + 1]!, indices[bad * 3 + 2]!);
    throw new Error(`buildTriangleBvh: triangle ${bad} refers to vertex ${worst} but there are ${positions.length / 3} vertices`);
  }
  const bounds = new Float32Array(triCount * 6);
  triangleBounds(positions, indices, bounds);
  // Leaves of up to ~4 triangles: measured as fast as the default tree for closest-hit rays on the
  // bunny meshes while halving the node count (less memory, faster builds).
  const bvh = buildBvhConsuming(bounds, { traversalCost: 4, ...options });
  const tris = new Float32Array(triCount * 9);
  gatherTriangles(positions, indices, bvh.primIndices, tris);
  return { bvh, tris, triCount };
}

// The loops below live in their own small functions with nothing after the loop: V8 compiles long
// loops on-stack, and code after such a loop that never ran yet would deoptimise on every call.

function firstBadTriangle(indices: Uint32Array, vertexCount: number): number {
  for (let i = 0; i < indices.length; i++) if (indices[i]! >= vertexCount) return (i / 3) | 0;
  return -1;
}

function triangleBounds(positions: Float32Array, indices: Uint32Array, bounds: Float32Array): void {
  const n = indices.length / 3;
  for (let t = 0; t < n; t++) {
    const a = indices[t * 3]! * 3, b = indices[t * 3 + 1]! * 3, c = indices[t * 3 + 2]! * 3, o = t * 6;
    for (let k = 0; k < 3; k++) {
      const pa = positions[a + k]!, pb = positions[b + k]!, pc = positions[c + k]!;
      bounds[o + k] = pa < pb ? (pa < pc ? pa : pc) : pb < pc ? pb : pc;
      bounds[o + 3 + k] = pa > pb ? (pa > pc ? pa : pc) : pb > pc ? pb : pc;
    }
  }
}

function gatherTriangles(positions: Float32Array, indices: Uint32Array, order: Uint32Array, tris: Float32Array): void {
  const n = order.length;
  for (let k = 0; k < n; k++) {
    const t = order[k]!;
    const a = indices[t * 3]! * 3, b = indices[t * 3 + 1]! * 3, c = indices[t * 3 + 2]! * 3, q = k * 9;
    const ax = positions[a]!, ay = positions[a + 1]!, az = positions[a + 2]!;
    tris[q] = ax; tris[q + 1] = ay; tris[q + 2] = az;
    tris[q + 3] = positions[b]! - ax; tris[q + 4] = positions[b + 1]! - ay; tris[q + 5] = positions[b + 2]! - az;
    tris[q + 6] = positions[c]! - ax; tris[q + 7] = positions[c + 1]! - ay; tris[q + 8] = positions[c + 2]! - az;
  }
}

const scratch = createTraversalScratch();

/** Closest hit for every ray; returns the number of rays that hit. */
export function intersectRays(mesh: TriangleBvh, rays: Float32Array, out: Float32Array): number {
  if (rays.length % 8 !== 0) throw new Error(`intersectRays: rays length ${rays.length} is not a multiple of 8`);
  const n = rays.length / 8;
  if (out.length < n * 4) throw new Error(`intersectRays: out holds ${out.length} floats but ${n} rays need ${n * 4}`);
  return closestHitBatch(mesh, rays, 0, n, out, scratch);
}

/** Bytes held by a triangle BVH (nodes, leaf order map, triangle data). */
export function triangleBvhByteLength(mesh: TriangleBvh): number {
  return mesh.bvh.nodes.byteLength + mesh.bvh.primIndices.byteLength + mesh.tris.byteLength;
}
