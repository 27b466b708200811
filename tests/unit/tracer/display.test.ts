import { describe, expect, it } from "vitest";
import { Color } from "three";
import {
  displayToRgba8,
  filmicAces,
  luminance709,
  reinhard,
  reinhardKeyExposure,
  srgbDecode,
  srgbEncode,
  srgbEncode8,
  srgbEncode8Fast,
  toneMapRgb,
} from "../../../tracer/film/display";

describe("sRGB transfer function (IEC 61966-2-1:1999)", () => {
  // Table from REFERENCE_CHECKS §3, derived from the standard's piecewise formula
  // (V = 12.92 L for L ≤ 0.0031308, else 1.055 L^(1/2.4) − 0.055; code = round(255 V)).
  const table: [number, number, number][] = [
    [0.0, 0.0, 0],
    [0.001, 0.01292, 3],
    [0.0031308, 0.0404499, 10],
    [0.01, 0.0998528, 25],
    [0.05, 0.2478005, 63],
    [0.18, 0.4613561, 118],
    [0.5, 0.735357, 188],
    [0.8, 0.9063318, 231],
    [1.0, 1.0, 255],
  ];
  it.each(table)("encodes linear %f to %f (8-bit %i)", (lin, v, code) => {
    expect(Math.abs(srgbEncode(lin) - v)).toBeLessThanOrEqual(1e-6);
    expect(srgbEncode8(lin)).toBe(code);
  });

  it("puts linear 0.214 within one code of the 127/128 boundary (0.21404114 encodes to exactly 0.5)", () => {
    expect(Math.abs(srgbEncode(0.214) - 0.4999555)).toBeLessThanOrEqual(1e-6);
    expect([127, 128]).toContain(srgbEncode8(0.214));
  });

  // Decode table, REFERENCE_CHECKS §3 (derived from the IEC 61966-2-1 inverse), abs 1e-7.
  const decodeTable: [number, number][] = [
    [1, 0.0003035],
    [10, 0.0030353],
    [11, 0.0033465],
    [50, 0.031896],
    [100, 0.1274377],
    [118, 0.1811642],
    [128, 0.2158605],
    [188, 0.5028865],
    [254, 0.9911021],
    [255, 1.0],
  ];
  it.each(decodeTable)("decodes code %i to linear %f", (code, lin) => {
    expect(Math.abs(srgbDecode(code / 255) - lin)).toBeLessThanOrEqual(1e-7);
  });

  it("agrees with three.js's Color sRGB conversions (independent general-purpose library) on a sweep", () => {
    // three.js writes the exponent 1/2.4 as 0.41666 and the decode constants to 10 digits, so it
    // differs from the exact formula by up to ~1e-5; anything larger would be a real discrepancy.
    for (let i = 0; i <= 1000; i++) {
      const x = i / 1000;
      expect(Math.abs(srgbEncode(x) - new Color(x, x, x).convertLinearToSRGB().r)).toBeLessThanOrEqual(2e-5);
      expect(Math.abs(srgbDecode(x) - new Color(x, x, x).convertSRGBToLinear().r)).toBeLessThanOrEqual(2e-6);
    }
  });

  it("round-trips every 8-bit code", () => {
    for (let c = 0; c <= 255; c++) expect(srgbEncode8(srgbDecode(c / 255))).toBe(c);
  });

  it("clamps out-of-range and NaN input", () => {
    expect(srgbEncode(-1)).toBe(0);
    expect(srgbEncode(Number.NaN)).toBe(0);
    expect(srgbEncode(7)).toBe(1);
  });
});

describe("luminance (ITU-R BT.709 weights 0.2126, 0.7152, 0.0722)", () => {
  it("matches the worked examples of REFERENCE_CHECKS §3", () => {
    expect(luminance709(1, 1, 1)).toBeCloseTo(1, 12);
    expect(luminance709(1, 0, 0)).toBeCloseTo(0.2126, 12);
    expect(Math.abs(luminance709(0.18, 0.5, 0.9) - 0.460848)).toBeLessThanOrEqual(1e-9);
  });
});

describe("Reinhard et al. 2002, Photographic Tone Reproduction", () => {
  it("Eq. 3 Ld = L/(1+L) (values derived from the formula, REFERENCE_CHECKS §11)", () => {
    const t: [number, number][] = [
      [0.18, 0.1525424],
      [0.5, 0.3333333],
      [1, 0.5],
      [2, 0.6666667],
      [4, 0.8],
      [10, 0.9090909],
      [100, 0.990099],
    ];
    for (const [l, d] of t) expect(Math.abs(reinhard(l) - d)).toBeLessThanOrEqual(1e-7);
  });
  it("Eq. 4 with a white point maps L = Lwhite to 1", () => {
    expect(reinhard(1, 4)).toBeCloseTo(0.53125, 12);
    expect(reinhard(2, 2)).toBeCloseTo(1, 12);
    expect(reinhard(0.5, 1)).toBeCloseTo(0.5, 12);
  });
  it("key scaling: log-average of {0.01, 0.1, 1, 10} with δ = 1e-4 is 0.3171033 (REFERENCE_CHECKS §11)", () => {
    const img = { width: 4, height: 1, data: new Float32Array([0.01, 0.01, 0.01, 0.1, 0.1, 0.1, 1, 1, 1, 10, 10, 10]) };
    const stops = reinhardKeyExposure(img, 0.18, 1e-4);
    // Lw = 1 scales to 0.18 / 0.3171033 = 0.5676383
    expect(Math.pow(2, stops)).toBeCloseTo(0.5676383, 5);
  });
  it("scales colour by luminance, keeping chromaticity", () => {
    const out = [0, 0, 0];
    toneMapRgb(2, 1, 0.5, { exposure: 0, toneMap: "reinhard" }, out);
    const l = luminance709(2, 1, 0.5);
    const s = 1 / (1 + l);
    expect(out[0]).toBeCloseTo(2 * s, 12);
    expect(out[1]).toBeCloseTo(1 * s, 12);
    expect(out[2]).toBeCloseTo(0.5 * s, 12);
  });
});

describe("filmic: Narkowicz 2016 ACES fit", () => {
  it("matches the curve's values (derived from the published formula, REFERENCE_CHECKS §11)", () => {
    const t: [number, number][] = [
      [0, 0],
      [0.01, 0.00377],
      [0.18, 0.266899],
      [0.5, 0.616307],
      [1, 0.803797],
      [2, 0.914855],
      [4, 0.973417],
      [10, 1],
    ];
    for (const [x, y] of t) expect(Math.abs(filmicAces(x) - y)).toBeLessThanOrEqual(1e-6);
  });
});

describe("displayToRgba8", () => {
  const grey = (v: number) => ({ width: 1, height: 1, data: new Float32Array([v, v, v]) });
  it("flat 0.18 with no tone map gives code 118 (REFERENCE_CHECKS §3)", () => {
    expect(Array.from(displayToRgba8(grey(0.18), { exposure: 0, toneMap: "none" }))).toEqual([118, 118, 118, 255]);
  });
  it("exposure is in stops: 0.09 at +1 stop equals 0.18", () => {
    expect(Array.from(displayToRgba8(grey(0.09), { exposure: 1, toneMap: "none" }))).toEqual([118, 118, 118, 255]);
  });
  it("Reinhard of linear 1.0 gives code 188, ACES of 1.0 gives 232 (REFERENCE_CHECKS §11)", () => {
    expect(displayToRgba8(grey(1), { exposure: 0, toneMap: "reinhard" })[0]).toBe(188);
    expect(displayToRgba8(grey(1), { exposure: 0, toneMap: "filmic" })[0]).toBe(232);
  });
  it("clips, zeroes negative and NaN radiance, keeps row order and reuses the output buffer", () => {
    const img = { width: 2, height: 2, data: new Float32Array([5, -1, Number.NaN, 0, 0, 0, 1, 1, 1, 0.5, 0.5, 0.5]) };
    const out = new Uint8ClampedArray(16);
    const r = displayToRgba8(img, { exposure: 0, toneMap: "none" }, out);
    expect(r).toBe(out);
    expect(Array.from(r)).toEqual([255, 0, 0, 255, 0, 0, 0, 255, 255, 255, 255, 255, 188, 188, 188, 255]);
  });
});

describe("fast 8-bit path", () => {
  it("matches srgbEncode8 exactly, including next to every code boundary", () => {
    for (let c = 1; c < 256; c++) {
      // the linear value whose encoding is exactly the boundary between codes c-1 and c
      const edge = srgbDecode((c - 0.5) / 255);
      for (const x of [edge * (1 - 1e-12), edge, edge * (1 + 1e-12), edge * (1 - 1e-15), edge * (1 + 1e-15)]) {
        expect(srgbEncode8Fast(x)).toBe(srgbEncode8(x));
      }
    }
    let s = 12345;
    const mismatches: number[] = [];
    for (let i = 0; i < 100000; i++) {
      s = (Math.imul(s, 1103515245) + 12345) >>> 0;
      const x = (s / 2 ** 32) * 1.2 - 0.1;
      if (srgbEncode8Fast(x) !== srgbEncode8(x)) mismatches.push(x);
    }
    expect(mismatches).toEqual([]);
    expect(srgbEncode8Fast(Number.NaN)).toBe(0);
  });

  it("displayToRgba8 equals toneMapRgb followed by srgbEncode8, pixel by pixel", () => {
    const n = 4000;
    const data = new Float32Array(n * 3);
    for (let i = 0; i < data.length; i++) data[i] = Math.pow(2, ((i * 7919) % 1000) / 100 - 6);
    const img = { width: 80, height: 50, data };
    for (const display of [
      { exposure: 0, toneMap: "none" as const },
      { exposure: -1.5, toneMap: "reinhard" as const },
      { exposure: 2, toneMap: "filmic" as const },
    ]) {
      const rgba = displayToRgba8(img, display);
      const expected = new Uint8ClampedArray(n * 4);
      const t = [0, 0, 0];
      for (let p = 0; p < n; p++) {
        toneMapRgb(data[p * 3]!, data[p * 3 + 1]!, data[p * 3 + 2]!, display, t);
        expected.set([...t.map(srgbEncode8), 255], p * 4);
      }
      expect(rgba).toEqual(expected);
    }
  });
});
