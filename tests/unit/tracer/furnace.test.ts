import { describe, expect, it } from "vitest";
import { compiled, renderAll, regionStats } from "./render-helpers";

// White-furnace test (REFERENCE_CHECKS item 6): a convex object that reflects all light, inside a uniform
// environment of radiance L, becomes indistinguishable from the environment: every pixel on it reads L.
// Sources: the "white furnace test" (lousodrome.net blog "Light is beautiful"); Kulla & Conty, "Revisiting
// Physically Based Shading at Imageworks", SIGGRAPH 2017 course. For a convex Lambertian object of albedo ρ
// the rendering equation gives Lo = ρ·L (one bounce; Kajiya 1986).

function furnace(material: object, integrator: "path" | "whitted" | "direct", L: number, spp: number, maxDepth = 64) {
  return compiled({
    image: { width: 12, height: 12 },
    // sphere of radius 1 seen from 4 m with a 20° view: its disk covers the central pixels
    camera: { position: [0, 0, 4], target: [0, 0, 0], fovY: 20 },
    render: { spp, seed: 7, integrator, maxDepth },
    environment: { type: "uniform", radiance: [L, L, L] },
    materials: { m: material as never },
    objects: [{ id: "ball", shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "m" }],
  });
}

// Central 4×4 pixels: the sphere's silhouette (radius ≈ 0.258 of the half-height... ~ 3.6 px from the centre) contains them entirely.
const R = [4, 4, 8, 8] as const;

describe("white furnace", () => {
  it.each(["path", "whitted", "direct"] as const)("diffuse albedo 1 in L = 1 reads 1 (%s integrator)", (integrator) => {
    const acc = renderAll(furnace({ type: "diffuse", albedo: [1, 1, 1] }, integrator, 1, 64));
    const s = regionStats(acc, ...R);
    expect(Math.abs(s.mean - 1)).toBeLessThan(4 * s.se + 1e-4); // Lo = ρL, k = 4 standard errors
  });

  it("diffuse albedo 0.18 in L = 2 reads 0.36 (Lo = ρ·L)", () => {
    const acc = renderAll(furnace({ type: "diffuse", albedo: [0.18, 0.18, 0.18] }, "path", 2, 64));
    const s = regionStats(acc, ...R);
    expect(Math.abs(s.mean - 0.36)).toBeLessThan(4 * s.se + 1e-4);
  });

  it("perfect mirror (reflectance 1) reads L exactly", () => {
    const acc = renderAll(furnace({ type: "metal", reflectance: [1, 1, 1], roughness: 0 }, "path", 1, 4));
    const s = regionStats(acc, ...R);
    expect(Math.abs(s.mean - 1)).toBeLessThan(1e-3); // F = 1 at every angle: Schlick with R0 = 1
  });

  it("smooth non-absorbing glass sphere reads L (the (n_t/n_i)² factors cancel on exit; Russian roulette is unbiased)", () => {
    const acc = renderAll(furnace({ type: "glass", ior: 1.5 }, "path", 1, 128));
    const s = regionStats(acc, ...R);
    expect(Math.abs(s.mean - 1)).toBeLessThan(4 * s.se + 1e-3);
  });

  it("rough glass (roughness 0.3) stays close to L (single-scattering GGX loses a little energy, never gains)", () => {
    const acc = renderAll(furnace({ type: "glass", ior: 1.5, roughness: 0.3 }, "path", 1, 128));
    const s = regionStats(acc, ...R);
    expect(s.mean).toBeLessThan(1 + 4 * s.se);
    expect(s.mean).toBeGreaterThan(0.85);
  });

  it("absorbing glass is darker than clear glass (Beer–Lambert)", () => {
    const clear = regionStats(renderAll(furnace({ type: "glass", ior: 1.5 }, "path", 1, 64)), ...R);
    const dark = regionStats(renderAll(furnace({ type: "glass", ior: 1.5, absorption: [2, 2, 2] }, "path", 1, 64)), ...R);
    expect(dark.mean).toBeLessThan(clear.mean - 10 * (dark.se + clear.se));
  });

  it("GGX conductor with F = 1, α = 0.5 loses energy to missing multiple scattering: centre ≈ E(μo = 1) = 0.6878", () => {
    // REFERENCE_CHECKS item 8 [D]: directional albedo 0.6878 at normal incidence (height-correlated Smith);
    // the centre pixel sees μo > 0.9999 (its footprint is ±0.15 m on a sphere of radius 10)
    const c = compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, 0, 50], target: [0, 0, 0], fovY: 1 },
      render: { spp: 4096, seed: 3, maxDepth: 1 },
      environment: { type: "uniform", radiance: [1, 1, 1] },
      materials: { m: { type: "metal", reflectance: [1, 1, 1], roughness: Math.sqrt(0.5) } },
      objects: [{ id: "ball", shape: { type: "sphere", center: [0, 0, 0], radius: 10 }, material: "m" }],
    });
    const s = regionStats(renderAll(c), 1, 1, 2, 2);
    expect(Math.abs(s.mean - 0.6878)).toBeLessThan(2e-3 + 4 * s.se);
  });

});
