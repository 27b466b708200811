/**
 * The environment: radiance arriving from infinitely far away, as a uniform colour, a sky gradient or an
 * equirectangular map. Maps are importance-sampled by luminance with a piecewise-constant 2-D distribution
 * (a marginal CDF over rows and a conditional CDF per row, each weighted by sinθ so the density is uniform
 * in solid angle where the map is constant; the construction of Pharr, Jakob & Humphreys, "Physically Based
 * Rendering", 3rd ed., §13.6.5 and §14.2.4).
 *
 * Map orientation: row 0 is straight up (+Y); the image's horizontal centre looks along −Z; u grows with
 * azimuth φ = atan2(x, −z); `rotationY` turns the map about +Y (right-hand rule, degrees).
 */
import type { CompiledScene } from "../compile/types";
import { ENV_MAP, ENV_SKY, ENV_UNIFORM } from "../compile/types";
import { INV_FOUR_PI, uniformSphere, luminance } from "../math/sampling";
import type { LightSample } from "./lights";

const PI = Math.PI;

/**
 * Radiance arriving from the unit direction dir[0..2] (pointing away from the scene) into out[0..2]; dir
 * and out may be the same array. Directions go in through an array, not as three arguments: V8 does not
 * inline this into the path loop and would box each double argument (and a returned double, hence envPdf's
 * out slot).
 */
export function envRadiance(s: CompiledScene, dir: Float64Array, out: Float64Array): void {
  const dx = dir[0], dy = dir[1], dz = dir[2];
  const t = s.envType;
  const P = s.envParams;
  if (t === ENV_UNIFORM) {
    out[0] = P[0];
    out[1] = P[1];
    out[2] = P[2];
    return;
  }
  if (t === ENV_SKY) {
    if (dy < 0) {
      out[0] = P[6];
      out[1] = P[7];
      out[2] = P[8];
      return;
    }
    const k = dy > 1 ? 1 : dy;
    out[0] = P[3] + (P[0] - P[3]) * k;
    out[1] = P[4] + (P[1] - P[4]) * k;
    out[2] = P[5] + (P[2] - P[5]) * k;
    return;
  }
  if (t === ENV_MAP) {
    const W = s.envWidth;
    const H = s.envHeight;
    const c = P[1];
    const sn = P[2];
    // rotate the direction by −rotationY into map space
    const mx = c * dx - sn * dz;
    const mz = sn * dx + c * dz;
    const my = dy;
    const phi = Math.atan2(mx, -mz);
    const theta = Math.acos(my > 1 ? 1 : my < -1 ? -1 : my);
    let col = Math.floor(((phi + PI) / (2 * PI)) * W);
    let row = Math.floor((theta / PI) * H);
    if (col >= W) col = W - 1;
    if (col < 0) col = 0;
    if (row >= H) row = H - 1;
    if (row < 0) row = 0;
    const i = (row * W + col) * 3;
    const scale = P[0];
    out[0] = s.envMap[i] * scale;
    out[1] = s.envMap[i + 1] * scale;
    out[2] = s.envMap[i + 2] * scale;
    return;
  }
  out[0] = 0;
  out[1] = 0;
  out[2] = 0;
}

/**
 * Solid-angle pdf of sampleEnv producing the unit direction q[0..2] (not including the choice probability),
 * written to q[3].
 */
export function envPdf(s: CompiledScene, q: Float64Array): void {
  const t = s.envType;
  if (t === ENV_UNIFORM || t === ENV_SKY) {
    q[3] = INV_FOUR_PI;
    return;
  }
  q[3] = 0;
  if (t !== ENV_MAP || s.envFuncMean <= 0) return;
  const dx = q[0], dy = q[1], dz = q[2];
  const W = s.envWidth;
  const H = s.envHeight;
  const c = s.envParams[1];
  const sn = s.envParams[2];
  const mx = c * dx - sn * dz;
  const mz = sn * dx + c * dz;
  const my = dy > 1 ? 1 : dy < -1 ? -1 : dy;
  const phi = Math.atan2(mx, -mz);
  const theta = Math.acos(my);
  const sinT = Math.sin(theta);
  if (sinT <= 0) return;
  let col = Math.floor(((phi + PI) / (2 * PI)) * W);
  let row = Math.floor((theta / PI) * H);
  if (col >= W) col = W - 1;
  if (col < 0) col = 0;
  if (row >= H) row = H - 1;
  if (row < 0) row = 0;
  const pdfUV = s.envFunc[row * W + col] / s.envFuncMean;
  q[3] = pdfUV / (2 * PI * PI * sinT);
}

/**
 * Index i with cdf[i] ≤ u < cdf[i+1] in a CDF of n+1 entries starting at `base` (cdf[base] = 0,
 * cdf[base+n] = 1), for u = us[k]: the number is read from its array rather than passed, since a double
 * argument is boxed whenever V8 does not inline the call.
 */
function findInterval(cdf: Float64Array, base: number, n: number, us: Float64Array, k: number): number {
  const u = us[k];
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >>> 1;
    if (cdf[base + mid] <= u) lo = mid;
    else hi = mid - 1;
  }
  // skip zero-width intervals so the chosen cell has positive density
  while (lo < n - 1 && cdf[base + lo + 1] <= cdf[base + lo]) lo++;
  return lo;
}

/** Sample an environment direction into ls with the numbers ls.u[1..2] (dist = Infinity). Returns false if nothing can be sampled. */
export function sampleEnv(s: CompiledScene, ls: LightSample): boolean {
  const u1 = ls.u[1], u2 = ls.u[2];
  const t = s.envType;
  ls.delta = false;
  ls.dist = Infinity;
  const tmp = ls.tmp;
  if (t === ENV_UNIFORM || t === ENV_SKY) {
    uniformSphere(u1, u2, tmp);
    ls.wx = tmp[0];
    ls.wy = tmp[1];
    ls.wz = tmp[2];
    ls.pdf = INV_FOUR_PI;
    envRadiance(s, tmp, tmp);
    ls.r = tmp[0];
    ls.g = tmp[1];
    ls.b = tmp[2];
    return true;
  }
  if (t !== ENV_MAP || s.envFuncMean <= 0) return false;
  const W = s.envWidth;
  const H = s.envHeight;
  const marg = s.envMarginal;
  const row = findInterval(marg, 0, H, ls.u, 2);
  const dv = (u2 - marg[row]) / (marg[row + 1] - marg[row]);
  const v = (row + Math.min(Math.max(dv, 0), 1)) / H;
  const cond = s.envConditional;
  const base = row * (W + 1);
  const col = findInterval(cond, base, W, ls.u, 1);
  const du = (u1 - cond[base + col]) / (cond[base + col + 1] - cond[base + col]);
  const u = (col + Math.min(Math.max(du, 0), 1)) / W;
  const theta = v * PI;
  const phi = u * 2 * PI - PI;
  const sinT = Math.sin(theta);
  if (sinT <= 0) return false;
  const pdfUV = s.envFunc[row * W + col] / s.envFuncMean;
  if (!(pdfUV > 0)) return false;
  // map-space direction, then rotate by +rotationY into the world
  const mx = sinT * Math.sin(phi);
  const my = Math.cos(theta);
  const mz = -sinT * Math.cos(phi);
  const c = s.envParams[1];
  const sn = s.envParams[2];
  ls.wx = c * mx + sn * mz;
  ls.wy = my;
  ls.wz = -sn * mx + c * mz;
  ls.pdf = pdfUV / (2 * PI * PI * sinT);
  const i = (row * W + col) * 3;
  const scale = s.envParams[0];
  ls.r = s.envMap[i] * scale;
  ls.g = s.envMap[i + 1] * scale;
  ls.b = s.envMap[i + 2] * scale;
  return true;
}

/**
 * Build the sampling tables of an equirectangular map (RGB, row 0 = top). Returns the per-pixel density
 * (luminance·sinθ at the row centre), the marginal and conditional CDFs, its mean, and the map's average
 * radiance luminance over the sphere (for the light-choice power estimate).
 */
export function buildEnvDistribution(
  map: Float32Array,
  W: number,
  H: number,
): { func: Float32Array; marginal: Float64Array; conditional: Float64Array; funcMean: number; meanLuminance: number } {
  const func = new Float32Array(W * H);
  const conditional = new Float64Array(H * (W + 1));
  const rowInt = new Float64Array(H);
  let lumWeighted = 0;
  let sinSum = 0;
  for (let r = 0; r < H; r++) {
    const sinT = Math.sin(((r + 0.5) / H) * PI);
    let acc = 0;
    const base = r * (W + 1);
    conditional[base] = 0;
    for (let c = 0; c < W; c++) {
      const i = (r * W + c) * 3;
      const y = Math.max(0, luminance(map[i], map[i + 1], map[i + 2]));
      const f = y * sinT;
      func[r * W + c] = f;
      acc += func[r * W + c]; // the float32-rounded value, so the pdf matches the CDF exactly
      conditional[base + c + 1] = acc;
      lumWeighted += f;
      sinSum += sinT;
    }
    rowInt[r] = acc / W;
    if (acc > 0) for (let c = 1; c <= W; c++) conditional[base + c] /= acc;
    else for (let c = 1; c <= W; c++) conditional[base + c] = c / W;
  }
  const marginal = new Float64Array(H + 1);
  let total = 0;
  for (let r = 0; r < H; r++) {
    total += rowInt[r];
    marginal[r + 1] = total;
  }
  if (total > 0) for (let r = 1; r <= H; r++) marginal[r] /= total;
  else for (let r = 1; r <= H; r++) marginal[r] = r / H;
  const funcMean = total / H;
  return { func, marginal, conditional, funcMean, meanLuminance: sinSum > 0 ? lumWeighted / sinSum : 0 };
}
