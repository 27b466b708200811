// Metric values on known image pairs, checked against hand-computed values of the published formulas and
// against ssim.js (the reference package) called directly.
import ssimModule from "ssim.js";
import seedrandom from "seedrandom";
import { describe, expect, it } from "vitest";
import { compareImages, differenceImage, psnr, rampColour, rmse, ssim, type Picture } from "~/lib/image-metrics";

function grey(width: number, height: number, value: (x: number, y: number) => number): Picture {
  const data = new Uint8ClampedArray(width * height * 4);
  for (let y = 0; y < height; y++)
    for (let x = 0; x < width; x++) {
      const v = value(x, y);
      data.set([v, v, v, 255], (y * width + x) * 4);
    }
  return { width, height, channels: 4, data };
}

function linear(width: number, height: number, value: (x: number, y: number) => number): Picture {
  const data = new Float32Array(width * height * 3);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) data.fill(value(x, y), (y * width + x) * 3, (y * width + x) * 3 + 3);
  return { width, height, channels: 3, data };
}

/**
 * Independent SSIM per Wang et al. 2004, Eq. 13 with the paper's 11×11 circular-symmetric Gaussian window
 * (σ = 1.5, normalised), K1 = 0.01, K2 = 0.03, L = 255, averaged over every window that fits (MSSIM, Eq. 17).
 */
function referenceSsim(a: Picture, b: Picture): number {
  const w: number[] = [];
  let total = 0;
  for (let y = -5; y <= 5; y++)
    for (let x = -5; x <= 5; x++) {
      const g = Math.exp(-(x * x + y * y) / (2 * 1.5 * 1.5));
      w.push(g);
      total += g;
    }
  const C1 = (0.01 * 255) ** 2;
  const C2 = (0.03 * 255) ** 2;
  const at = (p: Picture, x: number, y: number) => Number(p.data[(y * p.width + x) * p.channels]);
  let sum = 0;
  let count = 0;
  for (let y0 = 0; y0 + 11 <= a.height; y0++)
    for (let x0 = 0; x0 + 11 <= a.width; x0++) {
      let mx = 0, my = 0;
      for (let j = 0; j < 11; j++) for (let i = 0; i < 11; i++) {
        const k = w[j * 11 + i]! / total;
        mx += k * at(a, x0 + i, y0 + j);
        my += k * at(b, x0 + i, y0 + j);
      }
      let sx = 0, sy = 0, sxy = 0;
      for (let j = 0; j < 11; j++) for (let i = 0; i < 11; i++) {
        const k = w[j * 11 + i]! / total;
        const dx = at(a, x0 + i, y0 + j) - mx;
        const dy = at(b, x0 + i, y0 + j) - my;
        sx += k * dx * dx;
        sy += k * dy * dy;
        sxy += k * dx * dy;
      }
      sum += ((2 * mx * my + C1) * (2 * sxy + C2)) / ((mx * mx + my * my + C1) * (sx + sy + C2));
      count++;
    }
  return sum / count;
}

describe("RMSE and PSNR", () => {
  it("match hand-computed values for constant images 100 and 110 (8-bit)", () => {
    const a = grey(16, 16, () => 100);
    const b = grey(16, 16, () => 110);
    expect(rmse(a, b)).toBe(10);
    // PSNR = 20·log10(255/10) = 28.130803608679… dB (common practice formula, value computed by hand)
    expect(compareImages(a, b, "display").psnr).toBeCloseTo(28.1308036, 6);
  });

  it("use the reference's peak for linear radiance: 1.0 vs 1.1 gives 20 dB", () => {
    const a = linear(12, 12, () => 1);
    const b = linear(12, 12, () => 1.1);
    const m = compareImages(a, b, "linear");
    expect(m.peak).toBe(1);
    expect(m.rmse).toBeCloseTo(0.1, 6);
    expect(m.psnr).toBeCloseTo(20, 4);
  });

  it("gives infinite PSNR and SSIM 1 for identical pictures", () => {
    const a = grey(16, 16, (x, y) => (x * 13 + y * 7) % 256);
    const m = compareImages(a, a, "display");
    expect(m.rmse).toBe(0);
    expect(psnr(0, 255)).toBe(Infinity);
    expect(m.ssim).toBe(1);
  });
});

describe("SSIM", () => {
  it("equals Wang et al.'s Eq. 13 for two constant images (σ = 0: luminance term only)", () => {
    const a = grey(16, 16, () => 100);
    const b = grey(16, 16, () => 110);
    const C1 = (0.01 * 255) ** 2;
    const expected = (2 * 100 * 110 + C1) / (100 * 100 + 110 * 110 + C1); // 0.995476…
    expect(ssim(a, b, "display")).toBeCloseTo(expected, 10);
  });

  it("agrees with an independent implementation of the paper's formula on a noisy pair", () => {
    const rng = seedrandom("harrow-lane");
    const base = Array.from({ length: 32 * 24 }, () => Math.floor(rng() * 200) + 20);
    const a = grey(32, 24, (x, y) => base[y * 32 + x]!);
    const b = grey(32, 24, (x, y) => Math.max(0, Math.min(255, base[y * 32 + x]! + Math.round((rng() - 0.5) * 60))));
    const ours = ssim(a, b, "display");
    expect(ours).toBeCloseTo(referenceSsim(a, b), 6);
    // And it is exactly what the reference package returns when called directly with the same options.
    const direct = (ssimModule as unknown as (x: unknown, y: unknown, o: unknown) => { mssim: number })(
      { data: a.data, width: 32, height: 24 },
      { data: b.data, width: 32, height: 24 },
      { ssim: "original", downsample: false },
    ).mssim;
    expect(ours).toBe(direct);
    expect(ours).toBeLessThan(1);
  });

  it("ranks a smaller perturbation of linear radiance as more similar", () => {
    const rng = seedrandom("osier");
    const base = Array.from({ length: 24 * 24 }, () => rng() * 4);
    const ref = linear(24, 24, (x, y) => base[y * 24 + x]!);
    const near = linear(24, 24, (x, y) => base[y * 24 + x]! * 1.02);
    const far = linear(24, 24, (x, y) => base[y * 24 + x]! + (rng() - 0.5));
    expect(ssim(ref, near, "linear")).toBeGreaterThan(ssim(ref, far, "linear"));
  });

  it("refuses pictures of different sizes with a clear message", () => {
    expect(() => compareImages(grey(16, 16, () => 0), grey(16, 12, () => 0), "display")).toThrow(/differ in size \(16×16 and 16×12\)/);
  });
});

describe("difference image", () => {
  it("maps no difference to black and the largest to white", () => {
    const a = grey(12, 12, () => 50);
    const b = grey(12, 12, (x) => (x === 3 ? 90 : 50));
    const d = differenceImage(a, b);
    expect(Array.from(d.rgba.slice(0, 4))).toEqual([0, 0, 0, 255]);
    expect(Array.from(d.rgba.slice(12, 16))).toEqual([255, 255, 255, 255]);
    expect(d.scale).toBeCloseTo(Math.sqrt(3) * 40, 10);
    expect(rampColour(0.5)).toEqual([40, 170, 160]);
  });
});
