/**
 * Benchmark meshes: the Stanford bunny from the `bunny` npm package and midpoint subdivisions of
 * it (each triangle → 4, edge midpoints shared), plus deterministic incoherent ray sets.
 */
import { createRequire } from "node:module";

export type BenchMesh = { name: string; positions: Float32Array; indices: Uint32Array };

const require = createRequire(import.meta.url);

export function loadBunny(): BenchMesh {
  const bunny = require("bunny") as { positions: number[][]; cells: number[][] };
  const positions = new Float32Array(bunny.positions.length * 3);
  bunny.positions.forEach((p, i) => positions.set(p, i * 3));
  const indices = new Uint32Array(bunny.cells.length * 3);
  bunny.cells.forEach((c, i) => indices.set(c, i * 3));
  return { name: "bunny", positions, indices };
}

/** One level of midpoint subdivision: every triangle becomes four; shared edges share their midpoint. */
export function subdivideMidpoint(mesh: BenchMesh): BenchMesh {
  const { positions, indices } = mesh;
  const vCount = positions.length / 3;
  const triCount = indices.length / 3;
  const edgeMid = new Map<number, number>();
  const out: number[] = Array.from(positions);
  let next = vCount;
  const mid = (a: number, b: number): number => {
    const lo = a < b ? a : b, hi = a < b ? b : a;
    const key = lo * vCount + hi;
    const found = edgeMid.get(key);
    if (found !== undefined) return found;
    out.push((positions[a * 3] + positions[b * 3]) / 2, (positions[a * 3 + 1] + positions[b * 3 + 1]) / 2, (positions[a * 3 + 2] + positions[b * 3 + 2]) / 2);
    edgeMid.set(key, next);
    return next++;
  };
  const idx = new Uint32Array(triCount * 12);
  for (let t = 0; t < triCount; t++) {
    const a = indices[t * 3], b = indices[t * 3 + 1], c = indices[t * 3 + 2];
    const ab = mid(a, b), bc = mid(b, c), ca = mid(c, a);
    idx.set([a, ab, ca, ab, b, bc, ca, bc, c, ab, bc, ca], t * 12);
  }
  return { name: mesh.name, positions: new Float32Array(out), indices: idx };
}

export function subdivideTo(mesh: BenchMesh, minTriangles: number): BenchMesh {
  let m = mesh;
  while (m.indices.length / 3 < minTriangles) m = subdivideMidpoint(m);
  return { ...m, name: `${mesh.name}-${Math.round(m.indices.length / 3 / 1000)}k` };
}

/** Small counter-based generator so every run and every library sees identical rays (common practice: xorshift32). */
export function makeRandom(seed: number): () => number {
  let s = seed >>> 0 || 1;
  return () => {
    s ^= s << 13; s >>>= 0; s ^= s >>> 17; s ^= s << 5; s >>>= 0;
    return s / 4294967296;
  };
}

export function meshBounds(positions: Float32Array): { center: [number, number, number]; radius: number } {
  const min = [Infinity, Infinity, Infinity], max = [-Infinity, -Infinity, -Infinity];
  for (let i = 0; i < positions.length; i += 3) {
    for (let k = 0; k < 3; k++) { min[k] = Math.min(min[k], positions[i + k]); max[k] = Math.max(max[k], positions[i + k]); }
  }
  const center: [number, number, number] = [(min[0] + max[0]) / 2, (min[1] + max[1]) / 2, (min[2] + max[2]) / 2];
  const radius = Math.hypot(max[0] - min[0], max[1] - min[1], max[2] - min[2]) / 2;
  return { center, radius };
}

/**
 * Rays from random points on a sphere (2× the mesh radius) toward random points inside the
 * mesh's bounding sphere: incoherent primary-like rays. Layout: ox,oy,oz,dx,dy,dz,tmin,tmax.
 */
export function sphereRays(positions: Float32Array, count: number, seed: number): Float32Array {
  const rnd = makeRandom(seed);
  const { center, radius } = meshBounds(positions);
  const rays = new Float32Array(count * 8);
  const unit = (): [number, number, number] => {
    const z = 2 * rnd() - 1, phi = 2 * Math.PI * rnd(), r = Math.sqrt(Math.max(0, 1 - z * z));
    return [r * Math.cos(phi), r * Math.sin(phi), z];
  };
  for (let i = 0; i < count; i++) {
    const u = unit();
    const o = [center[0] + 2 * radius * u[0], center[1] + 2 * radius * u[1], center[2] + 2 * radius * u[2]];
    const v = unit(), s = 0.5 * radius * Math.cbrt(rnd());
    const target = [center[0] + s * v[0], center[1] + s * v[1], center[2] + s * v[2]];
    let dx = target[0] - o[0], dy = target[1] - o[1], dz = target[2] - o[2];
    const len = Math.hypot(dx, dy, dz);
    dx /= len; dy /= len; dz /= len;
    rays.set([o[0], o[1], o[2], dx, dy, dz, 0, Infinity], i * 8);
  }
  return rays;
}

/**
 * Diffuse-bounce rays: for each hit of `primary` (out = t,u,v,tri), a ray leaving the hit point
 * cosine-distributed about the geometric normal facing the incoming ray (Malley's method:
 * uniform disk sample projected up to the hemisphere). Misses are skipped.
 */
export function bounceRays(mesh: BenchMesh, primary: Float32Array, hits: Float32Array, seed: number): Float32Array {
  const rnd = makeRandom(seed);
  const { positions, indices } = mesh;
  const list: number[] = [];
  const rayCount = primary.length / 8;
  for (let i = 0; i < rayCount; i++) {
    const t = hits[i * 4];
    if (!(t < Infinity)) continue;
    const tri = hits[i * 4 + 3];
    const a = indices[tri * 3] * 3, b = indices[tri * 3 + 1] * 3, c = indices[tri * 3 + 2] * 3;
    const e1 = [positions[b] - positions[a], positions[b + 1] - positions[a + 1], positions[b + 2] - positions[a + 2]];
    const e2 = [positions[c] - positions[a], positions[c + 1] - positions[a + 1], positions[c + 2] - positions[a + 2]];
    let n = [e1[1] * e2[2] - e1[2] * e2[1], e1[2] * e2[0] - e1[0] * e2[2], e1[0] * e2[1] - e1[1] * e2[0]];
    const nl = Math.hypot(n[0], n[1], n[2]);
    if (nl === 0) continue;
    n = n.map((x) => x / nl);
    const d = [primary[i * 8 + 3], primary[i * 8 + 4], primary[i * 8 + 5]];
    if (n[0] * d[0] + n[1] * d[1] + n[2] * d[2] > 0) n = n.map((x) => -x);
    // Orthonormal basis around n (branchless construction, Duff et al. 2017).
    const sign = n[2] >= 0 ? 1 : -1;
    const aa = -1 / (sign + n[2]), bb = n[0] * n[1] * aa;
    const t1 = [1 + sign * n[0] * n[0] * aa, sign * bb, -sign * n[0]];
    const t2 = [bb, sign + n[1] * n[1] * aa, -n[1]];
    const r = Math.sqrt(rnd()), phi = 2 * Math.PI * rnd();
    const x = r * Math.cos(phi), y = r * Math.sin(phi), z = Math.sqrt(Math.max(0, 1 - x * x - y * y));
    const dir = [0, 1, 2].map((k) => x * t1[k] + y * t2[k] + z * n[k]);
    const p = [0, 1, 2].map((k) => primary[i * 8 + k] + t * d[k]);
    // Offset along the normal so the bounce does not re-hit its own triangle (common practice).
    const eps = 1e-4 * meshScale(positions);
    list.push(p[0] + eps * n[0], p[1] + eps * n[1], p[2] + eps * n[2], dir[0], dir[1], dir[2], 0, Infinity);
  }
  return new Float32Array(list);
}

const scaleCache = new WeakMap<Float32Array, number>();
function meshScale(positions: Float32Array): number {
  let s = scaleCache.get(positions);
  if (s === undefined) { s = meshBounds(positions).radius; scaleCache.set(positions, s); }
  return s;
}
