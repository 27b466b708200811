import { describe, expect, it } from "vitest";
import { compiled, renderAll, regionStats } from "./render-helpers";
import { resolveBeauty } from "../../../tracer/film/accumulate";
import { fresnelDielectric } from "../../../tracer/materials/fresnel";

describe("Fresnel reflection seen through the renderer", () => {
  // REFERENCE_CHECKS item 1 renderer test: a smooth dielectric half-space that absorbs everything it
  // transmits, under a uniform environment L = 1: the pixel reads R(θi)·L, R from the exact Fresnel
  // equations (Hecht, "Optics"). Air → glass n = 1.5 table values [D].
  const table: [number, number][] = [
    [30, 0.041523],
    [45, 0.05024],
    [60, 0.089187],
    [80, 0.387704],
  ];
  it.each(table)("θi = %d° reads R = %d", (theta, R) => {
    const t = (theta * Math.PI) / 180;
    const c = compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, 5 * Math.cos(t), 5 * Math.sin(t)], target: [0, 0, 0], fovY: 1 },
      render: { spp: 4096, seed: theta },
      environment: { type: "uniform", radiance: [1, 1, 1] },
      materials: { g: { type: "glass", ior: 1.5, absorption: [1e4, 1e4, 1e4] } },
      objects: [{ id: "sea", shape: { type: "box", min: [-50, -50, -50], max: [50, 0, 50] }, material: "g" }],
    });
    const s = regionStats(renderAll(c), 0, 0, 3, 3);
    // the ±0.5° view changes R by at most 2e-4 on average (second order)
    expect(Math.abs(s.mean - R)).toBeLessThan(4 * s.se + 1e-3);
    expect(R).toBeCloseTo(fresnelDielectric(Math.cos(t), 1.5), 6);
  });
  it("water (n = 1.333) at 60°: R from the Fresnel equations", () => {
    const t = Math.PI / 3;
    const c = compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, 5 * Math.cos(t), 5 * Math.sin(t)], target: [0, 0, 0], fovY: 1 },
      render: { spp: 4096, seed: 3, integrator: "whitted" },
      environment: { type: "uniform", radiance: [2, 2, 2] },
      materials: { w: { type: "glass", ior: 1.333, absorption: [1e4, 1e4, 1e4] } },
      objects: [{ id: "pond", shape: { type: "box", min: [-50, -50, -50], max: [50, 0, 50] }, material: "w" }],
    });
    const s = regionStats(renderAll(c), 0, 0, 3, 3);
    expect(Math.abs(s.mean - 2 * fresnelDielectric(Math.cos(t), 1.333))).toBeLessThan(4 * s.se + 2e-3);
  });
});

describe("looking out from inside glass", () => {
  // A camera 1 cm under the top face of a deep, weakly absorbing glass block (n = 1.5) looks up through the
  // face at θ inside the glass, under a uniform sky L = 1. Below the critical angle it sees the sky through
  // the interface: T(θ) from the exact Fresnel equations (Hecht, "Optics"), radiance scaled by (n_i/n_t)² =
  // 2.25 on crossing (REFERENCE_CHECKS item 1, [M] standard radiometry) and Beer–Lambert exp(−σd) for the
  // 1 cm path; the reflected part travels 50 m through the absorber and vanishes. Above the critical angle
  // 41.810315° there is total internal reflection and the pixel is black.
  const view = (thetaDeg: number) => {
    const t = (thetaDeg * Math.PI) / 180;
    const depth = 0.01;
    return compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, -depth, 0], target: [Math.sin(t), -depth + Math.cos(t), 0], fovY: 1 },
      render: { spp: 256, seed: thetaDeg },
      environment: { type: "uniform", radiance: [1, 1, 1] },
      materials: { g: { type: "glass", ior: 1.5, absorption: [1, 1, 1] } },
      objects: [{ id: "block", shape: { type: "box", min: [-50, -50, -50], max: [50, 0, 50] }, material: "g" }],
    });
  };
  it("30° inside: 2.25 · T · exp(−σd) with T = 1 − 0.055190", () => {
    const t = (30 * Math.PI) / 180;
    const expected = 2.25 * (1 - 0.05519) * Math.exp(-0.01 / Math.cos(t));
    expect(1 - fresnelDielectric(-Math.cos(t), 1.5)).toBeCloseTo(1 - 0.05519, 5);
    const s = regionStats(renderAll(view(30)), 0, 0, 3, 3);
    expect(Math.abs(s.mean - expected)).toBeLessThan(4 * s.se + 3e-3);
  });
  it("45° inside is beyond the critical angle: total internal reflection, the sky is not seen", () => {
    const s = regionStats(renderAll(view(45)), 0, 0, 3, 3);
    expect(s.mean).toBeLessThan(1e-6);
  });
});

describe("Monte Carlo error falls as 1/√N", () => {
  // Central limit theorem: the standard error of an N-sample mean is σ/√N, so log RMSE against log N has
  // slope −1/2 (Mitchell, SIGGRAPH 96, for unstratified dimensions; REFERENCE_CHECKS item 7).
  it("RMSE against a high-spp reference: slope −0.5 ± 0.1 over N = 4…256, and the reference's own error is far below the 256-spp error", () => {
    const scene = (spp: number, seed: number) =>
      compiled({
        image: { width: 4, height: 4 },
        camera: { position: [0, 0.5, 0.5], target: [0, 0, 0], fovY: 1 },
        render: { spp, seed, integrator: "direct" },
        materials: { floor: { type: "diffuse", albedo: [1, 1, 1] } },
        objects: [{ id: "floor", shape: { type: "rect", center: [0, 0, 0], u: [20, 0, 0], v: [0, 0, -20] }, material: "floor" }],
        // a small light: noisy enough per sample to measure the rate
        lights: [{ id: "d", type: "area", shape: { type: "disk", center: [0.6, 1, 0], normal: [-0.5, -1, 0], radius: 0.3 }, radiance: [5, 5, 5] }],
      });
    const refAcc = renderAll(scene(16384, 1000));
    const ref = resolveBeauty(refAcc).data;
    const Ns = [4, 16, 64, 256];
    const seeds = 24;
    const rmse = Ns.map((N) => {
      let se = 0;
      let n = 0;
      for (let s = 0; s < seeds; s++) {
        const img = resolveBeauty(renderAll(scene(N, s + 1))).data;
        for (let i = 0; i < img.length; i += 3) {
          se += (img[i] - ref[i]) ** 2;
          n++;
        }
      }
      return Math.sqrt(se / n);
    });
    const xs = Ns.map(Math.log);
    const ys = rmse.map(Math.log);
    const mx = xs.reduce((a, b) => a + b) / xs.length;
    const my = ys.reduce((a, b) => a + b) / ys.length;
    let num = 0;
    let den = 0;
    for (let i = 0; i < xs.length; i++) {
      num += (xs[i] - mx) * (ys[i] - my);
      den += (xs[i] - mx) ** 2;
    }
    expect(Math.abs(num / den + 0.5)).toBeLessThan(0.1);
    // the reference's standard error is small next to the errors being measured
    const r = regionStats(refAcc, 0, 0, 4, 4);
    expect(r.se).toBeLessThan(rmse[3] / 4);
  });
});
