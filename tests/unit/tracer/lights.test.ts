import { describe, expect, it } from "vitest";
import { compiled, renderAll, regionStats } from "./render-helpers";
import { measureIrradiance } from "../../../tracer/render/meter";
import { resolveBeauty, resolveGroup } from "../../../tracer/film/accumulate";
import { encodeHdr } from "../../../tracer/io/rgbe";
import { envPdf, envRadiance, sampleEnv } from "../../../tracer/lights/environment";
import { LightSample, pickLight } from "../../../tracer/lights/lights";
import { LIGHT_STRIDE } from "../../../tracer/compile/types";
import { SampleStream } from "../../../tracer/math/rng";
import type { CompiledScene } from "../../../tracer/compile/types";

/** envRadiance / envPdf take the direction in an array (the path loop's calling convention). */
const radianceFrom = (c: CompiledScene, dx: number, dy: number, dz: number, out: Float64Array): void => envRadiance(c, new Float64Array([dx, dy, dz]), out);
const pdfToward = (c: CompiledScene, dx: number, dy: number, dz: number): number => {
  const q = new Float64Array([dx, dy, dz, 0]);
  envPdf(c, q);
  return q[3];
};

// Configuration (view) factors: a Lambertian emitter of radiance L gives irradiance E = π·L·F and a
// Lambertian receiver of albedo ρ reflects Lo = ρ·L·F (REFERENCE_CHECKS item 5; J. R. Howell, "A Catalog of
// Radiation Heat Transfer Configuration Factors", and Modest, "Radiative Heat Transfer", problem 4.22).

type Light = Record<string, unknown>;

/**
 * A large floor of albedo ρ at y = 0 and a camera looking down at the origin from 45° with a 1° view, so the
 * pixels see ±0.009 m of floor around the origin (the factors below change by < 1e-4 over that), one light.
 */
function floorScene(light: Light, integrator: "path" | "direct" | "whitted", spp: number, albedo = 1) {
  return compiled({
    image: { width: 4, height: 4 },
    camera: { position: [0, 0.5, 0.5], target: [0, 0, 0], fovY: 1 },
    render: { spp, seed: 11, integrator },
    materials: { floor: { type: "diffuse", albedo: [albedo, albedo, albedo] } },
    objects: [{ id: "floor", shape: { type: "rect", center: [0, 0, 0], u: [20, 0, 0], v: [0, 0, -20] }, material: "floor" }],
    lights: [light as never],
  });
}

const ALL = [0, 0, 4, 4] as const;

describe("Lambertian floor under area lights vs configuration factors", () => {
  const disk = (r: number, h: number, extra: Light = {}) => ({
    id: "d",
    type: "area",
    shape: { type: "disk", center: [0, h, 0], normal: [0, -1, 0], radius: r },
    radiance: [1, 1, 1],
    ...extra,
  });

  it.each(["path", "direct", "whitted"] as const)("coaxial disk r = h = 1: Lo = ρLF = 0.5 (%s)", (integ) => {
    // F = r²/(h² + r²) = 0.5 (Modest problem 4.22; Howell catalogue)
    const s = regionStats(renderAll(floorScene(disk(1, 1), integ, 256)), ...ALL);
    expect(Math.abs(s.mean - 0.5)).toBeLessThan(4 * s.se + 2e-4); // 2e-4: the 1° view spans ±0.03 m of floor
  });

  it("disk r = 0.5, h = 3 given by power: radiance = P/(π·A) and F = 0.0270270", () => {
    // REFERENCE_CHECKS item 5a table; power → radiance from the scene format (radiance = power/(π·area))
    const L = 2;
    const power = L * Math.PI * Math.PI * 0.25;
    const light = { id: "d", type: "area", shape: { type: "disk", center: [0, 3, 0], normal: [0, -1, 0], radius: 0.5 }, power };
    const s = regionStats(renderAll(floorScene(light, "path", 512, 0.5)), ...ALL);
    expect(Math.abs(s.mean - 0.5 * L * 0.027027)).toBeLessThan(4 * s.se + 1e-5);
  });

  it("invisible disk (light sampling only) and visible disk (MIS with BSDF sampling) agree, for a glossy receiver too", () => {
    // Veach & Guibas 1995: MIS-combined and single-technique estimators have the same expectation
    const glossy = (visible: boolean) =>
      compiled({
        image: { width: 4, height: 4 },
        camera: { position: [0, 0.5, 3], target: [0, 0, 0], fovY: 1 },
        render: { spp: 1024, seed: visible ? 1 : 2 },
        materials: { floor: { type: "metal", reflectance: [0.9, 0.9, 0.9], roughness: 0.6 } },
        objects: [{ id: "floor", shape: { type: "rect", center: [0, 0, 0], u: [20, 0, 0], v: [0, 0, -20] }, material: "floor" }],
        lights: [{ id: "d", type: "area", shape: { type: "disk", center: [0, 1, -1], normal: [0, -1, 0.3], radius: 0.7 }, radiance: [1, 1, 1], visible }],
      });
    const a = regionStats(renderAll(glossy(true)), ...ALL);
    const b = regionStats(renderAll(glossy(false)), ...ALL);
    expect(a.mean).toBeGreaterThan(0.01);
    expect(Math.abs(a.mean - b.mean)).toBeLessThan(4 * Math.hypot(a.se, b.se));
  });

  it("centred 1×1 rect at c = 1: F = 0.2394565", () => {
    // REFERENCE_CHECKS item 5b (Siegel & Howell element-to-rectangle formula, four quadrants), [D]
    const light = { id: "r", type: "area", shape: { type: "rect", center: [0, 1, 0], u: [0, 0, 1], v: [1, 0, 0] }, radiance: [1, 1, 1] };
    // front normal = normalize(u × v) = z × x = +y would face up; flip to face the floor
    const down = { ...light, shape: { type: "rect", center: [0, 1, 0], u: [1, 0, 0], v: [0, 0, 1] } };
    const s = regionStats(renderAll(floorScene(down, "path", 512)), ...ALL);
    expect(Math.abs(s.mean - 0.2394565)).toBeLessThan(4 * s.se + 2e-4);
    // the same rect facing up lights nothing below it (front face only)
    const up = regionStats(renderAll(floorScene(light, "path", 16)), ...ALL);
    expect(up.mean).toBe(0);
  });

  it("sphere light R = 1 at d = 2 facing the element: F = (R/d)² = 0.25 (solid-angle sampling)", () => {
    // REFERENCE_CHECKS item 5c, Howell catalogue sphere entries
    const light = { id: "s", type: "area", shape: { type: "sphere", center: [0, 2, 0], radius: 1 }, radiance: [1, 1, 1] };
    const s = regionStats(renderAll(floorScene(light, "path", 256)), ...ALL);
    expect(Math.abs(s.mean - 0.25)).toBeLessThan(4 * s.se + 2e-4);
  });

  it("sphere light half below the element's horizon ('level' element, H = 2): F = (1/π)[atan(1/X) − X/H²] = 0.0288344", () => {
    // REFERENCE_CHECKS item 5c; the wall at x = 0 faces +x and the sphere's centre lies in its plane
    const c = compiled({
      image: { width: 4, height: 4 },
      camera: { position: [3, -0.5, 0], target: [0, 0, 0], fovY: 1 },
      render: { spp: 1024, seed: 5 },
      materials: { wall: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [{ id: "wall", shape: { type: "rect", center: [0, 0, 0], u: [0, 20, 0], v: [0, 0, 20] }, material: "wall" }],
      lights: [{ id: "s", type: "area", shape: { type: "sphere", center: [0, 2, 0], radius: 1 }, radiance: [1, 1, 1] }],
    });
    const H = 2;
    const X = Math.sqrt(H * H - 1);
    const F = (Math.atan(1 / X) - X / (H * H)) / Math.PI;
    expect(F).toBeCloseTo(0.0288344, 6);
    const s = regionStats(renderAll(c), ...ALL);
    expect(Math.abs(s.mean - F)).toBeLessThan(4 * s.se + 2e-4);
  });

  it("point light: E = I/d² at normal incidence, so Lo = ρI/(πd²) (inverse-square law)", () => {
    const light = { id: "p", type: "point", position: [0, 1, 0], intensity: [Math.PI, Math.PI, Math.PI] };
    const s = regionStats(renderAll(floorScene(light, "path", 16, 0.5)), ...ALL);
    expect(s.mean).toBeCloseTo(0.5, 3); // cos θ and d² vary by < 1e-4 over the pixels' footprint
  });
});

describe("light meter (measureIrradiance)", () => {
  it("reads E = πLF = π/2 under the coaxial disk r = h = 1, within 4 standard errors", () => {
    const c = floorScene({ id: "d", type: "area", shape: { type: "disk", center: [0, 1, 0], normal: [0, -1, 0], radius: 1 }, radiance: [1, 1, 1] }, "path", 1, 0.3);
    const m = measureIrradiance(c, 2, 2, 4000, 9);
    expect(m.hit).toBe(true);
    expect(m.normal[1]).toBeCloseTo(1, 9);
    expect(Math.abs(m.position[0]) + Math.abs(m.position[2])).toBeLessThan(0.05);
    for (let k = 0; k < 3; k++) expect(Math.abs(m.irradiance[k] - Math.PI / 2)).toBeLessThan(4 * m.stdError[k] + 2e-3);
    expect(m.stdError[0]).toBeGreaterThan(0);
    // the receiver's own albedo does not matter: the meter measures arriving light
  });
  it("reads I/d² from a point light exactly and reports no hit when the pixel sees nothing", () => {
    const c = floorScene({ id: "p", type: "point", position: [0, 2, 0], intensity: [4, 8, 12] }, "path", 1);
    const m = measureIrradiance(c, 2, 2, 16, 1);
    const d2 = 4 + m.position[0] ** 2 + m.position[2] ** 2;
    const cos = 2 / Math.sqrt(d2);
    expect(m.irradiance[0]).toBeCloseTo((4 * cos) / d2, 6);
    expect(m.irradiance[2]).toBeCloseTo((12 * cos) / d2, 6);
    const sky = compiled({
      image: { width: 2, height: 2 },
      camera: { position: [0, 1, 0], target: [0, 2, 0], up: [0, 0, 1], fovY: 30 },
      render: { spp: 1 },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [],
    });
    expect(measureIrradiance(sky, 0, 0, 4, 1).hit).toBe(false);
  });
});

describe("light groups", () => {
  it("one buffer per group, the environment as its own group, and beauty = sum of groups", () => {
    const c = compiled({
      image: { width: 8, height: 8 },
      camera: { position: [0, 2, 4], target: [0, 0, 0], fovY: 40 },
      render: { spp: 8, seed: 2 },
      environment: { type: "sky", zenith: [0.1, 0.2, 0.4], horizon: [0.3, 0.3, 0.3], ground: [0.05, 0.05, 0.05] },
      materials: { floor: { type: "diffuse", albedo: [0.5, 0.5, 0.5] } },
      objects: [{ id: "floor", shape: { type: "rect", center: [0, 0, 0], u: [4, 0, 0], v: [0, 0, -4] }, material: "floor" }],
      lights: [
        { id: "a", type: "point", position: [1, 1, 0], intensity: [1, 0, 0], group: "warm" },
        { id: "b", type: "point", position: [-1, 1, 0], intensity: [0, 0, 1], group: "cool" },
      ],
    });
    expect(c.groupNames).toEqual(["warm", "cool", "environment"]);
    const acc = renderAll(c);
    const beauty = resolveBeauty(acc);
    const groups = [0, 1, 2].map((g) => resolveGroup(acc, g));
    // the warm light is pure red, so its buffer has no blue; the cool one no red
    let warmBlue = 0;
    let coolRed = 0;
    let envTotal = 0;
    for (let i = 0; i < beauty.data.length; i++) {
      const sum = groups[0].data[i] + groups[1].data[i] + groups[2].data[i];
      expect(Math.abs(beauty.data[i] - sum)).toBeLessThanOrEqual(1e-6 * Math.max(1, beauty.data[i]));
      if (i % 3 === 2) warmBlue += groups[0].data[i];
      if (i % 3 === 0) coolRed += groups[1].data[i];
      envTotal += groups[2].data[i];
    }
    expect(warmBlue).toBe(0);
    expect(coolRed).toBe(0);
    expect(envTotal).toBeGreaterThan(0);
  });
});

describe("equirectangular environment map", () => {
  // a small map with a bright patch: checks orientation, importance sampling and the pdf together
  const W = 32;
  const H = 16;
  const data = new Float32Array(W * H * 3);
  for (let r = 0; r < H; r++) {
    for (let col = 0; col < W; col++) {
      const i = (r * W + col) * 3;
      const bright = r >= 3 && r < 6 && col >= 10 && col < 14;
      data[i] = bright ? 40 : 0.2 + 0.02 * col;
      data[i + 1] = bright ? 30 : 0.3;
      data[i + 2] = bright ? 20 : 0.1 + 0.03 * r;
    }
  }
  const bytes = encodeHdr({ width: W, height: H, data });
  const assets = new Map([["maps/test.hdr", bytes]]);
  const mapScene = (rotationY: number, spp: number) =>
    compiled(
      {
        image: { width: 4, height: 4 },
        camera: { position: [0, 0.5, 0.5], target: [0, 0, 0], fovY: 1 },
        render: { spp, seed: 4 },
        environment: { type: "map", asset: "maps/test.hdr", scale: 0.5, rotationY },
        materials: { floor: { type: "diffuse", albedo: [1, 1, 1] } },
        objects: [{ id: "floor", shape: { type: "disk", center: [0, 0, 0], normal: [0, 1, 0], radius: 1 }, material: "floor" }],
      },
      assets,
    );

  it("the pdf integrates to 1 over the sphere and matches the sampled directions", () => {
    const c = mapScene(30, 1);
    // ∫ pdf dω by a fine θ–φ grid
    let sum = 0;
    const nT = 400;
    const nP = 800;
    for (let i = 0; i < nT; i++) {
      const th = ((i + 0.5) / nT) * Math.PI;
      for (let j = 0; j < nP; j++) {
        const ph = ((j + 0.5) / nP) * 2 * Math.PI;
        sum += pdfToward(c, Math.sin(th) * Math.cos(ph), Math.cos(th), Math.sin(th) * Math.sin(ph)) * Math.sin(th);
      }
    }
    expect(sum * (Math.PI / nT) * ((2 * Math.PI) / nP)).toBeCloseTo(1, 2);
    const ls = new LightSample();
    const rgb = new Float64Array(3);
    const rng = new SampleStream();
    for (let k = 0; k < 500; k++) {
      rng.start(1, k, 0);
      ls.u[1] = rng.next();
      ls.u[2] = rng.next();
      expect(sampleEnv(c, ls)).toBe(true);
      expect(ls.pdf / pdfToward(c, ls.wx, ls.wy, ls.wz)).toBeCloseTo(1, 4);
      radianceFrom(c, ls.wx, ls.wy, ls.wz, rgb);
      expect(rgb[0]).toBeCloseTo(ls.r, 5);
    }
  });

  it("a white Lambertian point reads (1/π)∫L cosθ dω computed directly from the map's pixels", () => {
    for (const rot of [0, 90]) {
      const c = mapScene(rot, 1024);
      // quadrature over the upper hemisphere using the same radiance lookup
      const rgb = new Float64Array(3);
      let E = 0;
      const nT = 300;
      const nP = 600;
      for (let i = 0; i < nT; i++) {
        const th = ((i + 0.5) / nT) * (Math.PI / 2);
        for (let j = 0; j < nP; j++) {
          const ph = ((j + 0.5) / nP) * 2 * Math.PI;
          radianceFrom(c, Math.sin(th) * Math.cos(ph), Math.cos(th), Math.sin(th) * Math.sin(ph), rgb);
          E += (0.2126 * rgb[0] + 0.7152 * rgb[1] + 0.0722 * rgb[2]) * Math.cos(th) * Math.sin(th);
        }
      }
      E *= (Math.PI / 2 / nT) * ((2 * Math.PI) / nP);
      const s = regionStats(renderAll(c), 0, 0, 4, 4);
      expect(Math.abs(s.mean - E / Math.PI)).toBeLessThan(4 * s.se + 2e-3 * (E / Math.PI));
    }
  });

  it("orientation: row 0 is straight up and the map's horizontal centre looks along −Z", () => {
    const c = mapScene(0, 1);
    const rgb = new Float64Array(3);
    radianceFrom(c, 0, 1, 0, rgb);
    expect(rgb[1]).toBeCloseTo(0.3 * 0.5, 2); // top row: not the bright patch (RGBE keeps ~1% precision)
    // centre of the bright patch: rows 3..5 → θ ≈ 4.5/16·π, columns 10..13 → u ≈ 12/32, φ = 2πu − π
    const th = (4.5 / 16) * Math.PI;
    const ph = (12 / 32) * 2 * Math.PI - Math.PI;
    radianceFrom(c, Math.sin(th) * Math.sin(ph), Math.cos(th), -Math.sin(th) * Math.cos(ph), rgb);
    expect(rgb[0]).toBeCloseTo(20, 6);
    // rotating the map by +90° about +Y carries that direction along
    const r = mapScene(90, 1);
    const dx = Math.sin(th) * Math.sin(ph);
    const dz = -Math.sin(th) * Math.cos(ph);
    const a = Math.PI / 2;
    radianceFrom(r, Math.cos(a) * dx + Math.sin(a) * dz, Math.cos(th), -Math.sin(a) * dx + Math.cos(a) * dz, rgb);
    expect(rgb[0]).toBeCloseTo(20, 6);
  });
});

describe("choosing a light for next-event estimation", () => {
  it("picks each light with its stored probability (power-weighted with a uniform share), the environment with the rest", () => {
    const lights = Array.from({ length: 40 }, (_, i) => ({ id: `p${i}`, type: "point", position: [i, 3, 0], intensity: [i + 1, i + 1, i + 1] }));
    const c = compiled({
      image: { width: 1, height: 1 },
      camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30 },
      render: { spp: 1 },
      environment: { type: "uniform", radiance: [0.1, 0.1, 0.1] },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [],
      lights: lights as never,
    });
    const probs = Array.from({ length: 40 }, (_, i) => c.lights[i * LIGHT_STRIDE + 20]);
    expect(probs.reduce((a, b) => a + b, 0) + c.envPick).toBeCloseTo(1, 12);
    // brighter lights are chosen more often
    expect(probs[39]).toBeGreaterThan(probs[0]);
    const counts = new Array(41).fill(0);
    const pick = new LightSample();
    const n = 200000;
    for (let i = 0; i < n; i++) {
      pick.u[0] = (i + 0.5) / n;
      const k = pickLight(c, pick);
      counts[k === -2 ? 40 : k]++;
    }
    // stratified u: each count is within 1 of n·p
    for (let i = 0; i < 40; i++) expect(Math.abs(counts[i] - n * probs[i])).toBeLessThanOrEqual(1);
    expect(Math.abs(counts[40] - n * c.envPick)).toBeLessThanOrEqual(1);
  });
});
