import { describe, expect, it } from "vitest";
import {
  balanceFactor,
  FALSE_COLOUR_BANDS,
  falseColourBand,
  irradianceToLux,
  luminance,
  stopsFromGrey,
  type FloatImage,
} from "~/lib/workspace-image";
import { combineGroups, falseColourToRgba8, luminanceHistogram, probePixel } from "~/lib/workspace-picture";
import { parseIssuePath, rangeOfPath } from "~/lib/workspace-json";
import { kettleText } from "./fixture";

const img = (width: number, height: number, rgb: number[]): FloatImage => ({ width, height, data: Float32Array.from(rgb) });
const grey = (...ys: number[]) => img(ys.length, 1, ys.flatMap((y) => [y, y, y]));

describe("luminance", () => {
  it("uses the Rec. 709 weights", () => {
    // ITU-R BT.709-6 item 3.2: Y = 0.2126 R + 0.7152 G + 0.0722 B; the weights sum to 1 so white stays white.
    expect(luminance(1, 0, 0)).toBeCloseTo(0.2126, 12);
    expect(luminance(0, 1, 0)).toBeCloseTo(0.7152, 12);
    expect(luminance(0, 0, 1)).toBeCloseTo(0.0722, 12);
    expect(luminance(1, 1, 1)).toBeCloseTo(1, 12);
  });
});

describe("false colour in stops around middle grey", () => {
  it("puts 0.18 at zero stops and each doubling one stop up", () => {
    // A stop is a factor of 2 in light (common practice); middle grey is 18% (common practice in metering).
    expect(stopsFromGrey(0.18, 0)).toBeCloseTo(0, 12);
    expect(stopsFromGrey(0.36, 0)).toBeCloseTo(1, 12);
    expect(stopsFromGrey(0.045, 0)).toBeCloseTo(-2, 12);
    // Exposure +1 doubles the pixel value before metering: 0.09 then sits at middle grey.
    expect(stopsFromGrey(0.09, 1)).toBeCloseTo(0, 12);
  });

  it("maps luminance to the band of the nearest whole stop, clamping at ±6", () => {
    const band = (y: number, e = 0) => FALSE_COLOUR_BANDS[falseColourBand(y, e)]!.stops;
    expect(band(0.18)).toBe(0);
    expect(band(0.18 * 2 ** 0.49)).toBe(0);
    expect(band(0.18 * 2 ** 0.51)).toBe(1);
    expect(band(0.18 * 2 ** -3)).toBe(-3);
    expect(band(0.18 * 2 ** 9)).toBe(6);
    expect(band(0.18 * 2 ** -20)).toBe(-6);
    expect(band(0.045, 2)).toBe(0);
    expect(falseColourBand(0, 0)).toBe(-1); // no light at all
  });

  it("paints each pixel with its band colour and opaque alpha", () => {
    const rgba = falseColourToRgba8(grey(0.18, 0.72, 0));
    expect(Array.from(rgba.slice(0, 4))).toEqual([...FALSE_COLOUR_BANDS[6]!.colour, 255]);
    expect(Array.from(rgba.slice(4, 8))).toEqual([...FALSE_COLOUR_BANDS[8]!.colour, 255]); // 0.72 = +2 stops
    expect(Array.from(rgba.slice(8, 12))).toEqual([0, 0, 0, 255]);
  });

  it("has a legend covering −6…+6 in order with distinct colours", () => {
    expect(FALSE_COLOUR_BANDS.map((b) => b.stops)).toEqual([-6, -5, -4, -3, -2, -1, 0, 1, 2, 3, 4, 5, 6]);
    expect(new Set(FALSE_COLOUR_BANDS.map((b) => b.colour.join())).size).toBe(13);
  });
});

describe("luminance histogram", () => {
  it("counts pixels per stop bin, with black pixels apart", () => {
    // 16 bins of one stop from −10 to +6: bin k covers [k − 10, k − 9) stops.
    const h = luminanceHistogram(grey(0.18, 0.18, 0.36, 0.09, 0, 0.18 * 2 ** 10, 0.18 * 2 ** -12), { bins: 16, minStops: -10, maxStops: 6 });
    expect(h.total).toBe(7);
    expect(h.black).toBe(1);
    expect(h.counts[10]).toBe(2); // 0.18 → 0 stops
    expect(h.counts[11]).toBe(1); // 0.36 → +1
    expect(h.counts[9]).toBe(1); // 0.09 → −1
    expect(h.counts[15]).toBe(1); // +10 clamps into the last bin
    expect(h.counts[0]).toBe(1); // −12 clamps into the first
    expect(h.above).toBe(1);
    expect(h.below).toBe(1);
    expect(Array.from(h.counts).reduce((a, b) => a + b, 0)).toBe(6);
  });

  it("reports the log-average (geometric mean) luminance of lit pixels", () => {
    const h = luminanceHistogram(grey(0.1, 0.4, 0));
    expect(h.logAverage).toBeCloseTo(0.2, 6); // √(0.1 · 0.4)
    expect(h.maxLuminance).toBeCloseTo(0.4, 6);
  });

  it("shifts with exposure", () => {
    const h = luminanceHistogram(grey(0.09), { bins: 16, minStops: -10, maxStops: 6, exposure: 1 });
    expect(h.counts[10]).toBe(1);
  });
});

describe("light balance", () => {
  it("a tint changes colour but keeps luminance; the gain scales it", () => {
    const f = balanceFactor({ gain: 2, tint: [1, 0.5, 0.25] });
    expect(luminance(f[0], f[1], f[2])).toBeCloseTo(2, 12);
    expect(f[1] / f[0]).toBeCloseTo(0.5, 12);
  });

  it("the beauty is the balanced sum of the group buffers", () => {
    const key = img(2, 1, [1, 1, 1, 2, 2, 2]);
    const fill = img(2, 1, [0.5, 0.25, 0, 0, 0, 1]);
    const out = combineGroups([key, fill], [{ gain: 0.5, tint: [1, 1, 1] }, { gain: 2, tint: [1, 1, 1] }]);
    expect(Array.from(out.data)).toEqual([1.5, 1, 0.5, 1, 1, 3]);
    const neutral = combineGroups([key, fill], []);
    expect(Array.from(neutral.data)).toEqual([1.5, 1.25, 1, 2, 2, 3]);
  });
});

describe("probe and meter units", () => {
  it("reads linear RGB and luminance at a pixel, top-left origin", () => {
    const p = probePixel(img(2, 2, [0, 0, 0, 0, 0, 0, 0.18, 0.18, 0.18, 1, 0, 0]), 0.7, 1.2);
    expect(p).toMatchObject({ x: 0, y: 1 });
    expect(p!.rgb.map((v) => Number(v.toFixed(6)))).toEqual([0.18, 0.18, 0.18]);
    expect(p!.stops).toBeCloseTo(0, 5);
    expect(probePixel(img(1, 1, [0, 0, 0]), 3, 0)).toBeNull();
  });

  it("converts white irradiance to lux at 683 lm/W", () => {
    // SI Brochure 9th ed.: the candela fixes the luminous efficacy of 540 THz radiation at 683 lm/W.
    expect(irradianceToLux([1, 1, 1])).toBeCloseTo(683, 9);
    expect(irradianceToLux([0, 2, 0])).toBeCloseTo(683 * 2 * 0.7152, 9);
  });
});

describe("issue paths to editor ranges", () => {
  it("parses the validator's path syntax", () => {
    expect(parseIssuePath("lights[2].shape.radius")).toEqual(["lights", 2, "shape", "radius"]);
    expect(parseIssuePath('materials["glass top"].ior')).toEqual(["materials", "glass top", "ior"]);
    expect(parseIssuePath("")).toEqual([]);
  });

  it("points at the member that is wrong, or at the key of the object missing a field", () => {
    const r = rangeOfPath(kettleText, ["lights", 1, "shape", "radius"])!;
    expect(kettleText.slice(r.offset, r.offset + r.length)).toBe('"radius": 0.3');
    const missing = rangeOfPath(kettleText, ["camera", "aperture"])!;
    expect(kettleText.slice(missing.offset, missing.offset + missing.length)).toBe('"camera"');
  });
});

describe("format-keeping edits", () => {
  it("replaces a vector in place on one line and leaves the rest of the text alone", async () => {
    const { setAtPath, prettyJson } = await import("~/lib/workspace-json");
    const text = prettyJson({ a: { center: [0, 1, 2], n: 1 }, b: "x" }) + "\n";
    const out = setAtPath(text, ["a", "center"], [3, 4, 5]);
    expect(out).toBe(text.replace("[0, 1, 2]", "[3, 4, 5]"));
    const shape = setAtPath(text, ["a"], { type: "disk", normal: [0, -1, 0] });
    expect(JSON.parse(shape)).toEqual({ a: { type: "disk", normal: [0, -1, 0] }, b: "x" });
    expect(shape).toContain('  "a": {\n    "type": "disk",\n    "normal": [0, -1, 0]\n  },');
    expect(JSON.parse(setAtPath(text, ["a", "n"], undefined))).toEqual({ a: { center: [0, 1, 2] }, b: "x" });
    expect(JSON.parse(setAtPath(text, ["c", "d"], 2))).toEqual({ a: { center: [0, 1, 2], n: 1 }, b: "x", c: { d: 2 } });
  });
});
