/**
 * Light sampling for next-event estimation: rect and disk lights by area (converted to solid angle),
 * sphere lights by the cone of directions they subtend (uniform in solid angle), point lights exactly.
 * Record layout of `lights`: compile/types.ts.
 */
import type { CompiledScene } from "../compile/types";
import { LIGHT_DISK, LIGHT_POINT, LIGHT_RECT, LIGHT_SPHERE, LIGHT_STRIDE } from "../compile/types";
import { basisFromNormal, concentricDisk, uniformCone, TWO_PI } from "../math/sampling";

/**
 * One light sample, reused: inputs (the shading point and two uniform numbers) and outputs. Inputs go in
 * through typed arrays because V8 does not inline the samplers into the path loop and would box every
 * double argument. Direction (unit) from the shading point toward the light.
 */
export class LightSample {
  /** input: the shading point */
  readonly at = new Float64Array(3);
  /** input: three uniform numbers in [0, 1): u[0] chooses the light (pickLight), u[1] and u[2] the point on it */
  readonly u = new Float64Array(3);
  wx = 0;
  wy = 0;
  wz = 0;
  /** distance to the sampled point (Infinity for the environment) */
  dist = 0;
  /** radiance arriving along w (for point lights: intensity / distance²) */
  r = 0;
  g = 0;
  b = 0;
  /** solid-angle pdf of this direction, not including the light-choice probability; 1 for point lights */
  pdf = 0;
  delta = false;
  readonly tmp = new Float64Array(3);
  readonly basis = new Float64Array(6);
}

/** Choose a light (or the environment, returned as -2) with the stored probabilities and ls.u[0]; -1 if nothing to sample. */
export function pickLight(s: CompiledScene, ls: LightSample): number {
  const u = ls.u[0];
  const n = s.lightCount;
  const cdf = s.lightCdf;
  if (n > 0 && u < cdf[n]) {
    // binary search for the last i with cdf[i] ≤ u (scenes may hold up to 1000 lights)
    let lo = 0;
    let hi = n - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      if (cdf[mid] <= u) lo = mid;
      else hi = mid - 1;
    }
    return lo;
  }
  if (s.envPick > 0) return -2;
  // rounding left u above the last cumulative value: return the last light with any probability
  const L = s.lights;
  for (let i = n - 1; i >= 0; i--) if (L[i * LIGHT_STRIDE + 20] > 0) return i;
  return -1;
}

/**
 * Sample light `li` as seen from point ls.at with the numbers ls.u[1..2]. Returns false if the sample
 * carries no light. One function per kind of light, each small enough that V8 inlines its helpers (a
 * helper left as a call boxes its double arguments).
 */
export function sampleLight(s: CompiledScene, li: number, ls: LightSample): boolean {
  const L = s.lights;
  const o = li * LIGHT_STRIDE;
  const kind = L[o];
  if (kind === LIGHT_POINT) return samplePointLight(L, o, ls);
  ls.delta = false;
  if (kind === LIGHT_SPHERE) return sampleSphereLight(L, o, ls);
  return sampleAreaLight(L, o, kind === LIGHT_RECT, ls);
}

function samplePointLight(L: Float64Array, o: number, ls: LightSample): boolean {
  const px = ls.at[0], py = ls.at[1], pz = ls.at[2];
  const dx = L[o + 7] - px, dy = L[o + 8] - py, dz = L[o + 9] - pz;
  const d2 = dx * dx + dy * dy + dz * dz;
  if (d2 === 0) return false;
  const d = Math.sqrt(d2);
  ls.wx = dx / d;
  ls.wy = dy / d;
  ls.wz = dz / d;
  ls.dist = d;
  ls.r = L[o + 3] / d2;
  ls.g = L[o + 4] / d2;
  ls.b = L[o + 5] / d2;
  ls.pdf = 1;
  ls.delta = true;
  return true;
}

function sampleSphereLight(L: Float64Array, o: number, ls: LightSample): boolean {
  const px = ls.at[0], py = ls.at[1], pz = ls.at[2];
  const u1 = ls.u[1], u2 = ls.u[2];
  const tmp = ls.tmp;
  const cx = L[o + 7] - px, cy = L[o + 8] - py, cz = L[o + 9] - pz;
  const r = L[o + 19];
  const dc2 = cx * cx + cy * cy + cz * cz;
  if (dc2 <= r * r) return false; // inside: a sphere light emits outward only
  const dc = Math.sqrt(dc2);
  const sin2 = (r * r) / dc2;
  const cosMax = Math.sqrt(Math.max(0, 1 - sin2));
  const oneMinusCos = sin2 / (1 + cosMax);
  uniformCone(u1, u2, oneMinusCos, tmp);
  const ax = cx / dc, ay = cy / dc, az = cz / dc;
  const B = ls.basis;
  basisFromNormal(ax, ay, az, B);
  const tx = B[0], ty = B[1], tz = B[2];
  const bx = B[3], by = B[4], bz = B[5];
  const lx = tmp[0], ly = tmp[1], lz = tmp[2];
  const wx = lx * tx + ly * bx + lz * ax;
  const wy = lx * ty + ly * by + lz * ay;
  const wz = lx * tz + ly * bz + lz * az;
  // distance to the near intersection with the sphere along w (clamped for grazing samples)
  const cosT = lz;
  const sin2T = Math.max(0, 1 - cosT * cosT);
  const dist = dc * cosT - Math.sqrt(Math.max(0, r * r - dc2 * sin2T));
  ls.wx = wx;
  ls.wy = wy;
  ls.wz = wz;
  ls.dist = dist;
  ls.r = L[o + 3];
  ls.g = L[o + 4];
  ls.b = L[o + 5];
  ls.pdf = 1 / (TWO_PI * oneMinusCos);
  return true;
}

function sampleAreaLight(L: Float64Array, o: number, rect: boolean, ls: LightSample): boolean {
  const px = ls.at[0], py = ls.at[1], pz = ls.at[2];
  const u1 = ls.u[1], u2 = ls.u[2];
  const tmp = ls.tmp;
  // rect or disk: uniform by area
  let qx: number, qy: number, qz: number;
  if (rect) {
    qx = L[o + 7] + u1 * L[o + 10] + u2 * L[o + 13];
    qy = L[o + 8] + u1 * L[o + 11] + u2 * L[o + 14];
    qz = L[o + 9] + u1 * L[o + 12] + u2 * L[o + 15];
  } else {
    concentricDisk(u1, u2, tmp);
    const r = L[o + 19];
    const dx = tmp[0] * r, dy = tmp[1] * r;
    const B = ls.basis;
    basisFromNormal(L[o + 16], L[o + 17], L[o + 18], B);
    qx = L[o + 7] + dx * B[0] + dy * B[3];
    qy = L[o + 8] + dx * B[1] + dy * B[4];
    qz = L[o + 9] + dx * B[2] + dy * B[5];
  }
  const dx = qx - px, dy = qy - py, dz = qz - pz;
  const d2 = dx * dx + dy * dy + dz * dz;
  if (d2 === 0) return false;
  const d = Math.sqrt(d2);
  const wx = dx / d, wy = dy / d, wz = dz / d;
  const cosL = -(wx * L[o + 16] + wy * L[o + 17] + wz * L[o + 18]);
  if (cosL <= 0) return false; // back face: rect and disk lights emit from the front only
  ls.wx = wx;
  ls.wy = wy;
  ls.wz = wz;
  ls.dist = d;
  ls.r = L[o + 3];
  ls.g = L[o + 4];
  ls.b = L[o + 5];
  ls.pdf = d2 / (L[o + 6] * cosL);
  return true;
}

/**
 * Solid-angle pdf with which sampleLight would produce the unit direction q[3..5] from the point q[0..2]
 * that hits light li at distance q[6] (for MIS weights of BSDF-sampled hits); written to q[7]. In and out
 * through one array for the same reason as LightSample's inputs (a returned double is boxed too).
 */
export function lightPdf(s: CompiledScene, li: number, q: Float64Array): void {
  const px = q[0], py = q[1], pz = q[2], dx = q[3], dy = q[4], dz = q[5], t = q[6];
  const L = s.lights;
  const o = li * LIGHT_STRIDE;
  const kind = L[o];
  let pdf = 0;
  if (kind === LIGHT_SPHERE) {
    const cx = L[o + 7] - px, cy = L[o + 8] - py, cz = L[o + 9] - pz;
    const r = L[o + 19];
    const dc2 = cx * cx + cy * cy + cz * cz;
    if (dc2 > r * r) {
      const sin2 = (r * r) / dc2;
      const cosMax = Math.sqrt(Math.max(0, 1 - sin2));
      pdf = 1 / (TWO_PI * (sin2 / (1 + cosMax)));
    }
  } else if (kind === LIGHT_RECT || kind === LIGHT_DISK) {
    const cosL = Math.abs(dx * L[o + 16] + dy * L[o + 17] + dz * L[o + 18]);
    if (cosL !== 0) pdf = (t * t) / (L[o + 6] * cosL);
  }
  q[7] = pdf;
}
