import { describe, expect, it } from "vitest";
import { REFRACT_LENGTH, fresnelDielectric, fresnelDielectricSP, refract, schlick } from "../../../tracer/materials/fresnel";
import { ggxD, ggxG1, ggxG2, ggxSampleNormal } from "../../../tracer/materials/ggx";
import { BsdfScratch, MATERIAL_STRIDE, MAT_DIFFUSE, MAT_GLASS, MAT_METAL, evalBsdf, sampleBsdf } from "../../../tracer/materials/bsdf";

/** sampleBsdf / evalBsdf read wo, wi and the random numbers from the scratch (the path loop's calling convention). */
function sampleFrom(mats: Float64Array, off: number, wox: number, woy: number, woz: number, u1: number, u2: number, u3: number, s: BsdfScratch): boolean {
  s.wo.set([wox, woy, woz]);
  s.u.set([u1, u2, u3]);
  return sampleBsdf(mats, off, s);
}
/** refract through its record: w, n, eta in; transmitted direction into `out`, effective eta returned. */
function refractInto(wx: number, wy: number, wz: number, nx: number, ny: number, nz: number, eta: number, out: Float64Array): number {
  const q = new Float64Array(REFRACT_LENGTH);
  q.set([wx, wy, wz, nx, ny, nz, eta]);
  refract(q);
  out.set(q.subarray(7, 10));
  return q[10];
}
function evalFor(mats: Float64Array, off: number, wox: number, woy: number, woz: number, wix: number, wiy: number, wiz: number, s: BsdfScratch): void {
  s.wo.set([wox, woy, woz]);
  s.wi.set([wix, wiy, wiz]);
  evalBsdf(mats, off, s);
}
import { SampleStream } from "../../../tracer/math/rng";

const deg = (d: number) => (d * Math.PI) / 180;

describe("exact Fresnel reflectance of a smooth dielectric", () => {
  // Air → glass n = 1.5: values derived from the Fresnel equations (Hecht, "Optics", Fresnel equations;
  // REFERENCE_CHECKS.md item 1 table, [D]); abs 1e-6.
  const airGlass: [number, number, number, number][] = [
    // θi, Rs, Rp, R
    [0, 0.04, 0.04, 0.04],
    [30, 0.057796, 0.025249, 0.041523],
    [45, 0.092013, 0.008466, 0.05024],
    [60, 0.176571, 0.001802, 0.089187],
    [80, 0.538595, 0.236814, 0.387704],
    [89, 0.939472, 0.868898, 0.904185],
  ];
  it.each(airGlass)("air→glass at %d°: Rs, Rp, R and T = 1 − R", (theta, rs, rp, r) => {
    const sp = new Float64Array(2);
    fresnelDielectricSP(Math.cos(deg(theta)), 1.5, sp);
    expect(sp[0]).toBeCloseTo(rs, 6); // Fresnel equations, Hecht "Optics"
    expect(sp[1]).toBeCloseTo(rp, 6); // Fresnel equations, Hecht "Optics"
    expect(fresnelDielectric(Math.cos(deg(theta)), 1.5)).toBeCloseTo(r, 6); // R = (Rs + Rp)/2
  });

  it("air→water n = 1.333 at normal incidence is ((n−1)/(n+1))² = 0.0203732", () => {
    // normal-incidence Fresnel reflectance R0 = ((n1 − n2)/(n1 + n2))² (Hecht, "Optics"); REFERENCE_CHECKS item 1 [D]
    expect(fresnelDielectric(1, 1.333)).toBeCloseTo(0.0203732, 6);
    expect(fresnelDielectric(1, 1.333)).toBeCloseTo(((1.333 - 1) / (1.333 + 1)) ** 2, 12);
  });

  it("air→water at several angles equals the closed-form Fresnel equations", () => {
    // Recomputed here from rs = (n1cosθi − n2cosθt)/(n1cosθi + n2cosθt), rp = (n2cosθi − n1cosθt)/(n2cosθi + n1cosθt)
    // (Hecht, "Optics", the Fresnel equations), with sinθt = sinθi/n (Snell)
    const n = 1.333;
    for (const theta of [10, 30, 45, 60, 75, 85]) {
      const ci = Math.cos(deg(theta));
      const st = Math.sin(deg(theta)) / n;
      const ct = Math.sqrt(1 - st * st);
      const rs = ((ci - n * ct) / (ci + n * ct)) ** 2;
      const rp = ((n * ci - ct) / (n * ci + ct)) ** 2;
      expect(fresnelDielectric(ci, n)).toBeCloseTo((rs + rp) / 2, 12);
    }
  });

  it("glass→air from inside: table values, and total internal reflection above the critical angle", () => {
    // REFERENCE_CHECKS item 1, glass → air (n1 = 1.5, n2 = 1) [D]; a direction on the inside is a negative
    // cosine relative to the outward normal.
    const inside: [number, number][] = [
      [20, 0.041729],
      [30, 0.05519],
      [40, 0.245291],
      [41.8, 0.890772],
    ];
    for (const [theta, r] of inside) expect(fresnelDielectric(-Math.cos(deg(theta)), 1.5)).toBeCloseTo(r, 6);
    expect(fresnelDielectric(-Math.cos(deg(45)), 1.5)).toBe(1); // TIR: above θc, R = 1
  });

  it("Brewster's angle: Rp = 0 at tanθB = n2/n1 (IUPAC Gold Book, 'Brewster angle')", () => {
    const sp = new Float64Array(2);
    const thetaB = Math.atan(1.5);
    expect((thetaB * 180) / Math.PI).toBeCloseTo(56.309932, 6); // REFERENCE_CHECKS item 1 [D]
    fresnelDielectricSP(Math.cos(thetaB), 1.5, sp);
    expect(sp[1]).toBeLessThan(1e-15);
    expect(sp[0]).toBeCloseTo(0.147929, 6); // Rs at Brewster, REFERENCE_CHECKS item 1 [D]
    expect(fresnelDielectric(Math.cos(thetaB), 1.5)).toBeCloseTo(0.073964, 6);
    // water: θB = 53.123226° [D]
    fresnelDielectricSP(Math.cos(deg(53.123226)), 1.333, sp);
    expect(sp[1]).toBeLessThan(1e-12);
    // Rp is a minimum (zero) there: slightly off Brewster is larger
    fresnelDielectricSP(Math.cos(deg(50)), 1.333, sp);
    expect(sp[1]).toBeGreaterThan(1e-5);
  });

  it("critical angle: sinθc = n2/n1; R jumps to 1 just past it (glass 41.810315°, water 48.606626°)", () => {
    // critical angle sinθc = n2/n1 for n1 > n2 (REFERENCE_CHECKS item 1, [C] seantran.dev; values [D])
    for (const [n, thetaC] of [
      [1.5, 41.810315],
      [1.333, 48.606626],
    ]) {
      expect((Math.asin(1 / n) * 180) / Math.PI).toBeCloseTo(thetaC, 6);
      expect(fresnelDielectric(-Math.cos(deg(thetaC + 0.001)), n)).toBe(1);
      expect(fresnelDielectric(-Math.cos(deg(thetaC - 0.01)), n)).toBeLessThan(1);
      expect(fresnelDielectric(-Math.cos(deg(thetaC - 0.01)), n)).toBeGreaterThan(0.5);
    }
  });

  it("reciprocity of transmission: 1 − R(θi) = 1 − R(θt) across the interface (Stokes relations)", () => {
    for (const theta of [5, 25, 50, 70, 85]) {
      const ti = deg(theta);
      const tt = Math.asin(Math.sin(ti) / 1.5);
      expect(fresnelDielectric(Math.cos(ti), 1.5)).toBeCloseTo(fresnelDielectric(-Math.cos(tt), 1.5), 12);
    }
  });

  it("hemispherical reflectance 2∫R(μ)μdμ: air→glass 0.091778, glass→air 0.596346", () => {
    // REFERENCE_CHECKS item 1 [D]; (1 − R_int) = (1 − R_ext)/n² is the reciprocity check
    const n = 200000;
    let ext = 0;
    let int = 0;
    for (let i = 0; i < n; i++) {
      const mu = (i + 0.5) / n;
      ext += fresnelDielectric(mu, 1.5) * mu;
      int += fresnelDielectric(-mu, 1.5) * mu;
    }
    ext *= 2 / n;
    int *= 2 / n;
    expect(ext).toBeCloseTo(0.091778, 5);
    expect(int).toBeCloseTo(0.596346, 4);
    expect(1 - int).toBeCloseTo((1 - ext) / 2.25, 5);
  });

  it("Schlick's approximation equals R0 at normal incidence and stays within 0.036 of exact for n = 1.5", () => {
    // Schlick, Computer Graphics Forum 13(3), 1994; max |Schlick − exact| = 0.0357 at ≈85° (REFERENCE_CHECKS item 1 [D])
    expect(schlick(0.04, 1)).toBeCloseTo(0.04, 12);
    expect(schlick(0.04, Math.cos(deg(60)))).toBeCloseTo(0.07, 6);
    let worst = 0;
    for (let t = 0; t < 90; t += 0.1) worst = Math.max(worst, Math.abs(schlick(0.04, Math.cos(deg(t))) - fresnelDielectric(Math.cos(deg(t)), 1.5)));
    expect(worst).toBeGreaterThan(0.035);
    expect(worst).toBeLessThan(0.036);
  });
});

describe("Snell refraction directions", () => {
  // REFERENCE_CHECKS item 2 table: n = (0,1,0), incident d = (sinθi, −cosθi, 0); abs 1e-6 on components.
  // Our refract takes w = −d (pointing away from the surface) and returns the transmitted direction.
  const table: [number, number, number, number, number][] = [
    // n1, n2, θi, tx, ty
    [1, 1.5, 30, 0.333333, -0.942809],
    [1, 1.5, 45, 0.471405, -0.881917],
    [1, 1.5, 60, 0.57735, -0.816497],
    [1, 1.333, 60, 0.649681, -0.760207],
    [1.5, 1, 30, 0.75, -0.661438],
    [1.5, 1, 41, 0.984089, -0.177679],
  ];
  it.each(table)("%d → %d at %d°", (n1, n2, theta, tx, ty) => {
    const out = new Float64Array(3);
    const ti = deg(theta);
    // incident from above (normal side) with n1 above, n2 below: eta = n2/n1 for the normal's side
    const etap = refractInto(-Math.sin(ti), Math.cos(ti), 0, 0, 1, 0, n2 / n1, out);
    expect(etap).toBeCloseTo(n2 / n1, 12);
    expect(out[0]).toBeCloseTo(tx, 6); // Snell: sinθt = (n1/n2) sinθi
    expect(out[1]).toBeCloseTo(ty, 6);
    expect(Math.abs(out[2])).toBe(0);
    expect(Math.hypot(out[0], out[1], out[2])).toBeCloseTo(1, 12);
    // Snell's law n1 sinθi = n2 sinθt directly
    expect(n1 * Math.sin(ti)).toBeCloseTo(n2 * out[0], 12);
  });
  it("1.5 → 1 at 45° is total internal reflection (η²sin²θi = 1.125 > 1)", () => {
    const out = new Float64Array(3);
    expect(refractInto(-Math.sin(deg(45)), Math.cos(deg(45)), 0, 0, 1, 0, 1 / 1.5, out)).toBe(0);
  });
});

describe("GGX microfacet distribution", () => {
  // Walter, Marschner, Li & Torrance, EGSR 2007: ∫ D(m)(m·n) dωm = 1 (REFERENCE_CHECKS item 8, [D] 1.00000000)
  it.each([0.01, 0.1, 0.3, 0.5, 1.0, 2.0])("∫D(m) cosθm dω = 1 for alpha %s (numerical quadrature)", (alpha) => {
    // integrate over θ with the substitution t = tanθ/α mapped to [0,1) so sharp peaks are resolved
    const n = 200000;
    let sum = 0;
    for (let i = 0; i < n; i++) {
      const x = (i + 0.5) / n; // x = s/(1+s), s = tanθ/α
      const s = x / (1 - x);
      const theta = Math.atan(alpha * s);
      const dTheta = (alpha / (1 + alpha * alpha * s * s)) / ((1 - x) * (1 - x)); // dθ/dx
      const c = Math.cos(theta);
      sum += ggxD(c, alpha) * c * Math.sin(theta) * 2 * Math.PI * dTheta;
    }
    expect(sum / n).toBeCloseTo(1, 6);
  });
  it("D(n) = 1/(πα²)", () => {
    // REFERENCE_CHECKS item 8 [D]
    expect(ggxD(1, 0.1)).toBeCloseTo(31.830989, 5);
    expect(ggxD(1, 0.5)).toBeCloseTo(1.27324, 5);
    expect(ggxD(1, 1)).toBeCloseTo(0.31831, 5);
  });
  it("Smith G1 table (Walter et al. 2007)", () => {
    // REFERENCE_CHECKS item 8 [D], abs 1e-6
    const cases: [number, number, number][] = [
      [0.1, 30, 0.999168],
      [0.1, 80, 0.930395],
      [0.5, 60, 0.861002],
      [0.5, 89, 0.067425],
      [1.0, 60, 2 / 3],
      [1.0, 30, 0.928203],
    ];
    for (const [a, t, g] of cases) expect(ggxG1(Math.cos(deg(t)), a)).toBeCloseTo(g, 6);
  });
  it("weak white furnace: G1(o)·∫max(0, o·m) D(m) dωm = cosθo (Heitz, JCGT 3(2), 2014)", () => {
    for (const alpha of [0.1, 0.5, 1]) {
      for (const mu of [0.1, 0.5, 1]) {
        const ox = Math.sqrt(1 - mu * mu);
        const nT = 2000;
        const nP = 256;
        let sum = 0;
        for (let i = 0; i < nT; i++) {
          const x = (i + 0.5) / nT;
          const s = x / (1 - x);
          const theta = Math.atan(alpha * s);
          const dTheta = (alpha / (1 + alpha * alpha * s * s)) / ((1 - x) * (1 - x));
          const c = Math.cos(theta);
          const sn = Math.sin(theta);
          let ring = 0;
          for (let j = 0; j < nP; j++) {
            const phi = ((j + 0.5) / nP) * 2 * Math.PI;
            const om = ox * sn * Math.cos(phi) + mu * c;
            if (om > 0) ring += om;
          }
          sum += ((ggxD(c, alpha) * ring) / nP) * 2 * Math.PI * sn * dTheta;
        }
        expect(ggxG1(mu, alpha) * (sum / nT)).toBeCloseTo(mu, 3);
      }
    }
  });
  it("sampled normals follow D(m)·cosθm: the sample mean of 1/pdf-weighted indicator integrates the cap", () => {
    // P(θm < θ0) = ∫_cap D cos dω = α²... closed form for GGX: 1 − 1/(1 + tan²θ0/α²)  (Walter et al. 2007 sampling rule)
    const alpha = 0.4;
    const theta0 = deg(20);
    const expected = 1 - 1 / (1 + Math.tan(theta0) ** 2 / (alpha * alpha));
    const m = new Float64Array(3);
    const rng = new SampleStream();
    const n = 200000;
    let inside = 0;
    for (let i = 0; i < n; i++) {
      rng.start(7, i, 0);
      ggxSampleNormal(rng.next(), rng.next(), alpha, m);
      if (m[2] > Math.cos(theta0)) inside++;
    }
    const p = inside / n;
    const se = Math.sqrt((expected * (1 - expected)) / n);
    expect(Math.abs(p - expected)).toBeLessThan(4 * se); // binomial standard error, k = 4
  });
});

function estimateAlbedo(mat: number[], woz: number, n: number, seed: number) {
  const mats = new Float64Array(MATERIAL_STRIDE);
  mats.set(mat);
  const s = new BsdfScratch();
  const rng = new SampleStream();
  const wox = Math.sqrt(1 - woz * woz);
  let sum = 0;
  let sum2 = 0;
  for (let i = 0; i < n; i++) {
    rng.start(seed, i, 0);
    const ok = sampleFrom(mats, 0, wox, 0, woz, rng.next(), rng.next(), rng.next(), s);
    const w = ok ? s.r : 0;
    sum += w;
    sum2 += w * w;
  }
  const mean = sum / n;
  return { mean, se: Math.sqrt(Math.max(0, sum2 / n - mean * mean) / n) };
}

describe("BSDF sampling weights integrate to the reflectance", () => {
  it("Lambertian: every weight equals the albedo (cosine sampling has zero variance)", () => {
    const r = estimateAlbedo([MAT_DIFFUSE, 0.6, 0.6, 0.6], 0.7, 1000, 1);
    expect(r.mean).toBeCloseTo(0.6, 12);
    expect(r.se).toBeLessThan(1e-12);
  });
  it("GGX conductor with F = 1, α = 0.5 at normal incidence reflects E(1) = 0.6878 (single scattering, height-correlated Smith)", () => {
    // REFERENCE_CHECKS item 8 [D]: E(μo=1) = 0.6878 for α = 0.5; tolerance abs 2e-3 + 4·SE
    const r = estimateAlbedo([MAT_METAL, 1, 1, 1, 0.5], 1, 400000, 3);
    expect(Math.abs(r.mean - 0.6878)).toBeLessThan(2e-3 + 4 * r.se);
  });
  it("GGX conductor with F = 1, α = 1 at normal incidence reflects 0.3069", () => {
    const r = estimateAlbedo([MAT_METAL, 1, 1, 1, 1], 1, 400000, 4);
    expect(Math.abs(r.mean - 0.3069)).toBeLessThan(2e-3 + 4 * r.se);
  });
  it("smooth glass splits energy as R and T·(1/η²) by Fresnel", () => {
    // radiance crossing an interface scales as T·(n_i/n_t)² (REFERENCE_CHECKS item 1, [M] standard radiometry)
    const mats = new Float64Array(MATERIAL_STRIDE);
    mats.set([MAT_GLASS, 1.5, 0, 0, 0, 0]);
    const s = new BsdfScratch();
    const R = fresnelDielectric(1, 1.5);
    expect(sampleFrom(mats, 0, 0, 0, 1, 0.5, 0.5, R * 0.5, s)).toBe(true);
    expect(s.wz).toBe(1);
    expect(s.pdf).toBeCloseTo(0.04, 12);
    expect(sampleFrom(mats, 0, 0, 0, 1, 0.5, 0.5, 0.9, s)).toBe(true);
    expect(s.wz).toBeCloseTo(-1, 12);
    expect(s.r).toBeCloseTo(1 / 2.25, 12);
    expect(s.pdf).toBeCloseTo(0.96, 12);
  });
  it("rough glass: sampled pdf and weight agree with evalBsdf for the same directions", () => {
    const mats = new Float64Array(MATERIAL_STRIDE);
    mats.set([MAT_GLASS, 1.5, 0.3, 0, 0, 0]);
    const s = new BsdfScratch();
    const e = new BsdfScratch();
    const rng = new SampleStream();
    let checked = 0;
    for (let i = 0; i < 2000; i++) {
      rng.start(11, i, 0);
      const woz = i % 2 === 0 ? 0.8 : -0.6;
      const wox = Math.sqrt(1 - woz * woz);
      if (!sampleFrom(mats, 0, wox, 0, woz, rng.next(), rng.next(), rng.next(), s)) continue;
      evalFor(mats, 0, wox, 0, woz, s.wx, s.wy, s.wz, e);
      expect(e.pdf).toBeGreaterThan(0);
      expect(e.pdf / s.pdf).toBeCloseTo(1, 6);
      expect(e.r / e.pdf / s.r).toBeCloseTo(1, 6);
      checked++;
    }
    expect(checked).toBeGreaterThan(1500);
  });
  it("rough metal: sampled pdf and weight agree with evalBsdf", () => {
    const mats = new Float64Array(MATERIAL_STRIDE);
    mats.set([MAT_METAL, 0.9, 0.6, 0.3, 0.2]);
    const s = new BsdfScratch();
    const e = new BsdfScratch();
    const rng = new SampleStream();
    for (let i = 0; i < 1000; i++) {
      rng.start(12, i, 0);
      if (!sampleFrom(mats, 0, 0.6, 0, 0.8, rng.next(), rng.next(), rng.next(), s)) continue;
      evalFor(mats, 0, 0.6, 0, 0.8, s.wx, s.wy, s.wz, e);
      expect(e.pdf / s.pdf).toBeCloseTo(1, 6);
      expect(e.g / e.pdf / s.g).toBeCloseTo(1, 6);
    }
  });
  it("height-correlated G2 ≤ min(G1(o), G1(i)) and equals G1 at normal incidence", () => {
    expect(ggxG2(1, 0.5, 0.3)).toBeCloseTo(ggxG1(0.5, 0.3), 12);
    expect(ggxG2(0.3, 0.5, 0.3)).toBeLessThanOrEqual(Math.min(ggxG1(0.3, 0.3), ggxG1(0.5, 0.3)));
  });
});
