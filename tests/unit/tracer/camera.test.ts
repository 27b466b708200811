import { describe, expect, it } from "vitest";
import { compileCamera, generateRay } from "../../../tracer/camera";

/** generateRay's input record: film x, film y, lens u, lens v, shutter u. */
const filmSample = (fx: number, fy: number, u1: number, u2: number, ut: number) => new Float64Array([fx, fy, u1, u2, ut]);
import { Ray } from "../../../tracer/geometry/intersect";
import { CameraSchema } from "../../../tracer/scene/schema";
import { compiled, renderAll, regionStats } from "./render-helpers";

const cam = (extra: Record<string, unknown>) => CameraSchema.parse({ position: [0, 0, 0], target: [0, 0, -1], fovY: 60, ...extra });

describe("pinhole camera", () => {
  it("pixel (0,0) is the top-left; +X of the image is the camera's right; fovY is the full vertical angle", () => {
    const c = compileCamera(cam({}), 200, 100);
    const ray = new Ray();
    const lens = new Float64Array(2);
    generateRay(c, 200, 100, filmSample(0, 0, 0.5, 0.5, 0), lens, ray);
    expect(ray.dx).toBeLessThan(0); // left
    expect(ray.dy).toBeGreaterThan(0); // top
    expect(ray.dz).toBeLessThan(0); // forward is −Z
    // top edge centre: angle to the forward axis is fovY/2 = 30°
    generateRay(c, 200, 100, filmSample(100, 0, 0.5, 0.5, 0), lens, ray);
    expect((Math.atan2(ray.dy, -ray.dz) * 180) / Math.PI).toBeCloseTo(30, 9);
    // right edge centre: horizontal half-angle from tan(h/2) = aspect · tan(fovY/2)
    generateRay(c, 200, 100, filmSample(200, 50, 0.5, 0.5, 0), lens, ray);
    expect(Math.atan2(ray.dx, -ray.dz)).toBeCloseTo(Math.atan(2 * Math.tan(Math.PI / 6)), 9);
    expect(Math.hypot(ray.dx, ray.dy, ray.dz)).toBeCloseTo(1, 12);
  });
  it("shutter time per sample spans [open, close]", () => {
    const c = compileCamera(cam({ shutter: [0.25, 0.75] }), 10, 10);
    const ray = new Ray();
    const lens = new Float64Array(2);
    generateRay(c, 10, 10, filmSample(5, 5, 0.5, 0.5, 0), lens, ray);
    expect(ray.time).toBe(0.25);
    generateRay(c, 10, 10, filmSample(5, 5, 0.5, 0.5, 0.5), lens, ray);
    expect(ray.time).toBe(0.5);
  });
});

describe("thin-lens camera vs the circle-of-confusion formula", () => {
  // Blur-circle diameter on the sensor c = A·|s_o − s_f|/s_o · f/(s_f − f) (D. Jacobson, "Photographic
  // Lenses Tutorial"; REFERENCE_CHECKS item 12): f = 50 mm, N = 2 (A = 25 mm), s_f = 2 m, s_o = 4 m →
  // c = 0.320513 mm. As a fraction of the picture height it is independent of the sensor: in the plane in
  // focus the blur is A·|s_o − s_f|/s_o = 12.5 mm, and the sensor image is that plane scaled by f/(s_f − f).
  const f = 0.05;
  const A = f / 2;
  const sf = 2;
  const so = 4;
  it("a point at 4 m focused at 2 m blurs to the predicted diameter (in pixels), and points at 2 m stay sharp", () => {
    const c = (A * Math.abs(so - sf)) / so * (f / (sf - f));
    expect(c * 1000).toBeCloseTo(0.320513, 6);
    // picture: 100 px tall showing 50 mm of the focus plane → sensor height = 0.05 · f/(s_f − f)
    const H = 100;
    const sensorH = 0.05 * (f / (sf - f));
    const expectedDiameterPx = (c / sensorH) * H;
    expect(expectedDiameterPx).toBeCloseTo(25, 9);
    const fovY = ((2 * Math.atan(0.025 / sf)) * 180) / Math.PI;
    const k = compileCamera(cam({ fovY, aperture: A / 2, focusDistance: sf }), H, H);
    const ray = new Ray();
    const lens = new Float64Array(2);
    // Ray through film x = 50 + r (row centre) and the lens's left edge (concentric map of (0, 0.5) = (−1, 0)):
    // it crosses the axis at distance s_o exactly when r is the blur radius.
    const lateralAtSo = (r: number) => {
      generateRay(k, H, H, filmSample(50 + r, 50, 0, 0.5, 0), lens, ray);
      const t = (so - ray.oz * -1) / -ray.dz; // forward is −Z, eye at the origin
      return ray.ox + t * ray.dx;
    };
    // linear in r: solve lateral(r*) = 0
    const l0 = lateralAtSo(0);
    const l1 = lateralAtSo(20);
    const rStar = (-l0 / (l1 - l0)) * 20;
    // beyond the focus plane the rays have crossed: the left lens edge serves the right side of the disk
    expect(2 * Math.abs(rStar)).toBeCloseTo(expectedDiameterPx, 6);
    // a point in the focus plane: every lens sample through one film position meets at the same point
    const pts: number[] = [];
    for (const [u1, u2] of [[0.1, 0.9], [0.5, 0.5], [0.9, 0.2], [0, 0.5]]) {
      generateRay(k, H, H, filmSample(37.5, 61.25, u1, u2, 0), lens, ray);
      const t = (sf - -ray.oz) / -ray.dz;
      pts.push(ray.ox + t * ray.dx, ray.oy + t * ray.dy);
    }
    for (let i = 2; i < pts.length; i += 2) {
      expect(pts[i]).toBeCloseTo(pts[0], 12);
      expect(pts[i + 1]).toBeCloseTo(pts[1], 12);
    }
  });
});

describe("motion blur", () => {
  it("a black sphere crossing a pixel for half the shutter leaves it at half the background radiance", () => {
    // time-averaged radiance: the sphere (radius 0.5, velocity 2 m per unit time over shutter [0, 1],
    // starting at x = −1) covers the point x = 0 for t ∈ [0.25, 0.75]
    const c = compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, 0, 50], target: [0, 0, 0], fovY: 1.2, shutter: [0, 1] },
      render: { spp: 2048, seed: 8 },
      environment: { type: "uniform", radiance: [1, 1, 1] },
      materials: { black: { type: "diffuse", albedo: [0, 0, 0] } },
      objects: [{ id: "ball", shape: { type: "sphere", center: [-1, 0, 0], radius: 0.5 }, material: "black", motion: { velocity: [2, 0, 0] } }],
    });
    const s = regionStats(renderAll(c), 1, 1, 2, 2);
    // the pixel spans ±0.15 m at 50 m: its coverage stays 1/2 because the crossing is symmetric
    expect(Math.abs(s.mean - 0.5)).toBeLessThan(4 * s.se + 1e-3);
    // without motion the pixel is black or white
    const still = compiled({
      image: { width: 3, height: 3 },
      camera: { position: [0, 0, 50], target: [0, 0, 0], fovY: 1.2 },
      render: { spp: 16, seed: 8 },
      environment: { type: "uniform", radiance: [1, 1, 1] },
      materials: { black: { type: "diffuse", albedo: [0, 0, 0] } },
      objects: [{ id: "ball", shape: { type: "sphere", center: [0, 0, 0], radius: 0.5 }, material: "black" }],
    });
    expect(regionStats(renderAll(still), 1, 1, 2, 2).mean).toBe(0);
  });
});
