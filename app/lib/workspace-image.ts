/**
 * Looking at light in the preview: the light-balance factors, the exposure false-colour bands, the shapes of
 * the histogram, probe and picture the coordinator worker sends, and the readout units. The per-pixel work
 * itself (combining groups, display transform, false colour, histogram, probe) is in workspace-picture.ts,
 * which only the coordinator worker imports: this module is cheap and safe on the page's main thread.
 */
import type { Display } from "@tracer/film/display";

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

/** The histogram the workspace shows: 48 bins from −10 to +6 stops around middle grey. */
export const HISTOGRAM_BINS = 48;
export const HISTOGRAM_MIN_STOPS = -10;
export const HISTOGRAM_MAX_STOPS = 6;

// ---------------------------------------------------------------------------------------------
// pixel probe

export type ProbeReading = { x: number; y: number; rgb: Rgb; luminance: number; stops: number | null };

// ---------------------------------------------------------------------------------------------
// what the page asks for and what it gets back

export type ViewMode = "image" | "falseColour";

/** How the page wants the buffers shown: per-group balance by group name, display block, picture or exposure map. */
export type Look = { balances: Record<string, GroupBalance>; display: Display; view: ViewMode };

export const DEFAULT_LOOK: Look = { balances: {}, display: { exposure: 0, toneMap: "none" }, view: "image" };

/** A frame ready to draw: 8-bit RGBA (row 0 = top) and the histogram of the same balanced image. */
export type Picture = {
  width: number;
  height: number;
  rgba: Uint8ClampedArray;
  histogram: Histogram;
  /** The look request it answers (0 = the worker's default). */
  lookSeq: number;
};

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
