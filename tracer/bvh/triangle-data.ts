/**
 * Triangle data for the batch query: per-triangle boxes for the builder and the triangles gathered
 * in leaf order as one vertex and two edges (the form the Möller–Trumbore test reads).
 */

// The loops below live in their own small functions with nothing after the loop: V8 compiles long
// loops on-stack, and code after such a loop that never ran yet would deoptimise on every call.

export function firstBadTriangle(indices: Uint32Array, vertexCount: number): number {
  for (let i = 0; i < indices.length; i++) if (indices[i]! >= vertexCount) return (i / 3) | 0;
  return -1;
}

/**
 * Per-triangle boxes. The nine coordinates are loaded up front and each axis takes the min and
 * max of the first two vertices, then of that and the third: 0.78–0.80× the time of the earlier
 * per-axis loop with nested ternaries on the 59k and 941k bunnies. Ties resolve as they did there,
 * so the boxes are identical down to the sign of a zero.
 */
export function triangleBounds(positions: Float32Array, indices: Uint32Array, bounds: Float32Array): void {
  const n = indices.length / 3;
  for (let t = 0; t < n; t++) {
    const a = indices[t * 3]! * 3, b = indices[t * 3 + 1]! * 3, c = indices[t * 3 + 2]! * 3, o = t * 6;
    const ax = positions[a]!, ay = positions[a + 1]!, az = positions[a + 2]!;
    const bx = positions[b]!, by = positions[b + 1]!, bz = positions[b + 2]!;
    const cx = positions[c]!, cy = positions[c + 1]!, cz = positions[c + 2]!;
    let lo = ax < bx ? ax : bx, hi = ax > bx ? ax : bx;
    bounds[o] = lo < cx ? lo : cx; bounds[o + 3] = hi > cx ? hi : cx;
    lo = ay < by ? ay : by; hi = ay > by ? ay : by;
    bounds[o + 1] = lo < cy ? lo : cy; bounds[o + 4] = hi > cy ? hi : cy;
    lo = az < bz ? az : bz; hi = az > bz ? az : bz;
    bounds[o + 2] = lo < cz ? lo : cz; bounds[o + 5] = hi > cz ? hi : cz;
  }
}

export function gatherTriangles(positions: Float32Array, indices: Uint32Array, order: Uint32Array, tris: Float32Array): void {
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
