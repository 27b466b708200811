// Image comparison: RMSE, PSNR and SSIM between two renders, on linear radiance or on the displayed 8-bit
// picture, plus a false-colour difference image. SSIM is ssim.js (a port of Wang, Bovik, Sheikh and
// Simoncelli, "Image quality assessment: from error visibility to structural similarity", IEEE TIP 13(4),
// 2004), run in its "original" mode without downsampling, which its authors state matches Wang's ssim.m.
import ssimModule from "ssim.js";

export type MetricMode = "linear" | "display";

/** Interleaved channels per pixel: 3 (linear RGB float) or 4 (RGBA8). */
export type Picture = { width: number; height: number; channels: 3 | 4; data: ArrayLike<number> };

export type Metrics = {
  mode: MetricMode;
  rmse: number;
  /** dB; Infinity for identical pictures. */
  psnr: number;
  /** The peak value PSNR is relative to: 255 for displayed, the reference's largest channel value for linear. */
  peak: number;
  ssim: number;
  maxAbsDiff: number;
};

type SsimFn = (a: { data: Uint8ClampedArray; width: number; height: number }, b: { data: Uint8ClampedArray; width: number; height: number }, o?: Record<string, unknown>) => { mssim: number };
const ssimFn: SsimFn = (ssimModule as unknown as { ssim?: SsimFn }).ssim ?? (ssimModule as unknown as SsimFn);

function sameSize(a: Picture, b: Picture): void {
  if (a.width !== b.width || a.height !== b.height) {
    throw new Error(`the renders differ in size (${a.width}×${a.height} and ${b.width}×${b.height}); metrics need equal sizes`);
  }
}

/** Root mean square error over R, G and B of every pixel (alpha ignored). */
export function rmse(a: Picture, b: Picture): number {
  sameSize(a, b);
  let sum = 0;
  const n = a.width * a.height;
  for (let p = 0; p < n; p++) {
    for (let c = 0; c < 3; c++) {
      const d = Number(a.data[p * a.channels + c]) - Number(b.data[p * b.channels + c]);
      sum += d * d;
    }
  }
  return Math.sqrt(sum / (n * 3));
}

/** PSNR = 20·log10(peak / RMSE) (common practice; e.g. Gonzalez & Woods, Digital Image Processing). */
export function psnr(rmseValue: number, peak: number): number {
  if (rmseValue === 0) return Infinity;
  return 20 * Math.log10(peak / rmseValue);
}

function maxChannel(p: Picture): number {
  let m = 0;
  const n = p.width * p.height;
  for (let i = 0; i < n; i++) for (let c = 0; c < 3; c++) m = Math.max(m, Number(p.data[i * p.channels + c]));
  return m;
}

/**
 * ssim.js reads RGBA and reduces it to grey with integer Rec. 601-style weights; linear radiance is first
 * scaled by the common peak to 16-bit integers (bitDepth 16, so the SSIM constants use L = 65535).
 */
function toRgba(p: Picture, scale: number, max: number): Uint8ClampedArray {
  const n = p.width * p.height;
  const out = max > 255 ? (new Uint16Array(n * 4) as unknown as Uint8ClampedArray) : new Uint8ClampedArray(n * 4);
  for (let i = 0; i < n; i++) {
    for (let c = 0; c < 3; c++) {
      const v = Math.round(Number(p.data[i * p.channels + c]) * scale);
      out[i * 4 + c] = v < 0 ? 0 : v > max ? max : v;
    }
    out[i * 4 + 3] = max;
  }
  return out;
}

export function ssim(a: Picture, b: Picture, mode: MetricMode): number {
  sameSize(a, b);
  if (mode === "display") {
    return ssimFn({ data: toRgba(a, 1, 255), width: a.width, height: a.height }, { data: toRgba(b, 1, 255), width: b.width, height: b.height }, {
      ssim: "original",
      downsample: false,
      bitDepth: 8,
    }).mssim;
  }
  const peak = Math.max(maxChannel(a), maxChannel(b)) || 1;
  const s = 65535 / peak;
  return ssimFn({ data: toRgba(a, s, 65535), width: a.width, height: a.height }, { data: toRgba(b, s, 65535), width: b.width, height: b.height }, {
    ssim: "original",
    downsample: false,
    bitDepth: 16,
  }).mssim;
}

/** `a` is the reference (its peak anchors linear PSNR). */
export function compareImages(a: Picture, b: Picture, mode: MetricMode): Metrics {
  const e = rmse(a, b);
  const peak = mode === "display" ? 255 : maxChannel(a) || 1;
  let maxAbsDiff = 0;
  const n = a.width * a.height;
  for (let i = 0; i < n; i++) {
    for (let c = 0; c < 3; c++) maxAbsDiff = Math.max(maxAbsDiff, Math.abs(Number(a.data[i * a.channels + c]) - Number(b.data[i * b.channels + c])));
  }
  return { mode, rmse: e, psnr: psnr(e, peak), peak, ssim: ssim(a, b, mode), maxAbsDiff };
}

/** Our own false-colour ramp: black → deep blue → teal → amber → white, for 0 … 1. */
const RAMP: [number, number, number][] = [
  [0, 0, 0],
  [20, 40, 140],
  [40, 170, 160],
  [230, 180, 60],
  [255, 255, 255],
];

export function rampColour(t: number): [number, number, number] {
  const x = Math.max(0, Math.min(1, t)) * (RAMP.length - 1);
  const i = Math.min(RAMP.length - 2, Math.floor(x));
  const f = x - i;
  const [a, b] = [RAMP[i]!, RAMP[i + 1]!];
  return [Math.round(a[0] + (b[0] - a[0]) * f), Math.round(a[1] + (b[1] - a[1]) * f), Math.round(a[2] + (b[2] - a[2]) * f)];
}

/**
 * Per-pixel difference magnitude (Euclidean over RGB) mapped through the ramp; `scale` is the magnitude
 * shown as white (default: the largest difference, so the worst pixel is always visible).
 */
export function differenceImage(a: Picture, b: Picture, scale?: number): { width: number; height: number; rgba: Uint8ClampedArray; scale: number } {
  sameSize(a, b);
  const n = a.width * a.height;
  const mags = new Float64Array(n);
  let max = 0;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let c = 0; c < 3; c++) {
      const d = Number(a.data[i * a.channels + c]) - Number(b.data[i * b.channels + c]);
      s += d * d;
    }
    mags[i] = Math.sqrt(s);
    if (mags[i]! > max) max = mags[i]!;
  }
  const k = scale ?? max;
  const rgba = new Uint8ClampedArray(n * 4);
  for (let i = 0; i < n; i++) {
    const [r, g, bl] = rampColour(k > 0 ? mags[i]! / k : 0);
    rgba[i * 4] = r;
    rgba[i * 4 + 1] = g;
    rgba[i * 4 + 2] = bl;
    rgba[i * 4 + 3] = 255;
  }
  return { width: a.width, height: a.height, rgba, scale: k };
}
