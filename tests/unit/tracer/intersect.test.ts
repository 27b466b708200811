import { describe, expect, it } from "vitest";
import { Ray as ThreeRay, Sphere as ThreeSphere, Vector3 } from "three";
import { compiled } from "./render-helpers";
import { Hit, Ray, TraceScratch, surfaceAt, traceRay } from "../../../tracer/geometry/intersect";
import { SampleStream } from "../../../tracer/math/rng";

// Cross-check against an independent general-purpose library: three.js `Ray.intersectTriangle` (adapted
// from Eberly's GeometricTools ray–triangle test, not Möller–Trumbore) and `Ray.intersectSphere`
// (npm `three` 0.187.0; REFERENCE_CHECKS item 13).

const rng = new SampleStream();
let counter = 0;
const rand = () => {
  rng.start(2024, counter++, 0);
  return rng.next();
};
/** a coordinate on a 1/1024 grid in [-2, 2], exactly representable in float32 (so edges are exact too) */
const coord = () => Math.round((rand() * 4 - 2) * 1024) / 1024;

describe("ray–triangle hits vs three.js Ray.intersectTriangle on random triangles", () => {
  const T = 300;
  const verts: number[][] = [];
  let obj = "";
  for (let t = 0; t < T; t++) {
    const c = [coord(), coord(), coord()];
    for (let k = 0; k < 3; k++) {
      // small-ish triangles around a random centre so rays see many overlaps and misses
      const v = [c[0] + Math.round((rand() - 0.5) * 1024) / 1024, c[1] + Math.round((rand() - 0.5) * 1024) / 1024, c[2] + Math.round((rand() - 0.5) * 1024) / 1024];
      verts.push(v);
      obj += `v ${v[0]} ${v[1]} ${v[2]}\n`;
    }
    obj += `f ${3 * t + 1} ${3 * t + 2} ${3 * t + 3}\n`;
  }
  const scene = compiled(
    {
      image: { width: 1, height: 1 },
      camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30 },
      render: { spp: 1 },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [{ id: "soup", shape: { type: "mesh", asset: "soup.obj" }, material: "m" }],
    },
    new Map([["soup.obj", new TextEncoder().encode(obj)]]),
  );

  it("closest hit (through the BVH) matches a brute-force three.js search for 3000 random rays", () => {
    expect(scene.primCount).toBe(T);
    const ray = new Ray();
    const hit = new Hit();
    const ts = new TraceScratch();
    const a = new Vector3();
    const b = new Vector3();
    const c = new Vector3();
    const target = new Vector3();
    let hits = 0;
    for (let i = 0; i < 3000; i++) {
      const o = new Vector3(rand() * 8 - 4, rand() * 8 - 4, rand() * 8 - 4);
      // aim near the cloud so most rays hit something
      const aim = new Vector3(rand() * 3 - 1.5, rand() * 3 - 1.5, rand() * 3 - 1.5);
      const d = aim.sub(o).normalize();
      const tr = new ThreeRay(o, d);
      let best = Infinity;
      let bestTri = -1;
      for (let t = 0; t < T; t++) {
        a.fromArray(verts[3 * t]);
        b.fromArray(verts[3 * t + 1]);
        c.fromArray(verts[3 * t + 2]);
        if (tr.intersectTriangle(a, b, c, false, target)) {
          const dist = target.distanceTo(o);
          if (dist < best) {
            best = dist;
            bestTri = t;
          }
        }
      }
      ray.ox = o.x;
      ray.oy = o.y;
      ray.oz = o.z;
      ray.dx = d.x;
      ray.dy = d.y;
      ray.dz = d.z;
      ray.tmax = Infinity;
      ray.time = 0;
      const got = traceRay(scene, ray, hit, ts, false);
      expect(got).toBe(bestTri >= 0);
      if (got) {
        hits++;
        expect(Math.abs(hit.t - best)).toBeLessThan(1e-9 * Math.max(1, best));
        if (hit.prim !== bestTri) {
          // only acceptable when two triangles are hit at the same distance (shared point)
          expect(Math.abs(hit.t - best)).toBeLessThan(1e-12);
        }
        // any-hit agrees that something blocks the ray before tmax = t + ε, and nothing before t − ε
        ray.tmax = best * (1 + 1e-9);
        expect(traceRay(scene, ray, hit, ts, true)).toBe(true);
        ray.tmax = best * (1 - 1e-9);
        expect(traceRay(scene, ray, hit, ts, true)).toBe(false);
      }
    }
    expect(hits).toBeGreaterThan(1000);
  });

  it("Möller–Trumbore published case: hit at t = 11.2195122, point (10.1219512, 6.1219512, 3.9756098)", () => {
    // ray-triangle-intersection README example; t, u, v from REFERENCE_CHECKS item 13 [D]
    const sc = compiled(
      {
        image: { width: 1, height: 1 },
        camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30 },
        render: { spp: 1 },
        materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
        objects: [{ id: "t", shape: { type: "mesh", asset: "t.obj" }, material: "m" }],
      },
      new Map([["t.obj", new TextEncoder().encode("v 5 5 5\nv 10 15 4\nv 15 5 3\nf 1 2 3\n")]]),
    );
    const ray = new Ray();
    const hit = new Hit();
    const l = Math.hypot(0.1, 0.1, 0.8);
    Object.assign(ray, { ox: 9, oy: 5, oz: -5, dx: 0.1 / l, dy: 0.1 / l, dz: 0.8 / l, tmax: Infinity, time: 0 });
    expect(traceRay(sc, ray, hit, new TraceScratch(), false)).toBe(true);
    surfaceAt(sc, ray, hit);
    expect(hit.px).toBeCloseTo(10.121951219512194, 6);
    expect(hit.py).toBeCloseTo(6.121951219512195, 6);
    expect(hit.pz).toBeCloseTo(3.97560975609756, 6);
    expect(hit.t / l).toBeCloseTo(11.2195122, 6); // t in units of the unnormalised direction
    expect(hit.u).toBeCloseTo(0.1121951, 6);
    expect(hit.v).toBeCloseTo(0.4560976, 6);
  });
});

describe("analytic shapes", () => {
  it("spheres match three.js Ray.intersectSphere from outside and inside", () => {
    const sc = compiled({
      image: { width: 1, height: 1 },
      camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30 },
      render: { spp: 1 },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [{ id: "s", shape: { type: "sphere", center: [0.25, -0.5, 0.75], radius: 1.5 }, material: "m" }],
    });
    const sphere = new ThreeSphere(new Vector3(0.25, -0.5, 0.75), 1.5);
    const ray = new Ray();
    const hit = new Hit();
    const ts = new TraceScratch();
    const target = new Vector3();
    for (let i = 0; i < 2000; i++) {
      const o = new Vector3(rand() * 8 - 4, rand() * 8 - 4, rand() * 8 - 4);
      const d = new Vector3(rand() - 0.5, rand() - 0.5, rand() - 0.5).normalize();
      const expected = new ThreeRay(o, d).intersectSphere(sphere, target) ? target.distanceTo(o) : Infinity;
      Object.assign(ray, { ox: o.x, oy: o.y, oz: o.z, dx: d.x, dy: d.y, dz: d.z, tmax: Infinity, time: 0 });
      const got = traceRay(sc, ray, hit, ts, false) ? hit.t : Infinity;
      if (expected === Infinity) expect(got).toBe(Infinity);
      else expect(Math.abs(got - expected)).toBeLessThan(1e-9);
      if (got !== Infinity) {
        surfaceAt(sc, ray, hit);
        // outward unit normal
        const n = new Vector3(hit.px - 0.25, hit.py + 0.5, hit.pz - 0.75).divideScalar(1.5);
        expect(hit.ngx).toBeCloseTo(n.x, 9);
        expect(hit.ngy).toBeCloseTo(n.y, 9);
      }
    }
  });

  it("rects are parallelograms with corners centre ± u/2 ± v/2 and front normal normalize(u × v); disks are round", () => {
    const sc = compiled({
      image: { width: 1, height: 1 },
      camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30 },
      render: { spp: 1 },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [
        { id: "r", shape: { type: "rect", center: [0, 0, 0], u: [2, 0, 0], v: [1, 1, 0] }, material: "m" },
        { id: "d", shape: { type: "disk", center: [3, 0, -3], normal: [0, 0, 2], radius: 0.5 }, material: "m" },
      ],
    });
    const ray = new Ray();
    const hit = new Hit();
    const ts = new TraceScratch();
    const shoot = (x: number, y: number) => {
      Object.assign(ray, { ox: x, oy: y, oz: 5, dx: 0, dy: 0, dz: -1, tmax: Infinity, time: 0 });
      return traceRay(sc, ray, hit, ts, false) ? hit.prim : -1;
    };
    // parallelogram: points p = c + a·u + b·v with |a|, |b| < 1/2
    expect(shoot(0, 0)).toBe(0);
    expect(shoot(1.4, 0.45)).toBe(0); // a = 0.475, b = 0.45
    expect(shoot(-1.4, 0.45)).not.toBe(0); // a = −0.925: outside
    expect(shoot(0.2, 0.6)).not.toBe(0); // b = 0.6: outside
    shoot(0, 0);
    surfaceAt(sc, ray, hit);
    expect(hit.ngz).toBeCloseTo(1, 12); // u × v = (2,0,0) × (1,1,0) = (0,0,2)
    // the disk beside it: round edge
    expect(shoot(3, -0.49)).toBe(1);
    expect(shoot(3.35, -0.35)).toBe(1); // r = 0.495
    expect(shoot(3.36, -0.36)).toBe(-1); // r = 0.509
  });

  it("moving objects are hit where velocity × time puts them; their BVH box covers the whole shutter", () => {
    const sc = compiled({
      image: { width: 1, height: 1 },
      camera: { position: [0, 0, 5], target: [0, 0, 0], fovY: 30, shutter: [0, 1] },
      render: { spp: 1 },
      materials: { m: { type: "diffuse", albedo: [1, 1, 1] } },
      objects: [{ id: "s", shape: { type: "sphere", center: [0, 0, 0], radius: 0.5 }, material: "m", motion: { velocity: [3, 0, 0] } }],
    });
    const ray = new Ray();
    const hit = new Hit();
    const ts = new TraceScratch();
    for (const [time, x, expectHit] of [
      [0, 0, true],
      [0, 3, false],
      [1, 3, true],
      [1, 0, false],
      [0.5, 1.5, true],
    ] as const) {
      Object.assign(ray, { ox: x, oy: 0, oz: 5, dx: 0, dy: 0, dz: -1, tmax: Infinity, time });
      expect(traceRay(sc, ray, hit, ts, false)).toBe(expectHit);
      if (expectHit) {
        expect(hit.t).toBeCloseTo(4.5, 9);
        surfaceAt(sc, ray, hit);
        expect(hit.ngz).toBeCloseTo(1, 9);
      }
    }
  });
});
