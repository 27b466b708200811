/**
 * The display transform: linear radiance → exposure → tone map → sRGB transfer function (IEC 61966-2-1)
 * → 8 bits. It only ever feeds pictures (PNG, the workspace canvas); HDR outputs stay linear.
 */
import type { Scene } from "../scene/schema";
import type { FloatImage } from "../io/image";

export type Display = Scene["display"];

/** Rec. 709 / sRGB relative luminance weights (ITU-R BT.709, shared by sRGB). */
export const LUMA_R = 0.2126;
export const LUMA_G = 0.7152;
export const LUMA_B = 0.0722;

export function luminance709(r: number, g: number, b: number): number {
  return LUMA_R * r + LUMA_G * g + LUMA_B * b;
}

/** sRGB encoding (IEC 61966-2-1): linear [0,1] → non-linear [0,1]. Input outside [0,1] is clamped; NaN → 0. */
export function srgbEncode(linear: number): number {
  if (!(linear > 0)) return 0;
  if (linear >= 1) return 1;
  return linear <= 0.0031308 ? 12.92 * linear : 1.055 * Math.pow(linear, 1 / 2.4) - 0.055;
}

/** sRGB decoding (IEC 61966-2-1): non-linear [0,1] → linear [0,1]. */
export function srgbDecode(encoded: number): number {
  if (!(encoded > 0)) return 0;
  if (encoded >= 1) return 1;
  return encoded <= 0.04045 ? encoded / 12.92 : Math.pow((encoded + 0.055) / 1.055, 2.4);
}

/** round(255 · V), the usual 8-bit quantisation (half rounds up). */
export function srgbEncode8(linear: number): number {
  return Math.floor(srgbEncode(linear) * 255 + 0.5);
}

/**
 * Reinhard, Stark, Shirley, Ferwerda, "Photographic Tone Reproduction for Digital Images",
 * SIGGRAPH 2002, Eq. 3: Ld = L / (1 + L). With a finite white point, Eq. 4:
 * Ld = L (1 + L / Lwhite²) / (1 + L).
 */
export function reinhard(l: number, white = Infinity): number {
  if (!(l > 0)) return 0;
  return white === Infinity ? l / (1 + l) : (l * (1 + l / (white * white))) / (1 + l);
}

/**
 * The paper's key scaling (Eq. 1–2): the exposure, in stops, that maps the log-average luminance
 * exp(mean(log(δ + Lw))) to the key value a (0.18 = "normal key"). Offered as an "auto exposure"
 * suggestion: the display itself takes exposure from the scene so a progressive render does not
 * change brightness as it converges.
 */
export function reinhardKeyExposure(img: FloatImage, key = 0.18, delta = 1e-4): number {
  const d = img.data;
  const n = img.width * img.height;
  if (n === 0) return 0;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const y = luminance709(d[i * 3]!, d[i * 3 + 1]!, d[i * 3 + 2]!);
    sum += Math.log(delta + (y > 0 ? y : 0));
  }
  const logAverage = Math.exp(sum / n);
  return Math.log2(key / logAverage);
}

/**
 * Filmic curve: K. Narkowicz, "ACES Filmic Tone Mapping Curve" (blog, 6 January 2016), a rational fit
 * f(x) = x(2.51x + 0.03) / (x(2.43x + 0.59) + 0.14), clamped to [0, 1], applied per channel as in
 * the published code.
 */
export function filmicAces(x: number): number {
  if (!(x > 0)) return 0;
  const v = (x * (2.51 * x + 0.03)) / (x * (2.43 * x + 0.59) + 0.14);
  return v > 1 ? 1 : v;
}

/**
 * Applies exposure and the tone map to one linear RGB triple, writing display-linear values
 * (before the sRGB transfer function) into out[0..2].
 */
export function toneMapRgb(r: number, g: number, b: number, display: Display, out: Float64Array | number[]): void {
  const k = Math.pow(2, display.exposure);
  r = r > 0 ? r * k : 0; // negative and NaN radiance cannot be shown
  g = g > 0 ? g * k : 0;
  b = b > 0 ? b * k : 0;
  if (display.toneMap === "reinhard") {
    // On luminance, keeping chromaticity: scale RGB by Ld / L.
    const l = luminance709(r, g, b);
    const s = l > 0 ? 1 / (1 + l) : 0; // reinhard(l) / l, written as displayToRgba8 computes it
    out[0] = r * s;
    out[1] = g * s;
    out[2] = b * s;
  } else if (display.toneMap === "filmic") {
    out[0] = filmicAces(r);
    out[1] = filmicAces(g);
    out[2] = filmicAces(b);
  } else {
    out[0] = r;
    out[1] = g;
    out[2] = b;
  }
}

/**
 * Linear thresholds of the 8-bit sRGB codes: T[c] is the smallest value whose srgbEncode8 is ≥ c.
 * Found by bisection on srgbEncode8 itself, so the table reproduces it exactly (it is monotonic) while
 * a frame costs eight comparisons per channel instead of a pow().
 */
let codeThresholds: Float64Array | null = null;

function thresholds(): Float64Array {
  if (codeThresholds) return codeThresholds;
  const t = new Float64Array(256);
  t[0] = -Infinity;
  for (let c = 1; c < 256; c++) {
    let lo = 0;
    let hi = 1;
    for (let k = 0; k < 200; k++) {
      const mid = (lo + hi) / 2;
      if (mid === lo || mid === hi) break;
      if (srgbEncode8(mid) >= c) hi = mid;
      else lo = mid;
    }
    t[c] = hi;
  }
  codeThresholds = t;
  return t;
}

/** Same result as srgbEncode8 for every input (NaN → 0), by binary search in the threshold table. */
export function srgbEncode8Fast(x: number, t: Float64Array = thresholds()): number {
  if (!(x >= t[1]!)) return 0;
  if (x >= t[255]!) return 255;
  let lo = 1;
  let hi = 255;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (x >= t[mid]!) lo = mid;
    else hi = mid;
  }
  return lo;
}

/**
 * 8-bit RGBA (alpha 255), row 0 = top, ready for ImageData or PNG. `out` may be reused between frames.
 */
export function displayToRgba8(img: FloatImage, display: Display, out?: Uint8ClampedArray): Uint8ClampedArray {
  const n = img.width * img.height;
  const rgba = out && out.length === n * 4 ? out : new Uint8ClampedArray(n * 4);
  const d = img.data;
  const t = thresholds();
  const k = Math.pow(2, display.exposure);
  const mode = display.toneMap === "reinhard" ? 1 : display.toneMap === "filmic" ? 2 : 0;
  for (let i = 0; i < n; i++) {
    // negative and NaN radiance cannot be shown
    let r = d[i * 3]!;
    let g = d[i * 3 + 1]!;
    let b = d[i * 3 + 2]!;
    r = r > 0 ? r * k : 0;
    g = g > 0 ? g * k : 0;
    b = b > 0 ? b * k : 0;
    if (mode === 1) {
      const l = LUMA_R * r + LUMA_G * g + LUMA_B * b;
      const s = l > 0 ? 1 / (1 + l) : 0; // reinhard(l) / l
      r *= s;
      g *= s;
      b *= s;
    } else if (mode === 2) {
      r = filmicAces(r);
      g = filmicAces(g);
      b = filmicAces(b);
    }
    rgba[i * 4] = srgbEncode8Fast(r, t);
    rgba[i * 4 + 1] = srgbEncode8Fast(g, t);
    rgba[i * 4 + 2] = srgbEncode8Fast(b, t);
    rgba[i * 4 + 3] = 255;
  }
  return rgba;
}
