/**
 * The per-pixel work of looking at light: combining the per-group radiance buffers with the light-balance
 * gains, the display transform, the exposure false colour, the luminance histogram and the pixel probe.
 * All of it reads linear float images (RGB per pixel, row 0 = top). Only the render coordinator worker
 * imports this module: each of these loops touches every pixel, which the page's main thread must not do
 * while the artist types or drags a slider (a guard test walks the page's imports to keep it so).
 */
import { displayToRgba8 } from "@tracer/film/display";
import {
  balanceFactor,
  falseColourOf,
  HISTOGRAM_BINS,
  HISTOGRAM_MAX_STOPS,
  HISTOGRAM_MIN_STOPS,
  luminance,
  NEUTRAL_BALANCE,
  stopsFromGrey,
  type FloatImage,
  type GroupBalance,
  type Histogram,
  type Look,
  type Picture,
  type ProbeReading,
  type Rgb,
} from "./workspace-image";

/** beauty = Σ_g factor_g ⊙ group_g, written into `out` (allocated if absent). Groups must share one size. */
export function combineGroups(groups: readonly FloatImage[], balances: readonly GroupBalance[], out?: FloatImage): FloatImage {
  if (groups.length === 0) throw new Error("combineGroups: no groups");
  const { width, height } = groups[0]!;
  const n = width * height * 3;
  const res = out && out.data.length === n ? out : { width, height, data: new Float32Array(n) };
  res.width = width;
  res.height = height;
  const d = res.data;
  d.fill(0);
  groups.forEach((g, gi) => {
    if (g.width !== width || g.height !== height) throw new Error("combineGroups: group buffers differ in size");
    const [fr, fg, fb] = balanceFactor(balances[gi] ?? NEUTRAL_BALANCE);
    const s = g.data;
    for (let i = 0; i < n; i += 3) {
      d[i] += fr * s[i]!;
      d[i + 1] += fg * s[i + 1]!;
      d[i + 2] += fb * s[i + 2]!;
    }
  });
  return res;
}


/** Paint the false-colour view of an image into RGBA8 (alpha 255). */
export function falseColourToRgba8(img: FloatImage, exposure = 0, out?: Uint8ClampedArray): Uint8ClampedArray {
  const n = img.width * img.height;
  const res = out && out.length === n * 4 ? out : new Uint8ClampedArray(n * 4);
  const d = img.data;
  for (let p = 0; p < n; p++) {
    const c = falseColourOf(luminance(d[p * 3]!, d[p * 3 + 1]!, d[p * 3 + 2]!), exposure);
    res[p * 4] = c[0];
    res[p * 4 + 1] = c[1];
    res[p * 4 + 2] = c[2];
    res[p * 4 + 3] = 255;
  }
  return res;
}


/** Histogram of log2 luminance in stops around middle grey, `bins` equal bins over [minStops, maxStops). */
export function luminanceHistogram(
  img: FloatImage,
  opts: { exposure?: number; bins?: number; minStops?: number; maxStops?: number } = {},
): Histogram {
  const exposure = opts.exposure ?? 0;
  const bins = opts.bins ?? 48;
  const minStops = opts.minStops ?? -10;
  const maxStops = opts.maxStops ?? 6;
  const counts = new Uint32Array(bins);
  const width = (maxStops - minStops) / bins;
  let black = 0;
  let below = 0;
  let above = 0;
  let lnSum = 0;
  let lit = 0;
  let maxY = 0;
  const n = img.width * img.height;
  const d = img.data;
  for (let p = 0; p < n; p++) {
    const y = luminance(d[p * 3]!, d[p * 3 + 1]!, d[p * 3 + 2]!);
    if (!(y > 0)) {
      black++;
      continue;
    }
    lit++;
    lnSum += Math.log(y);
    if (y > maxY) maxY = y;
    const s = stopsFromGrey(y, exposure);
    let b = Math.floor((s - minStops) / width);
    if (b < 0) {
      below++;
      b = 0;
    } else if (b >= bins) {
      above++;
      b = bins - 1;
    }
    counts[b]!++;
  }
  return { minStops, maxStops, counts, black, below, above, total: n, logAverage: lit ? Math.exp(lnSum / lit) : 0, maxLuminance: maxY };
}


/** Linear radiance and luminance of one pixel (x right, y down from the top-left). */
export function probePixel(img: FloatImage, x: number, y: number, exposure = 0): ProbeReading | null {
  const px = Math.floor(x);
  const py = Math.floor(y);
  if (px < 0 || py < 0 || px >= img.width || py >= img.height) return null;
  const i = (py * img.width + px) * 3;
  const rgb: Rgb = [img.data[i]!, img.data[i + 1]!, img.data[i + 2]!];
  const lum = luminance(rgb[0], rgb[1], rgb[2]);
  return { x: px, y: py, rgb, luminance: lum, stops: lum > 0 ? stopsFromGrey(lum, exposure) : null };
}


/**
 * The balanced image of `groups` (named `groupNames`) under `look`, written into `scratch` when it fits,
 * and the picture to draw from it.
 */
export function presentPicture(
  groups: readonly FloatImage[],
  groupNames: readonly string[],
  look: Look,
  lookSeq: number,
  scratch?: FloatImage,
): { combined: FloatImage; picture: Picture } {
  const balances = groupNames.map((g) => look.balances[g] ?? NEUTRAL_BALANCE);
  const combined = combineGroups(groups, balances, scratch);
  const exposure = look.display.exposure;
  const rgba = look.view === "falseColour" ? falseColourToRgba8(combined, exposure) : displayToRgba8(combined, look.display);
  const histogram = luminanceHistogram(combined, { exposure, bins: HISTOGRAM_BINS, minStops: HISTOGRAM_MIN_STOPS, maxStops: HISTOGRAM_MAX_STOPS });
  return { combined, picture: { width: combined.width, height: combined.height, rgba, histogram, lookSeq } };
}
