/**
 * Ray–primitive intersection and BVH traversal over the compiled scene (node layout: bvh/layout.ts).
 * Geometry is stored as float32; all arithmetic here is float64. Moving primitives are intersected by
 * moving the ray origin back by velocity × time (the same as translating the primitive forward).
 */
import type { CompiledScene } from "../compile/types";
import { PRIM_DISK, PRIM_GEOM_STRIDE, PRIM_INFO_STRIDE, PRIM_RECT, PRIM_SPHERE, PRIM_TRIANGLE } from "../compile/types";
import { NODE_WORDS, TRAVERSAL_STACK_SIZE } from "../bvh/layout";

/** A ray with unit direction; reused for every ray. */
export class Ray {
  ox = 0;
  oy = 0;
  oz = 0;
  dx = 0;
  dy = 1;
  dz = 0;
  tmax = Infinity;
  time = 0;
}

/** Closest-hit record plus the surface data filled in by `surfaceAt`. */
export class Hit {
  t = Infinity;
  prim = -1;
  /** triangle barycentrics of v1, v2 (or rect parameters) */
  u = 0;
  v = 0;
  px = 0;
  py = 0;
  pz = 0;
  /** geometric normal: outward for spheres and boxes, u×v for rects, the disk normal, the winding normal for triangles (flipped to agree with vertex normals) */
  ngx = 0;
  ngy = 0;
  ngz = 1;
  /** shading normal, same side as ng */
  nsx = 0;
  nsy = 0;
  nsz = 1;
}

/** Scratch for traversal; one per worker/thread. */
export class TraceScratch {
  readonly stack = new Uint32Array(TRAVERSAL_STACK_SIZE);
  /** entry distance of each pending node */
  readonly dist = new Float64Array(TRAVERSAL_STACK_SIZE);
  /**
   * intersectPrim's ray (ox, oy, oz, dx, dy, dz, time, tmax) and result (t, u, v). Passed through
   * typed arrays because a call that is not inlined boxes every double argument and result on the
   * heap: eleven allocations per primitive test.
   */
  readonly primRay = new Float64Array(8);
  readonly primHit = new Float64Array(3);
}

/**
 * Intersects primitive `p` with the ray in ts.primRay. On a hit in (0, tmax) writes (t, u, v) to
 * ts.primHit and returns true (u, v: triangle barycentrics or rect parameters, 0 otherwise).
 */
export function intersectPrim(s: CompiledScene, p: number, ts: TraceScratch): boolean {
  const ray = ts.primRay, out = ts.primHit;
  let ox = ray[0], oy = ray[1], oz = ray[2];
  const dx = ray[3], dy = ray[4], dz = ray[5], time = ray[6], tmax = ray[7];
  const info = s.primInfo;
  const ib = p * PRIM_INFO_STRIDE;
  const motion = info[ib + 3];
  if (motion >= 0) {
    const vel = s.velocities;
    ox -= vel[motion * 3] * time;
    oy -= vel[motion * 3 + 1] * time;
    oz -= vel[motion * 3 + 2] * time;
  }
  const g = s.primGeom;
  const o = p * PRIM_GEOM_STRIDE;
  const kind = info[ib];
  if (kind === PRIM_TRIANGLE) {
    // Möller & Trumbore, "Fast, Minimum Storage Ray-Triangle Intersection", JGT 2(1), 1997 (two-sided).
    const e1x = g[o + 3], e1y = g[o + 4], e1z = g[o + 5];
    const e2x = g[o + 6], e2y = g[o + 7], e2z = g[o + 8];
    const pvx = dy * e2z - dz * e2y;
    const pvy = dz * e2x - dx * e2z;
    const pvz = dx * e2y - dy * e2x;
    const det = e1x * pvx + e1y * pvy + e1z * pvz;
    if (det === 0) return false;
    const inv = 1 / det;
    const tx = ox - g[o], ty = oy - g[o + 1], tz = oz - g[o + 2];
    const u = (tx * pvx + ty * pvy + tz * pvz) * inv;
    if (u < 0 || u > 1) return false;
    const qx = ty * e1z - tz * e1y;
    const qy = tz * e1x - tx * e1z;
    const qz = tx * e1y - ty * e1x;
    const v = (dx * qx + dy * qy + dz * qz) * inv;
    if (v < 0 || u + v > 1) return false;
    const t = (e2x * qx + e2y * qy + e2z * qz) * inv;
    if (!(t > 0 && t < tmax)) return false;
    out[0] = t; out[1] = u; out[2] = v;
    return true;
  }
  if (kind === PRIM_SPHERE) {
    // Geometric form with the closest-approach vector (better conditioned than the textbook quadratic).
    const fx = ox - g[o], fy = oy - g[o + 1], fz = oz - g[o + 2];
    const r = g[o + 3];
    const b = fx * dx + fy * dy + fz * dz;
    const lx = fx - b * dx, ly = fy - b * dy, lz = fz - b * dz;
    const disc = r * r - (lx * lx + ly * ly + lz * lz);
    if (disc < 0) return false;
    const q = Math.sqrt(disc);
    let t = -b - q;
    if (!(t > 0)) t = -b + q;
    if (!(t > 0 && t < tmax)) return false;
    out[0] = t; out[1] = 0; out[2] = 0;
    return true;
  }
  if (kind === PRIM_RECT) {
    const wx = g[o + 9], wy = g[o + 10], wz = g[o + 11];
    const den = wx * dx + wy * dy + wz * dz;
    if (den === 0) return false;
    const t = (wx * (g[o] - ox) + wy * (g[o + 1] - oy) + wz * (g[o + 2] - oz)) / den;
    if (!(t > 0 && t < tmax)) return false;
    const hx = ox + t * dx - g[o], hy = oy + t * dy - g[o + 1], hz = oz + t * dz - g[o + 2];
    const ux = g[o + 3], uy = g[o + 4], uz = g[o + 5];
    const vx = g[o + 6], vy = g[o + 7], vz = g[o + 8];
    // parameters in the dual basis: a = w·(h × v), b = w·(u × h)
    const a = wx * (hy * vz - hz * vy) + wy * (hz * vx - hx * vz) + wz * (hx * vy - hy * vx);
    if (a < 0 || a > 1) return false;
    const bb = wx * (uy * hz - uz * hy) + wy * (uz * hx - ux * hz) + wz * (ux * hy - uy * hx);
    if (bb < 0 || bb > 1) return false;
    out[0] = t; out[1] = a; out[2] = bb;
    return true;
  }
  if (kind === PRIM_DISK) {
    const nx = g[o + 3], ny = g[o + 4], nz = g[o + 5];
    const den = nx * dx + ny * dy + nz * dz;
    if (den === 0) return false;
    const cx = g[o], cy = g[o + 1], cz = g[o + 2];
    const t = (nx * (cx - ox) + ny * (cy - oy) + nz * (cz - oz)) / den;
    if (!(t > 0 && t < tmax)) return false;
    const hx = ox + t * dx - cx, hy = oy + t * dy - cy, hz = oz + t * dz - cz;
    const r = g[o + 6];
    if (hx * hx + hy * hy + hz * hz > r * r) return false;
    out[0] = t; out[1] = 0; out[2] = 0;
    return true;
  }
  return false;
}

/**
 * Entry distance of the ray into the box of node `nb` (word offset), or Infinity if it misses the box or
 * enters beyond tmax. A relative tolerance keeps grazing rays from slipping between float32 boxes.
 */
function boxEntry(
  nodes: Float32Array,
  nb: number,
  ox: number,
  oy: number,
  oz: number,
  ix: number,
  iy: number,
  iz: number,
  nxo: number,
  nyo: number,
  nzo: number,
  tmax: number,
): number {
  // Slabs are chosen by the direction's sign (word offsets fixed once per ray, nothing swapped per
  // box), so an empty box (min > max) always misses. The far slab's word is 3 - nxo, 5 - nyo, 7 - nzo.
  let t0 = (nodes[nb + nxo] - ox) * ix;
  let t1 = (nodes[nb + 3 - nxo] - ox) * ix;
  const y0 = (nodes[nb + nyo] - oy) * iy;
  const y1 = (nodes[nb + 5 - nyo] - oy) * iy;
  if (y0 > t0) t0 = y0;
  if (y1 < t1) t1 = y1;
  const z0 = (nodes[nb + nzo] - oz) * iz;
  const z1 = (nodes[nb + 7 - nzo] - oz) * iz;
  if (z0 > t0) t0 = z0;
  if (z1 < t1) t1 = z1;
  // NaN (a ray lying in a slab plane with zero direction) fails these tests and leaves the slab open
  if (t0 <= t1 * 1.0000001 + 1e-12 && t1 >= 0 && t0 < tmax) return t0 > 0 ? t0 : 0;
  return Infinity;
}

/**
 * Closest hit along the ray within (0, ray.tmax). Fills hit.t, hit.prim, hit.u, hit.v; returns false on a
 * miss. With `anyHit` it stops at the first hit found (shadow rays). Primitive `skip` (or -1) is ignored:
 * a shadow ray aimed at a point on a light must not be stopped by that light's own surface, which
 * rounding near its silhouette would otherwise do.
 *
 * Both children's boxes are tested before descending; the nearer is visited first and the farther is
 * pushed with its entry distance, so it is skipped once a closer hit is known.
 */
export function traceRay(s: CompiledScene, ray: Ray, hit: Hit, ts: TraceScratch, anyHit: boolean, skip = -1): boolean {
  const nodes = s.bvh.nodes;
  const words = s.bvh.words;
  const primIdx = s.bvh.primIndices;
  const info = s.primInfo;
  const g = s.primGeom;
  const stack = ts.stack;
  const dist = ts.dist;
  const ox = ray.ox, oy = ray.oy, oz = ray.oz;
  const dx = ray.dx, dy = ray.dy, dz = ray.dz;
  const time = ray.time;
  const ix = 1 / dx, iy = 1 / dy, iz = 1 / dz;
  // Near-slab word of each axis: min (0..2) for a positive direction, max (3..5) for a negative one.
  const nxo = ix < 0 ? 3 : 0, nyo = iy < 0 ? 4 : 1, nzo = iz < 0 ? 5 : 2;
  let tmax = ray.tmax;
  let best = -1;
  let bu = 0, bv = 0;
  let sp = 0;
  let node = 0;
  if (s.primCount === 0) return false;
  if (boxEntry(nodes, 0, ox, oy, oz, ix, iy, iz, nxo, nyo, nzo, tmax) === Infinity) return false;
  for (;;) {
    const nb = node * NODE_WORDS;
    const count = words[nb + 7] >>> 2;
    if (count === 0) {
      const left = node + 1;
      const right = words[nb + 6];
      const tl = boxEntry(nodes, left * NODE_WORDS, ox, oy, oz, ix, iy, iz, nxo, nyo, nzo, tmax);
      const tr = boxEntry(nodes, right * NODE_WORDS, ox, oy, oz, ix, iy, iz, nxo, nyo, nzo, tmax);
      if (tl !== Infinity) {
        if (tr !== Infinity) {
          if (tr < tl) {
            stack[sp] = left;
            dist[sp++] = tl;
            node = right;
          } else {
            stack[sp] = right;
            dist[sp++] = tr;
            node = left;
          }
        } else node = left;
        continue;
      }
      if (tr !== Infinity) {
        node = right;
        continue;
      }
    } else {
      const first = words[nb + 6];
      for (let i = first; i < first + count; i++) {
        const p = primIdx[i];
        if (p === skip) continue;
        const ib = p * PRIM_INFO_STRIDE;
        let t = Infinity, cu = 0, cv = 0;
        if (info[ib] === PRIM_TRIANGLE && info[ib + 3] < 0) {
          // static triangle, inlined (Möller & Trumbore 1997, two-sided)
          const o = p * PRIM_GEOM_STRIDE;
          const e1x = g[o + 3], e1y = g[o + 4], e1z = g[o + 5];
          const e2x = g[o + 6], e2y = g[o + 7], e2z = g[o + 8];
          const pvx = dy * e2z - dz * e2y;
          const pvy = dz * e2x - dx * e2z;
          const pvz = dx * e2y - dy * e2x;
          const det = e1x * pvx + e1y * pvy + e1z * pvz;
          if (det === 0) continue;
          const inv = 1 / det;
          const tx = ox - g[o], ty = oy - g[o + 1], tz = oz - g[o + 2];
          const u = (tx * pvx + ty * pvy + tz * pvz) * inv;
          if (u < 0 || u > 1) continue;
          const qx = ty * e1z - tz * e1y;
          const qy = tz * e1x - tx * e1z;
          const qz = tx * e1y - ty * e1x;
          const v = (dx * qx + dy * qy + dz * qz) * inv;
          if (v < 0 || u + v > 1) continue;
          t = (e2x * qx + e2y * qy + e2z * qz) * inv;
          if (!(t > 0 && t < tmax)) continue;
          cu = u;
          cv = v;
        } else {
          const pr = ts.primRay, ph = ts.primHit;
          pr[0] = ox; pr[1] = oy; pr[2] = oz; pr[3] = dx; pr[4] = dy; pr[5] = dz; pr[6] = time; pr[7] = tmax;
          if (!intersectPrim(s, p, ts)) continue;
          t = ph[0]; cu = ph[1]; cv = ph[2];
          if (!(t < tmax)) continue;
        }
        tmax = t;
        best = p;
        bu = cu;
        bv = cv;
        if (anyHit) {
          hit.t = t;
          hit.prim = p;
          return true;
        }
      }
    }
    // pop the nearest pending node that can still hold a closer hit
    let found = false;
    while (sp > 0) {
      sp--;
      if (dist[sp] < tmax) {
        node = stack[sp];
        found = true;
        break;
      }
    }
    if (!found) break;
  }
  if (best < 0) return false;
  hit.t = tmax;
  hit.prim = best;
  hit.u = bu;
  hit.v = bv;
  return true;
}

/** Fill position and normals of hit (after traceRay found it). */
export function surfaceAt(s: CompiledScene, ray: Ray, hit: Hit): void {
  const t = hit.t;
  const px = ray.ox + t * ray.dx;
  const py = ray.oy + t * ray.dy;
  const pz = ray.oz + t * ray.dz;
  hit.px = px;
  hit.py = py;
  hit.pz = pz;
  const p = hit.prim;
  const ib = p * PRIM_INFO_STRIDE;
  const g = s.primGeom;
  const o = p * PRIM_GEOM_STRIDE;
  const kind = s.primInfo[ib];
  let nx = 0, ny = 0, nz = 1;
  if (kind === PRIM_TRIANGLE) {
    const e1x = g[o + 3], e1y = g[o + 4], e1z = g[o + 5];
    const e2x = g[o + 6], e2y = g[o + 7], e2z = g[o + 8];
    nx = e1y * e2z - e1z * e2y;
    ny = e1z * e2x - e1x * e2z;
    nz = e1x * e2y - e1y * e2x;
  } else if (kind === PRIM_SPHERE) {
    let cx = g[o], cy = g[o + 1], cz = g[o + 2];
    const motion = s.primInfo[ib + 3];
    if (motion >= 0) {
      cx += s.velocities[motion * 3] * ray.time;
      cy += s.velocities[motion * 3 + 1] * ray.time;
      cz += s.velocities[motion * 3 + 2] * ray.time;
    }
    nx = px - cx;
    ny = py - cy;
    nz = pz - cz;
  } else if (kind === PRIM_RECT) {
    nx = g[o + 9];
    ny = g[o + 10];
    nz = g[o + 11];
  } else {
    nx = g[o + 3];
    ny = g[o + 4];
    nz = g[o + 5];
  }
  let inv = 1 / Math.sqrt(nx * nx + ny * ny + nz * nz);
  nx *= inv;
  ny *= inv;
  nz *= inv;
  let sx = nx, sy = ny, sz = nz;
  const no = s.primInfo[ib + 4];
  if (kind === PRIM_TRIANGLE && no >= 0) {
    const N = s.normals;
    const b1 = hit.u, b2 = hit.v, b0 = 1 - b1 - b2;
    sx = b0 * N[no] + b1 * N[no + 3] + b2 * N[no + 6];
    sy = b0 * N[no + 1] + b1 * N[no + 4] + b2 * N[no + 7];
    sz = b0 * N[no + 2] + b1 * N[no + 5] + b2 * N[no + 8];
    const l2 = sx * sx + sy * sy + sz * sz;
    if (l2 > 0) {
      inv = 1 / Math.sqrt(l2);
      sx *= inv;
      sy *= inv;
      sz *= inv;
      // vertex normals decide which side is outside when the winding disagrees with them
      if (sx * nx + sy * ny + sz * nz < 0) {
        nx = -nx;
        ny = -ny;
        nz = -nz;
      }
    } else {
      sx = nx;
      sy = ny;
      sz = nz;
    }
  }
  hit.ngx = nx;
  hit.ngy = ny;
  hit.ngz = nz;
  hit.nsx = sx;
  hit.nsy = sy;
  hit.nsz = sz;
}
