/**
 * Radiance along one camera ray, per light group. One loop serves the three integrators of the scene
 * format, which differ only in when a path may continue:
 * - path: unidirectional path tracing; at every non-specular vertex one light sample (next-event
 *   estimation) and one BSDF sample, combined with multiple importance sampling (power heuristic, Veach &
 *   Guibas 1995); Russian roulette from the 4th vertex on keeps it unbiased at any depth.
 * - whitted: the same shadow rays, but a path continues only through metal and glass (mirror and
 *   refraction rays, sampled one lobe at a time); diffuse surfaces end the path, so there is no diffuse
 *   interreflection.
 * - direct: one scattering event (maxDepth is forced to 1 at compile time).
 *
 * Contributions are added to the group of the light they came from (environment → its own group).
 */
import type { CompiledScene } from "../compile/types";
import { INTEGRATOR_WHITTED, LIGHT_POINT, LIGHT_STRIDE, PRIM_INFO_STRIDE } from "../compile/types";
import { traceRay, surfaceAt, Ray, Hit, TraceScratch } from "../geometry/intersect";
import { BsdfScratch, MATERIAL_STRIDE, MAT_DIFFUSE, MAT_GLASS, evalBsdf, isDeltaMaterial, sampleBsdf } from "../materials/bsdf";
import { LightSample, lightPdf, pickLight, sampleLight } from "../lights/lights";
import { envPdf, envRadiance, sampleEnv } from "../lights/environment";
import { basisFromNormal, powerHeuristic } from "../math/sampling";
import type { SampleStream } from "../math/rng";

/** Dimensions used by the camera (lens u, lens v, shutter time) before the first bounce. */
export const CAMERA_DIMS = 3;
/** Dimensions per vertex: light choice, light u, light v, BSDF u, BSDF v, BSDF lobe, roulette, spare. */
export const DIMS_PER_VERTEX = 8;
/** Vertex index from which Russian roulette may end a path (1 = the camera ray's hit). */
const ROULETTE_FROM = 4;

/** Everything the integrator reuses between samples (one per worker). */
export class PathScratch {
  readonly ray = new Ray();
  readonly shadow = new Ray();
  readonly hit = new Hit();
  readonly shadowHit = new Hit();
  readonly trace = new TraceScratch();
  readonly bsdf = new BsdfScratch();
  readonly light = new LightSample();
  readonly basis = new Float64Array(6);
  readonly rgb = new Float64Array(3);
  /**
   * In/out slots of envRadiance, envPdf and lightPdf (direction, distance, pdf) and the roulette number.
   * Doubles go to the calls
   * V8 does not inline through arrays and object fields, never as arguments or return values, which it
   * would box on the heap: the loop allocates nothing per sample (checked by a heap-sampling test).
   */
  readonly query = new Float64Array(8);
  /**
   * MIS weight: pdfs in [0] and [1], weight (or 1 without MIS) in [2]. V8 leaves some calls of this large
   * loop un-inlined and then boxes their double arguments and results, and a variable holding either the
   * constant 1 or a computed weight it kept as a tagged value: both measured as allocation per sample.
   */
  readonly weights = new Float64Array(3);
  /** per-group radiance of the current sample, groups×3 */
  groups: Float64Array;
  constructor(groupCount: number) {
    this.groups = new Float64Array(groupCount * 3);
  }
}

/**
 * Radiance arriving along sc.ray into sc.groups (cleared first). With `meter`, the first surface is
 * treated as a white Lambertian reflector whose own emission is ignored: the result is then E/π, with E the
 * irradiance at that point (used by measureIrradiance).
 */
export function radiance(s: CompiledScene, sc: PathScratch, rng: SampleStream, meter: boolean): void {
  const out = sc.groups;
  out.fill(0);
  const ray = sc.ray;
  const hit = sc.hit;
  const bs = sc.bsdf;
  const ls = sc.light;
  const B = sc.basis;
  const rgb = sc.rgb;
  const query = sc.query;
  const weights = sc.weights;
  const mats = s.materials;
  const lights = s.lights;
  const info = s.primInfo;
  const eps = s.rayEpsilon;
  const whitted = s.integrator === INTEGRATOR_WHITTED;
  const maxDepth = s.maxDepth;
  let tr = 1, tg = 1, tb = 1;
  let prevDelta = true;
  let prevPdf = 0;
  let prevX = ray.ox, prevY = ray.oy, prevZ = ray.oz;

  for (let depth = 1; ; depth++) {
    rng.seek(CAMERA_DIMS + (depth - 1) * DIMS_PER_VERTEX);
    if (!traceRay(s, ray, hit, sc.trace, false)) {
      if (s.envType !== 0 && !(meter && depth === 1)) {
        query[0] = ray.dx;
        query[1] = ray.dy;
        query[2] = ray.dz;
        envRadiance(s, query, rgb);
        weights[2] = 1;
        if (!prevDelta && s.envPick > 0) {
          envPdf(s, query);
          weights[0] = prevPdf;
          weights[1] = s.envPick * query[3];
          powerHeuristic(weights);
        }
        const w = weights[2];
        const g = s.envGroup * 3;
        out[g] += tr * rgb[0] * w;
        out[g + 1] += tg * rgb[1] * w;
        out[g + 2] += tb * rgb[2] * w;
      }
      return;
    }
    surfaceAt(s, ray, hit);
    const ib = hit.prim * PRIM_INFO_STRIDE;
    const li = info[ib + 2];
    const dx = ray.dx, dy = ray.dy, dz = ray.dz;
    let ngx = hit.ngx, ngy = hit.ngy, ngz = hit.ngz;
    const cosGeo = dx * ngx + dy * ngy + dz * ngz; // < 0: the ray arrives on the normal's side

    let mat: number;
    if (meter && depth === 1) {
      mat = s.meterMaterial;
    } else if (li >= 0) {
      // An emitter: add its radiance (front face only for rect and disk; spheres emit outward), then stop,
      // since lights reflect nothing.
      const lo = li * LIGHT_STRIDE;
      if (cosGeo < 0) {
        weights[2] = 1;
        if (!prevDelta) {
          query[0] = prevX;
          query[1] = prevY;
          query[2] = prevZ;
          query[3] = dx;
          query[4] = dy;
          query[5] = dz;
          query[6] = hit.t;
          lightPdf(s, li, query);
          weights[0] = prevPdf;
          weights[1] = lights[lo + 20] * query[7];
          powerHeuristic(weights);
        }
        const w = weights[2];
        const g = lights[lo + 1] * 3;
        out[g] += tr * lights[lo + 3] * w;
        out[g + 1] += tg * lights[lo + 4] * w;
        out[g + 2] += tb * lights[lo + 5] * w;
      }
      return;
    } else {
      mat = info[ib + 1];
    }
    if (depth > maxDepth) return;
    const mo = mat * MATERIAL_STRIDE;
    const type = mats[mo];

    // Beer–Lambert absorption over the segment just travelled inside a glass object (we hit its inside).
    if (type === MAT_GLASS && cosGeo > 0 && !(meter && depth === 1)) {
      const t = hit.t;
      tr *= Math.exp(-mats[mo + 3] * t);
      tg *= Math.exp(-mats[mo + 4] * t);
      tb *= Math.exp(-mats[mo + 5] * t);
    }

    // Shading frame. Glass keeps the outward normal (its inside matters); other materials are two-sided,
    // so the frame is flipped toward the arriving ray.
    let nsx = hit.nsx, nsy = hit.nsy, nsz = hit.nsz;
    if (type !== MAT_GLASS && cosGeo > 0) {
      ngx = -ngx;
      ngy = -ngy;
      ngz = -ngz;
      nsx = -nsx;
      nsy = -nsy;
      nsz = -nsz;
    }
    const wox = -dx, woy = -dy, woz = -dz;
    // a shading normal that disagrees with the geometry about wo's side falls back to the geometric one
    if ((wox * nsx + woy * nsy + woz * nsz) * (wox * ngx + woy * ngy + woz * ngz) <= 0) {
      nsx = ngx;
      nsy = ngy;
      nsz = ngz;
    }
    basisFromNormal(nsx, nsy, nsz, B);
    const tx = B[0], ty = B[1], tz = B[2], bx = B[3], by = B[4], bz = B[5];
    const lwx = wox * tx + woy * ty + woz * tz;
    const lwy = wox * bx + woy * by + woz * bz;
    const lwz = wox * nsx + woy * nsy + woz * nsz;
    const px = hit.px, py = hit.py, pz = hit.pz;
    bs.wo[0] = lwx;
    bs.wo[1] = lwy;
    bs.wo[2] = lwz;

    // A whitted path ends at a diffuse surface, so its light sample has no BSDF sample to share with.
    const endsHere = whitted && type === MAT_DIFFUSE;

    // --- next-event estimation (one light or the environment)
    if (!isDeltaMaterial(mats, mo) && (s.lightCount > 0 || s.envPick > 0)) {
      rng.nextInto(ls.u, 0);
      rng.nextInto(ls.u, 1);
      rng.nextInto(ls.u, 2);
      const pick = pickLight(s, ls);
      let ok = false;
      let pickProb = 0;
      let group = 0;
      let mis = true;
      let skip = -1;
      if (pick === -2) {
        ok = sampleEnv(s, ls);
        pickProb = s.envPick;
        group = s.envGroup;
      } else if (pick >= 0) {
        ls.at[0] = px;
        ls.at[1] = py;
        ls.at[2] = pz;
        ok = sampleLight(s, pick, ls);
        const lo = pick * LIGHT_STRIDE;
        pickProb = lights[lo + 20];
        group = lights[lo + 1];
        skip = lights[lo + 21];
        // BSDF sampling can reach a light only if rays can hit it (visible, not a point)
        mis = lights[lo] !== LIGHT_POINT && lights[lo + 2] === 1;
      }
      if (ok && ls.pdf > 0 && pickProb > 0) {
        const wx = ls.wx, wy = ls.wy, wz = ls.wz;
        const cosG = wx * ngx + wy * ngy + wz * ngz;
        // non-transmissive surfaces only receive light on the side the ray came from
        if (type === MAT_GLASS || cosG > 0) {
          bs.wi[0] = wx * tx + wy * ty + wz * tz;
          bs.wi[1] = wx * bx + wy * by + wz * bz;
          bs.wi[2] = wx * nsx + wy * nsy + wz * nsz;
          evalBsdf(mats, mo, bs);
          if (bs.r > 0 || bs.g > 0 || bs.b > 0) {
            const sh = sc.shadow;
            const side = cosG > 0 ? eps : -eps;
            sh.ox = px + ngx * side;
            sh.oy = py + ngy * side;
            sh.oz = pz + ngz * side;
            sh.dx = wx;
            sh.dy = wy;
            sh.dz = wz;
            sh.time = ray.time;
            // ls.dist rather than the constant Infinity: see `weights`
            sh.tmax = ls.dist === Infinity ? ls.dist : ls.dist * (1 - 1e-6) - 2 * eps;
            if (!traceRay(s, sh, sc.shadowHit, sc.trace, true, skip)) {
              const pl = pickProb * ls.pdf;
              weights[2] = 1;
              if (mis && !ls.delta && !endsHere) {
                weights[0] = pl;
                weights[1] = bs.pdf;
                powerHeuristic(weights);
              }
              const k = weights[2] / pl;
              const g = group * 3;
              out[g] += tr * bs.r * ls.r * k;
              out[g + 1] += tg * bs.g * ls.g * k;
              out[g + 2] += tb * bs.b * ls.b * k;
            }
          }
        }
      }
    }

    if (endsHere) return;

    // --- continue the path by sampling the BSDF
    rng.seek(CAMERA_DIMS + (depth - 1) * DIMS_PER_VERTEX + 3);
    rng.nextInto(bs.u, 0);
    rng.nextInto(bs.u, 1);
    rng.nextInto(bs.u, 2);
    if (!sampleBsdf(mats, mo, bs)) return;
    tr *= bs.r;
    tg *= bs.g;
    tb *= bs.b;
    if (!(tr > 0 || tg > 0 || tb > 0)) return;
    prevDelta = bs.delta;
    prevPdf = bs.pdf;
    prevX = px;
    prevY = py;
    prevZ = pz;
    if (depth >= ROULETTE_FROM) {
      const q = Math.min(0.95, Math.max(tr, tg, tb));
      rng.nextInto(query, 0);
      if (query[0] >= q) return;
      tr /= q;
      tg /= q;
      tb /= q;
    }
    const wx = bs.wx * tx + bs.wy * bx + bs.wz * nsx;
    const wy = bs.wx * ty + bs.wy * by + bs.wz * nsy;
    const wz = bs.wx * tz + bs.wy * bz + bs.wz * nsz;
    const inv = 1 / Math.sqrt(wx * wx + wy * wy + wz * wz);
    ray.dx = wx * inv;
    ray.dy = wy * inv;
    ray.dz = wz * inv;
    const side = ray.dx * ngx + ray.dy * ngy + ray.dz * ngz > 0 ? eps : -eps;
    ray.ox = px + ngx * side;
    ray.oy = py + ngy * side;
    ray.oz = pz + ngz * side;
    ray.tmax = Infinity;
  }
}

