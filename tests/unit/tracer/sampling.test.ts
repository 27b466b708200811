import { describe, expect, it } from "vitest";
import { SampleStream, cmj, cmjGrid, pcg4d, permute, sampleAt } from "../../../tracer/math/rng";
import { concentricDisk, cosineHemisphere, powerHeuristic, uniformCone, uniformSphere, basisFromNormal } from "../../../tracer/math/sampling";

/** The weight of technique A with pdfs a and b (powerHeuristic works on a [pdfA, pdfB, weight] record). */
function weightOf(a: number, b: number): number {
  const w = new Float64Array([a, b, 0]);
  powerHeuristic(w);
  return w[2];
}
import { pixelJitter } from "../../../tracer/render/unit";
import type { CompiledScene } from "../../../tracer/compile/types";

describe("counter-based random numbers", () => {
  it("are a pure function of (seed, pixel, pass, dimension)", () => {
    const a = new SampleStream();
    const b = new SampleStream();
    const w = new Uint32Array(4);
    a.start(42, 1234, 7);
    const seq = Array.from({ length: 20 }, () => a.next());
    // any order of access gives the same values
    for (const d of [13, 0, 19, 4, 7]) {
      b.start(42, 1234, 7);
      b.seek(d);
      expect(b.next()).toBe(seq[d]);
      expect(sampleAt(42, 1234, 7, d, w)).toBe(seq[d]);
    }
    b.start(43, 1234, 7);
    expect(b.next()).not.toBe(seq[0]);
    b.start(42, 1235, 7);
    expect(b.next()).not.toBe(seq[0]);
    b.start(42, 1234, 8);
    expect(b.next()).not.toBe(seq[0]);
  });

  it("are uniform on [0,1): χ² over 64 bins, and neighbouring pixels/passes/dimensions are uncorrelated", () => {
    // χ² goodness of fit with 63 degrees of freedom: the 0.9999 quantile is ≈ 111 (Pearson's χ² test;
    // quantile value from memory, checked loosely with a wide margin)
    const bins = new Float64Array(64);
    const rng = new SampleStream();
    const n = 256000;
    let sxy = 0;
    let sx = 0;
    let sy = 0;
    let outside = 0;
    for (let i = 0; i < n; i++) {
      rng.start(1, i % 4000, Math.floor(i / 4000));
      const x = rng.next();
      const y = rng.next();
      if (!(x >= 0 && x < 1)) outside++;
      bins[Math.floor(x * 64)]++;
      sxy += x * y;
      sx += x;
      sy += y;
    }
    const e = n / 64;
    let chi2 = 0;
    for (const b of bins) chi2 += ((b - e) * (b - e)) / e;
    expect(outside).toBe(0);
    expect(chi2).toBeLessThan(111);
    // covariance of two uniforms is 0 with SE = (1/12)/√n
    const cov = sxy / n - (sx / n) * (sy / n);
    expect(Math.abs(cov)).toBeLessThan((4 * (1 / 12)) / Math.sqrt(n));
  });

  it("pcg4d spreads single-bit changes of the input bits we use over all output bits (avalanche ≈ 50%)", () => {
    // pixel < 2^26, pass < 2^22, dimension blocks small; seeds are any uint32 but reach every lane
    const a = new Uint32Array(4);
    const b = new Uint32Array(4);
    let flips = 0;
    let total = 0;
    for (let i = 0; i < 2000; i++) {
      for (const bit of [0, 3, 7, 15, 21]) {
        pcg4d(i, 3, 5, 9, a);
        pcg4d(i ^ (1 << bit), 3, 5, 9, b);
        for (let k = 0; k < 4; k++) {
          let x = (a[k] ^ b[k]) >>> 0;
          while (x) {
            flips += x & 1;
            x >>>= 1;
          }
          total += 32;
        }
      }
    }
    expect(flips / total).toBeGreaterThan(0.45);
    expect(flips / total).toBeLessThan(0.55);
  });
});

describe("multi-jittered pixel samples (Chiu, Shirley & Wang 1994; permutations after Kensler 2013)", () => {
  it("permute is a bijection of [0, l) for any pattern", () => {
    for (const l of [1, 2, 7, 16, 100, 1000]) {
      for (const p of [0, 1, 0xdeadbeef]) {
        const seen = new Set<number>();
        for (let i = 0; i < l; i++) seen.add(permute(i, l, p));
        expect(seen.size).toBe(l);
        expect(Math.max(...seen)).toBe(l - 1);
      }
    }
  });

  it("n = m² samples put exactly one sample in each of the m×m cells and in each of the n x- and y-strips", () => {
    const out = new Float64Array(2);
    for (const n of [16, 64, 256]) {
      const { m, k } = cmjGrid(n);
      expect(m * k).toBe(n);
      for (const p of [1, 77, 123456]) {
        const cells = new Set<number>();
        const xs = new Set<number>();
        const ys = new Set<number>();
        for (let s = 0; s < n; s++) {
          cmj(s, m, k, p, out);
          cells.add(Math.floor(out[0] * m) * k + Math.floor(out[1] * k));
          xs.add(Math.floor(out[0] * n));
          ys.add(Math.floor(out[1] * n));
        }
        expect(cells.size).toBe(n);
        expect(xs.size).toBe(n);
        expect(ys.size).toBe(n);
      }
    }
  });

  it("each pass is uniform over the pixel across pixels (no bias even when spp is not a square)", () => {
    const fake = { spp: 10, seed: 3 } as CompiledScene;
    const out = new Float64Array(2);
    const w = new Uint32Array(4);
    const n = 40000;
    let sx = 0;
    let sy = 0;
    for (let pixel = 0; pixel < n; pixel++) {
      pixelJitter(fake, pixel, 9, w, out); // the last pass of a 4×3 grid with 2 cells unused
      sx += out[0];
      sy += out[1];
    }
    const se = Math.sqrt(1 / 12 / n);
    expect(Math.abs(sx / n - 0.5)).toBeLessThan(4 * se);
    expect(Math.abs(sy / n - 0.5)).toBeLessThan(4 * se);
  });

  it("stratified jitter beats independent samples on a smooth integrand: RMSE slope ≈ −1 vs −0.5", () => {
    // Mitchell, "Consequences of Stratified Sampling in Graphics", SIGGRAPH 96: jittered RMS error falls as
    // N^-1 for smooth integrands, independent sampling as N^-1/2 (central limit theorem).
    // REFERENCE_CHECKS item 7: f = uv, slopes −0.998 and −0.491 over N = 16…4096; tolerance ±0.08.
    const Ns = [16, 64, 256, 1024, 4096];
    const reps = 200;
    const out = new Float64Array(2);
    const rng = new SampleStream();
    const rmse = (stratified: boolean) =>
      Ns.map((N) => {
        const { m, k } = cmjGrid(N);
        let se = 0;
        for (let r = 0; r < reps; r++) {
          let sum = 0;
          for (let s = 0; s < N; s++) {
            let u: number;
            let v: number;
            if (stratified) {
              cmj(s, m, k, (r * 2654435761) >>> 0, out);
              u = out[0];
              v = out[1];
            } else {
              rng.start(17, r, s);
              u = rng.next();
              v = rng.next();
            }
            sum += u * v;
          }
          const err = sum / N - 0.25;
          se += err * err;
        }
        return Math.sqrt(se / reps);
      });
    const slope = (ys: number[]) => {
      const xs = Ns.map(Math.log);
      const ls = ys.map(Math.log);
      const mx = xs.reduce((a, b) => a + b) / xs.length;
      const my = ls.reduce((a, b) => a + b) / ls.length;
      let num = 0;
      let den = 0;
      for (let i = 0; i < xs.length; i++) {
        num += (xs[i] - mx) * (ls[i] - my);
        den += (xs[i] - mx) ** 2;
      }
      return num / den;
    };
    const strat = rmse(true);
    const indep = rmse(false);
    expect(Math.abs(slope(strat) - -1)).toBeLessThan(0.08);
    expect(Math.abs(slope(indep) - -0.5)).toBeLessThan(0.08);
    // at every N the stratified error is smaller
    for (let i = 0; i < Ns.length; i++) expect(strat[i]).toBeLessThan(indep[i]);
  });
});

describe("sampling warps", () => {
  it("concentric disk stays in the unit disk and is uniform (mean r² = 1/2)", () => {
    const out = new Float64Array(2);
    const rng = new SampleStream();
    let r2 = 0;
    let maxQ = 0;
    const n = 50000;
    for (let i = 0; i < n; i++) {
      rng.start(2, i, 0);
      concentricDisk(rng.next(), rng.next(), out);
      const q = out[0] ** 2 + out[1] ** 2;
      maxQ = Math.max(maxQ, q);
      r2 += q;
    }
    expect(maxQ).toBeLessThanOrEqual(1 + 1e-12);
    // r² is uniform on [0,1] for a uniform disk point: mean 1/2, SD 1/√12
    expect(Math.abs(r2 / n - 0.5)).toBeLessThan(4 / Math.sqrt(12 * n));
  });

  it("cosine hemisphere: E[cosθ] = 2/3 (pdf cosθ/π); uniform sphere: E[z] = 0, E[z²] = 1/3; cone stays in the cone", () => {
    const v = new Float64Array(3);
    const rng = new SampleStream();
    const n = 50000;
    let cz = 0;
    let sz = 0;
    let sz2 = 0;
    let worstNorm = 0;
    let minCone = 1;
    for (let i = 0; i < n; i++) {
      rng.start(3, i, 0);
      cosineHemisphere(rng.next(), rng.next(), v);
      worstNorm = Math.max(worstNorm, Math.abs(Math.hypot(v[0], v[1], v[2]) - 1));
      cz += v[2];
      uniformSphere(rng.next(), rng.next(), v);
      sz += v[2];
      sz2 += v[2] * v[2];
      uniformCone(rng.next(), rng.next(), 0.1, v);
      minCone = Math.min(minCone, v[2]);
    }
    expect(worstNorm).toBeLessThan(1e-12);
    expect(minCone).toBeGreaterThanOrEqual(0.9 - 1e-12);
    // E[cosθ] under pdf cosθ/π is ∫cos²θ/π dω = 2/3; Var = 1/2 − 4/9 = 1/18
    expect(Math.abs(cz / n - 2 / 3)).toBeLessThan(4 * Math.sqrt(1 / 18 / n));
    expect(Math.abs(sz / n)).toBeLessThan(4 * Math.sqrt(1 / 3 / n));
    expect(Math.abs(sz2 / n - 1 / 3)).toBeLessThan(4 * Math.sqrt(4 / 45 / n));
  });

  it("orthonormal basis (Duff et al. 2017) is orthonormal for any normal", () => {
    const b = new Float64Array(6);
    for (const [x, y, z] of [[0, 0, 1], [0, 0, -1], [1, 0, 0], [0.3, -0.4, Math.sqrt(1 - 0.25)], [0, -1, 1e-9]]) {
      const l = Math.hypot(x, y, z);
      const n = [x / l, y / l, z / l];
      basisFromNormal(n[0], n[1], n[2], b);
      const t = [b[0], b[1], b[2]];
      const s = [b[3], b[4], b[5]];
      const dot = (a: number[], c: number[]) => a[0] * c[0] + a[1] * c[1] + a[2] * c[2];
      expect(dot(t, t)).toBeCloseTo(1, 12);
      expect(dot(s, s)).toBeCloseTo(1, 12);
      expect(dot(t, s)).toBeCloseTo(0, 12);
      expect(dot(t, n)).toBeCloseTo(0, 12);
      expect(dot(s, n)).toBeCloseTo(0, 12);
    }
  });

  it("power heuristic weights (Veach & Guibas 1995; REFERENCE_CHECKS item 9 table)", () => {
    expect(weightOf(1, 1)).toBeCloseTo(0.5, 12);
    expect(weightOf(2, 0.5)).toBeCloseTo(0.941176, 6);
    expect(weightOf(0.5, 2)).toBeCloseTo(0.058824, 6);
    expect(weightOf(3, 1)).toBeCloseTo(0.9, 12);
    expect(weightOf(10, 0.1)).toBeCloseTo(0.9999, 6);
    for (const [a, b] of [[0.3, 7], [1e-3, 5], [4, 4]]) expect(weightOf(a, b) + weightOf(b, a)).toBeCloseTo(1, 12);
  });
});
