/**
 * Scattering of the three material types in the local shading frame (+z = shading normal). All directions
 * point away from the surface. For diffuse and metal the caller flips the frame so that wo.z > 0 (every
 * surface is two-sided); for glass +z is the outward normal and wo.z < 0 means the path is inside.
 *
 * Material records live in a flat Float64Array, MATERIAL_STRIDE numbers each:
 *   diffuse: [MAT_DIFFUSE, albedo r, g, b]
 *   metal:   [MAT_METAL, reflectance r, g, b, alpha]          (alpha < MIN_ALPHA → perfect mirror)
 *   glass:   [MAT_GLASS, ior, alpha, absorption r, g, b]       (alpha < MIN_ALPHA → smooth)
 */
import { REFRACT_LENGTH, fresnelDielectric, refract, schlick } from "./fresnel";
import { ggxD, ggxG2, ggxSampleNormal, MIN_ALPHA } from "./ggx";
import { cosineHemisphere, INV_PI } from "../math/sampling";

export const MATERIAL_STRIDE = 8;
export const MAT_DIFFUSE = 0;
export const MAT_METAL = 1;
export const MAT_GLASS = 2;

/**
 * Input and output of evalBsdf / sampleBsdf, reused for every call. The directions and random numbers go
 * in through typed arrays rather than as arguments: V8 does not inline these functions into the path
 * loop, and every double passed to (or returned from) a call it does not inline is boxed on the heap.
 */
export class BsdfScratch {
  /** input: outgoing direction wo (local frame) */
  readonly wo = new Float64Array(3);
  /** input of evalBsdf: incident direction wi (local frame) */
  readonly wi = new Float64Array(3);
  /** input of sampleBsdf: three uniform numbers in [0, 1) (direction u1, u2; lobe choice u3) */
  readonly u = new Float64Array(3);
  /** sampled incident direction (local) */
  wx = 0;
  wy = 0;
  wz = 0;
  /** eval: f·|cos wi|; sample: f·|cos wi| / pdf */
  r = 0;
  g = 0;
  b = 0;
  /** solid-angle pdf of sampling wi (for a delta lobe: the lobe's discrete probability) */
  pdf = 0;
  delta = false;
  readonly v = new Float64Array(3);
  readonly m = new Float64Array(3);
  /** refract's record (fresnel.ts) */
  readonly refraction = new Float64Array(REFRACT_LENGTH);
}

/** True if the material scatters only in delta directions (no next-event estimation possible). */
export function isDeltaMaterial(mats: Float64Array, off: number): boolean {
  const type = mats[off];
  if (type === MAT_METAL) return mats[off + 4] < MIN_ALPHA;
  if (type === MAT_GLASS) return mats[off + 2] < MIN_ALPHA;
  return false;
}

/** True if the frame's normal must not be flipped toward wo (media with an inside and an outside). */
export function hasInterior(mats: Float64Array, off: number): boolean {
  return mats[off] === MAT_GLASS;
}

/**
 * Evaluate f·|cos wi| and the sampling pdf of wi = s.wi for wo = s.wo; zero for delta lobes. One function
 * per material: V8 inlines the small GGX and Fresnel helpers into each of these, where one function for
 * all three ran out of its inlining budget and boxed the doubles of the calls it left (measured: up to 400
 * bytes per sample).
 */
export function evalBsdf(mats: Float64Array, off: number, s: BsdfScratch): void {
  s.r = 0;
  s.g = 0;
  s.b = 0;
  s.pdf = 0;
  const type = mats[off];
  if (type === MAT_DIFFUSE) evalDiffuse(mats, off, s);
  else if (type === MAT_METAL) evalMetal(mats, off, s);
  else evalGlass(mats, off, s);
}

function evalDiffuse(mats: Float64Array, off: number, s: BsdfScratch): void {
  const woz = s.wo[2], wiz = s.wi[2];
  if (woz <= 0 || wiz <= 0) return;
  const k = wiz * INV_PI;
  s.r = mats[off + 1] * k;
  s.g = mats[off + 2] * k;
  s.b = mats[off + 3] * k;
  s.pdf = k;
}

function evalMetal(mats: Float64Array, off: number, s: BsdfScratch): void {
  const wo = s.wo, wi = s.wi;
  const wox = wo[0], woy = wo[1], woz = wo[2];
  const wix = wi[0], wiy = wi[1], wiz = wi[2];
  const alpha = mats[off + 4];
  if (alpha < MIN_ALPHA || woz <= 0 || wiz <= 0) return;
  let hx = wox + wix;
  let hy = woy + wiy;
  let hz = woz + wiz;
  const hl = Math.sqrt(hx * hx + hy * hy + hz * hz);
  if (hl === 0) return;
  hx /= hl;
  hy /= hl;
  hz /= hl;
  const oh = wox * hx + woy * hy + woz * hz;
  if (oh <= 0) return;
  const d = ggxD(hz, alpha);
  const g = ggxG2(woz, wiz, alpha);
  const k = (d * g) / (4 * woz); // f·cos wi without F: D G / (4 cos o cos i) · cos i
  s.r = schlick(mats[off + 1], oh) * k;
  s.g = schlick(mats[off + 2], oh) * k;
  s.b = schlick(mats[off + 3], oh) * k;
  s.pdf = (d * hz) / (4 * oh);
}

function evalGlass(mats: Float64Array, off: number, s: BsdfScratch): void {
  const wo = s.wo, wi = s.wi;
  const wox = wo[0], woy = wo[1], woz = wo[2];
  const wix = wi[0], wiy = wi[1], wiz = wi[2];
  const alpha = mats[off + 2];
  if (alpha < MIN_ALPHA || woz === 0 || wiz === 0) return;
  const eta = mats[off + 1];
  const reflect = woz * wiz > 0;
  const etap = reflect ? 1 : woz > 0 ? eta : 1 / eta;
  let mx = wix * etap + wox;
  let my = wiy * etap + woy;
  let mz = wiz * etap + woz;
  const ml = Math.sqrt(mx * mx + my * my + mz * mz);
  if (ml === 0) return;
  mx /= ml;
  my /= ml;
  mz /= ml;
  if (mz < 0) {
    mx = -mx;
    my = -my;
    mz = -mz;
  }
  const om = wox * mx + woy * my + woz * mz;
  const im = wix * mx + wiy * my + wiz * mz;
  // Discard back-facing microfacets (Walter et al. 2007).
  if (im * wiz < 0 || om * woz < 0) return;
  const F = fresnelDielectric(om, eta);
  const D = ggxD(mz, alpha);
  const G = ggxG2(Math.abs(woz), Math.abs(wiz), alpha);
  let fc: number;
  if (reflect) {
    fc = (D * G * F) / (4 * Math.abs(woz));
    s.pdf = ((D * mz) / (4 * Math.abs(om))) * F;
  } else {
    const den = im + om / etap;
    const denom = den * den;
    // Radiance (not importance) is carried, so transmitted radiance is scaled by 1/etap².
    fc = ((1 - F) * D * G * Math.abs((im * om) / (woz * denom))) / (etap * etap);
    s.pdf = ((D * mz * Math.abs(im)) / denom) * (1 - F);
  }
  s.r = fc;
  s.g = fc;
  s.b = fc;
}

/**
 * Sample wi for wo = s.wo with the numbers s.u; returns false if the sample carries no energy. Sets
 * weight = f·|cos|/pdf, pdf, delta. One function per lobe, for the same reason as evalBsdf.
 */
export function sampleBsdf(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const type = mats[off];
  if (type === MAT_DIFFUSE) return sampleDiffuse(mats, off, s);
  if (type === MAT_METAL) return mats[off + 4] < MIN_ALPHA ? sampleMirror(mats, off, s) : sampleRoughMetal(mats, off, s);
  return mats[off + 2] < MIN_ALPHA ? sampleSmoothGlass(mats, off, s) : sampleRoughGlass(mats, off, s);
}

function sampleDiffuse(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const woz = s.wo[2], u1 = s.u[0], u2 = s.u[1];
  const v = s.v;
  if (woz <= 0) return false;
  cosineHemisphere(u1, u2, v);
  if (v[2] <= 0) return false;
  s.wx = v[0];
  s.wy = v[1];
  s.wz = v[2];
  s.r = mats[off + 1];
  s.g = mats[off + 2];
  s.b = mats[off + 3];
  s.pdf = v[2] * INV_PI;
  s.delta = false;
  return true;
}

function sampleMirror(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const wox = s.wo[0], woy = s.wo[1], woz = s.wo[2];
  if (woz <= 0) return false;
  s.wx = -wox;
  s.wy = -woy;
  s.wz = woz;
  s.r = schlick(mats[off + 1], woz);
  s.g = schlick(mats[off + 2], woz);
  s.b = schlick(mats[off + 3], woz);
  s.pdf = 1;
  s.delta = true;
  return true;
}

function sampleRoughMetal(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const wox = s.wo[0], woy = s.wo[1], woz = s.wo[2], u1 = s.u[0], u2 = s.u[1];
  if (woz <= 0) return false;
  const alpha = mats[off + 4];
  const m = s.m;
  ggxSampleNormal(u1, u2, alpha, m);
  const om = wox * m[0] + woy * m[1] + woz * m[2];
  if (om <= 0) return false;
  const wix = 2 * om * m[0] - wox;
  const wiy = 2 * om * m[1] - woy;
  const wiz = 2 * om * m[2] - woz;
  if (wiz <= 0) return false;
  const G = ggxG2(woz, wiz, alpha);
  const w = (G * om) / (woz * m[2]);
  s.wx = wix;
  s.wy = wiy;
  s.wz = wiz;
  s.r = schlick(mats[off + 1], om) * w;
  s.g = schlick(mats[off + 2], om) * w;
  s.b = schlick(mats[off + 3], om) * w;
  s.pdf = (ggxD(m[2], alpha) * m[2]) / (4 * om);
  s.delta = false;
  return true;
}

function sampleSmoothGlass(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const wox = s.wo[0], woy = s.wo[1], woz = s.wo[2], u3 = s.u[2];
  const eta = mats[off + 1];
  const F = fresnelDielectric(woz, eta);
  s.delta = true;
  if (u3 < F) {
    s.wx = -wox;
    s.wy = -woy;
    s.wz = woz;
    s.r = 1;
    s.g = 1;
    s.b = 1;
    s.pdf = F;
    return true;
  }
  const q = s.refraction;
  q[0] = wox;
  q[1] = woy;
  q[2] = woz;
  q[3] = 0;
  q[4] = 0;
  q[5] = 1;
  q[6] = eta;
  refract(q);
  const etap = q[10];
  if (etap === 0) return false;
  s.wx = q[7];
  s.wy = q[8];
  s.wz = q[9];
  const k = 1 / (etap * etap);
  s.r = k;
  s.g = k;
  s.b = k;
  s.pdf = 1 - F;
  return true;
}

function sampleRoughGlass(mats: Float64Array, off: number, s: BsdfScratch): boolean {
  const wox = s.wo[0], woy = s.wo[1], woz = s.wo[2], u1 = s.u[0], u2 = s.u[1], u3 = s.u[2];
  const eta = mats[off + 1];
  const alpha = mats[off + 2];
  if (woz === 0) return false;
  const m = s.m;
  ggxSampleNormal(u1, u2, alpha, m);
  const om = wox * m[0] + woy * m[1] + woz * m[2];
  if (om * woz <= 0) return false;
  const F = fresnelDielectric(om, eta);
  const D = ggxD(m[2], alpha);
  s.delta = false;
  // Choose the lobe and its direction first, so G2 is evaluated at one call site (V8 then inlines it).
  const reflect = u3 < F;
  let wix: number, wiy: number, wiz: number;
  let etap = 1;
  if (reflect) {
    wix = 2 * om * m[0] - wox;
    wiy = 2 * om * m[1] - woy;
    wiz = 2 * om * m[2] - woz;
    if (wiz * woz <= 0) return false;
  } else {
    const q = s.refraction;
    q[0] = wox;
    q[1] = woy;
    q[2] = woz;
    q[3] = m[0];
    q[4] = m[1];
    q[5] = m[2];
    q[6] = eta;
    refract(q);
    etap = q[10];
    if (etap === 0) return false;
    wix = q[7];
    wiy = q[8];
    wiz = q[9];
    if (wiz * woz >= 0) return false;
  }
  const G = ggxG2(Math.abs(woz), Math.abs(wiz), alpha);
  s.wx = wix;
  s.wy = wiy;
  s.wz = wiz;
  if (reflect) {
    const w = (G * Math.abs(om)) / (Math.abs(woz) * m[2]);
    s.r = w;
    s.g = w;
    s.b = w;
    s.pdf = ((D * m[2]) / (4 * Math.abs(om))) * F;
    return true;
  }
  const im = wix * m[0] + wiy * m[1] + wiz * m[2];
  const w = (G * Math.abs(om)) / (Math.abs(woz) * m[2] * etap * etap);
  const den = im + om / etap;
  s.r = w;
  s.g = w;
  s.b = w;
  s.pdf = ((D * m[2] * Math.abs(im)) / (den * den)) * (1 - F);
  return true;
}
