import { describe, expect, it } from "vitest";
import { compileScene, transferables, CompileError } from "../../../tracer/compile/compile";
import { renderUnit } from "../../../tracer/render/unit";
import { sceneOf } from "./render-helpers";
import type { SceneInput } from "../../../tracer/scene/schema";

const base: Pick<SceneInput, "image" | "camera" | "render" | "materials"> = {
  image: { width: 8, height: 6 },
  camera: { position: [0, 1, 4], target: [0, 0, 0], fovY: 40 },
  render: { spp: 2 },
  materials: { m: { type: "diffuse", albedo: [0.5, 0.5, 0.5] } },
};

describe("compileScene", () => {
  it("names the field when an asset is missing or malformed, and loses nothing of the message", () => {
    const mesh = sceneOf({ ...base, objects: [{ id: "k", shape: { type: "mesh", asset: "meshes/k.obj" }, material: "m" }] });
    expect(() => compileScene(mesh, new Map())).toThrow(/^objects\[0\]\.shape\.asset: asset "meshes\/k\.obj" was not loaded$/);
    const bad = new Map([["meshes/k.obj", new TextEncoder().encode("v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 9\n")]]);
    try {
      compileScene(mesh, bad);
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(CompileError);
      expect((e as CompileError).path).toBe("objects[0].shape.asset");
      expect((e as Error).message).toMatch(/line 4/);
    }
    const map = sceneOf({ ...base, objects: [], environment: { type: "map", asset: "maps/sky.hdr" } });
    expect(() => compileScene(map, new Map([["maps/sky.hdr", new Uint8Array([1, 2, 3])]]))).toThrow(/^environment\.asset: maps\/sky\.hdr: /);
  });

  it("applies mesh scale → rotate (X, then Y, then Z, degrees) → translate", () => {
    const tri = new TextEncoder().encode("v 1 0 0\nv 0 1 0\nv 0 0 1\nf 1 2 3\n");
    const c = compileScene(
      sceneOf({ ...base, objects: [{ id: "t", shape: { type: "mesh", asset: "t.obj", scale: 2, rotate: [0, 0, 90], translate: [10, 0, 0] }, material: "m" }] }),
      new Map([["t.obj", tri]]),
    );
    // v0 = (1,0,0) → scale (2,0,0) → rotate 90° about Z (2,0,0) → (0,2,0) → translate (10,2,0)
    expect(c.primGeom[0]).toBeCloseTo(10, 5);
    expect(c.primGeom[1]).toBeCloseTo(2, 5);
    expect(c.primGeom[2]).toBeCloseTo(0, 5);
  });

  it("boxes become six outward-facing faces; lights given by power get radiance = power/(π·area)", () => {
    const c = compileScene(
      sceneOf({
        ...base,
        objects: [{ id: "b", shape: { type: "box", min: [0, 0, 0], max: [1, 2, 3] }, material: "m" }],
        lights: [{ id: "l", type: "area", shape: { type: "rect", center: [0, 5, 0], u: [2, 0, 0], v: [0, 0, -1] }, power: [2 * Math.PI, 4 * Math.PI, 0] }],
      }),
    );
    expect(c.primCount).toBe(7);
    // every face's w = (u×v)/|u×v|² points away from the box centre (0.5, 1, 1.5)
    for (let p = 0; p < 6; p++) {
      const g = c.primGeom.subarray(p * 12, p * 12 + 12);
      const mid = [g[0] + g[3] / 2 + g[6] / 2, g[1] + g[4] / 2 + g[7] / 2, g[2] + g[5] / 2 + g[8] / 2];
      const out = (mid[0] - 0.5) * g[9] + (mid[1] - 1) * g[10] + (mid[2] - 1.5) * g[11];
      expect(out).toBeGreaterThan(0);
    }
    // area 2 → radiance = P/(2π)
    expect(c.lights[3]).toBeCloseTo(1, 12);
    expect(c.lights[4]).toBeCloseTo(2, 12);
    expect(c.lights[5]).toBe(0);
  });

  it("is plain data that survives structured cloning, with every buffer listed for transfer", () => {
    const c = compileScene(sceneOf({ ...base, objects: [{ id: "s", shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "m" }], environment: { type: "uniform", radiance: [1, 1, 1] } }));
    const copy = structuredClone(c);
    const u = { x0: 0, y0: 0, x1: 8, y1: 6, passStart: 0, passEnd: 2 };
    expect(Array.from(renderUnit(copy, u).sums)).toEqual(Array.from(renderUnit(c, u).sums));
    const bufs = transferables(c);
    expect(new Set(bufs).size).toBe(bufs.length);
    expect(bufs).toContain(c.bvh.nodes.buffer);
    expect(bufs).toContain(c.primGeom.buffer);
  });

  it("renderUnit rejects a unit outside the image or with an empty pass range, naming the problem", () => {
    const c = compileScene(sceneOf({ ...base, objects: [] }));
    expect(() => renderUnit(c, { x0: 0, y0: 0, x1: 9, y1: 6, passStart: 0, passEnd: 1 })).toThrow(/outside the 8×6 image/);
    expect(() => renderUnit(c, { x0: 0, y0: 0, x1: 8, y1: 6, passStart: 3, passEnd: 3 })).toThrow(/pass range/);
    expect(() => renderUnit(c, { x0: 0.5, y0: 0, x1: 8, y1: 6, passStart: 0, passEnd: 1 })).toThrow(/integers/);
  });
});
