/**
 * Looking at light in the preview: combining the per-group radiance buffers with the light-balance gains,
 * the exposure false-colour view, the luminance histogram and the pixel probe. All of it works on linear
 * float images (RGB per pixel, row 0 = top), never on the 8-bit display picture.
 */

export type FloatImage = { width: number; height: number; data: Float32Array };
export type Rgb = [number, number, number];

/** Relative luminance of linear Rec. 709 RGB. Source: ITU-R BT.709-6, item 3.2 (Y = 0.2126 R + 0.7152 G + 0.0722 B). */
export const LUMA_R = 0.2126;
export const LUMA_G = 0.7152;
export const LUMA_B = 0.0722;

export function luminance(r: number, g: number, b: number): number {
  return LUMA_R * r + LUMA_G * g + LUMA_B * b;
}

/** Middle grey: the 18% reflectance that exposure is placed around (common practice in photographic metering). */
export const MIDDLE_GREY = 0.18;

// ---------------------------------------------------------------------------------------------
// light balance

export type GroupBalance = { gain: number; tint: Rgb };

export const NEUTRAL_BALANCE: GroupBalance = { gain: 1, tint: [1, 1, 1] };

/**
 * The per-channel factor a group's buffer is multiplied by: gain × tint, with the tint scaled to unit
 * luminance so that choosing a colour changes hue, not brightness (brightness is the gain's job).
 */
export function balanceFactor(b: GroupBalance): Rgb {
  const y = luminance(b.tint[0], b.tint[1], b.tint[2]);
  const k = y > 0 ? b.gain / y : 0;
  return [b.tint[0] * k, b.tint[1] * k, b.tint[2] * k];
}

export function isNeutral(b: GroupBalance): boolean {
  const f = balanceFactor(b);
  return Math.abs(f[0] - 1) < 1e-9 && Math.abs(f[1] - 1) < 1e-9 && Math.abs(f[2] - 1) < 1e-9;
}

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

// ---------------------------------------------------------------------------------------------
// exposure false colour

/** Stops above (+) or below (−) middle grey of a luminance after the display exposure (in stops). */
export function stopsFromGrey(y: number, exposure: number): number {
  return Math.log2((y * Math.pow(2, exposure)) / MIDDLE_GREY);
}

export type FalseColourBand = { label: string; stops: number; colour: Rgb; meaning: string };

/**
 * One colour per whole stop from −6 to +6 around middle grey (the ends collect everything beyond). Cold
 * colours below grey, neutral grey at it, warm colours above, white where highlights will clip. Pixels
 * with no light at all are shown black.
 */
export const FALSE_COLOUR_BANDS: readonly FalseColourBand[] = [
  { label: "≤ −6", stops: -6, colour: [24, 8, 64], meaning: "near black, detail lost" },
  { label: "−5", stops: -5, colour: [48, 20, 120], meaning: "deep shadow" },
  { label: "−4", stops: -4, colour: [40, 50, 170], meaning: "deep shadow" },
  { label: "−3", stops: -3, colour: [30, 100, 200], meaning: "shadow" },
  { label: "−2", stops: -2, colour: [30, 150, 190], meaning: "shadow" },
  { label: "−1", stops: -1, colour: [60, 170, 140], meaning: "lower mid-tone" },
  { label: "0", stops: 0, colour: [128, 128, 128], meaning: "middle grey (0.18)" },
  { label: "+1", stops: 1, colour: [110, 190, 70], meaning: "upper mid-tone" },
  { label: "+2", stops: 2, colour: [200, 210, 50], meaning: "bright" },
  { label: "+3", stops: 3, colour: [240, 170, 40], meaning: "highlight" },
  { label: "+4", stops: 4, colour: [235, 100, 30], meaning: "strong highlight" },
  { label: "+5", stops: 5, colour: [215, 40, 60], meaning: "near clipping" },
  { label: "≥ +6", stops: 6, colour: [255, 255, 255], meaning: "clipped" },
];

const NO_LIGHT: Rgb = [0, 0, 0];

/** The band index (into FALSE_COLOUR_BANDS) of a luminance, or −1 for no light at all. */
export function falseColourBand(y: number, exposure: number): number {
  if (!(y > 0)) return -1;
  const s = Math.round(stopsFromGrey(y, exposure));
  const idx = Math.min(6, Math.max(-6, s)) + 6;
  return idx;
}

export function falseColourOf(y: number, exposure: number): Rgb {
  const b = falseColourBand(y, exposure);
  return b < 0 ? NO_LIGHT : FALSE_COLOUR_BANDS[b]!.colour;
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

// ---------------------------------------------------------------------------------------------
// luminance histogram

export type Histogram = {
  /** stops relative to middle grey (after exposure) of the left edge of bin 0 and the right edge of the last bin */
  minStops: number;
  maxStops: number;
  counts: Uint32Array;
  /** pixels with no light (luminance ≤ 0): they have no place on a log axis */
  black: number;
  /** pixels below minStops / above maxStops (also counted in the first / last bin) */
  below: number;
  above: number;
  total: number;
  /** log-average luminance exp(mean ln Y) over lit pixels, before exposure; 0 if none */
  logAverage: number;
  maxLuminance: number;
};

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

// ---------------------------------------------------------------------------------------------
// pixel probe

export type ProbeReading = { x: number; y: number; rgb: Rgb; luminance: number; stops: number | null };

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

// ---------------------------------------------------------------------------------------------
// light meter units

/**
 * Lux from the meter's irradiance. The tracer's light is relative radiometric RGB, so the conversion
 * assumes the scene's watts are "white-light watts" with a luminous efficacy of 683 lm/W applied to the
 * luminance of the RGB irradiance. 683 lm/W is the defined maximum luminous efficacy at 540 THz
 * (SI Brochure, 9th ed., definition of the candela); real lamps have far less per electrical watt.
 */
export const LUMINOUS_EFFICACY_LM_PER_W = 683;

export function irradianceToLux(e: Rgb): number {
  return LUMINOUS_EFFICACY_LM_PER_W * luminance(e[0], e[1], e[2]);
}

/** Format a number with a sensible number of significant digits for a readout. */
export function formatReadout(x: number, digits = 4): string {
  if (!Number.isFinite(x)) return x > 0 ? "∞" : x < 0 ? "−∞" : "—";
  if (x === 0) return "0";
  const a = Math.abs(x);
  if (a >= 1e6 || a < 1e-4) return x.toExponential(digits - 1);
  return Number(x.toPrecision(digits)).toString();
}
