import { readFileSync, readdirSync } from "node:fs";
import path from "node:path";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { validateScene, formatIssue } from "../../../tracer/scene/validate";
import type { Scene } from "../../../tracer/scene/schema";
import { SHAPE_TYPES, MATERIAL_TYPES, INTEGRATORS, TONE_MAPS } from "../../../tracer/scene/schema";
import { checkSceneAssets } from "../../../tracer/scene/assets";
import { loadSceneAssetsFromDisk } from "../../../tracer/io/files.node.js";
import { compileScene } from "../../../tracer/compile/compile";
import { renderUnit } from "../../../tracer/render/unit";
import { accumulationHash, addUnit, createAccumulation, resolveBeauty, resolveGroup } from "../../../tracer/film/accumulate";
import { GENERATED_ASSETS } from "../../../scenes/generate-assets";

const scenesDir = fileURLToPath(new URL("../../../scenes/", import.meta.url));
const files = readdirSync(scenesDir).filter((f) => f.endsWith(".json")).sort();

function load(file: string): Scene {
  const r = validateScene(readFileSync(path.join(scenesDir, file), "utf8"));
  if (!r.ok) throw new Error(`${file}:\n${r.issues.map(formatIssue).join("\n")}`);
  return r.scene;
}

describe("example scenes", () => {
  it("has at least six scenes", () => {
    expect(files.length).toBeGreaterThanOrEqual(6);
  });

  it.each(files)("%s validates and its assets load and parse", async (file) => {
    const scene = load(file);
    const assets = await loadSceneAssetsFromDisk(scene, scenesDir);
    expect(checkSceneAssets(scene, assets)).toEqual([]);
  });

  it("together use every shape, material, light, environment, integrator and tone map", () => {
    const scenes = files.map(load);
    const used = new Set<string>();
    for (const s of scenes) {
      used.add(`integrator:${s.render.integrator}`);
      used.add(`toneMap:${s.display.toneMap}`);
      used.add(`environment:${s.environment?.type ?? "none"}`);
      if (s.camera.aperture > 0) used.add("camera:thin-lens");
      if (s.camera.shutter[1] > s.camera.shutter[0]) used.add("camera:shutter");
      if (s.render.clamp > 0) used.add("render:clamp");
      for (const o of s.objects) {
        used.add(`shape:${o.shape.type}`);
        if (o.motion) used.add("object:motion");
      }
      for (const m of Object.values(s.materials)) {
        used.add(`material:${m.type}`);
        if (m.type === "metal") used.add(m.roughness === 0 ? "metal:mirror" : "metal:ggx");
        if (m.type === "glass") {
          used.add(m.roughness === 0 ? "glass:smooth" : "glass:rough");
          if (m.absorption.some((a) => a > 0)) used.add("glass:absorption");
        }
      }
      for (const l of s.lights) {
        if (l.type === "point") used.add("light:point");
        else {
          used.add(`light:area-${l.shape.type}`);
          used.add(l.power !== undefined ? "light:power" : "light:radiance");
          if (!l.visible) used.add("light:invisible");
        }
        used.add(l.group === "default" ? "group:default" : "group:named");
      }
    }
    const required = [
      ...INTEGRATORS.map((i) => `integrator:${i}`),
      ...TONE_MAPS.map((t) => `toneMap:${t}`),
      ...["uniform", "sky", "map", "none"].map((e) => `environment:${e}`),
      ...SHAPE_TYPES.map((t) => `shape:${t}`),
      ...MATERIAL_TYPES.map((t) => `material:${t}`),
      "metal:mirror", "metal:ggx", "glass:smooth", "glass:rough", "glass:absorption",
      "light:point", "light:area-rect", "light:area-disk", "light:area-sphere", "light:power", "light:radiance", "light:invisible",
      "group:named", "camera:thin-lens", "camera:shutter", "object:motion", "render:clamp",
    ];
    expect(required.filter((r) => !used.has(r))).toEqual([]);
  });

  it("committed generated assets are current (scenes/generate-assets.ts)", () => {
    for (const a of GENERATED_ASSETS) {
      const onDisk = new Uint8Array(readFileSync(path.join(scenesDir, a.path)));
      expect(onDisk, a.path).toEqual(a.bytes());
    }
  });

  it.each(files)("%s renders at very low resolution and spp: finite, non-negative, lit, beauty = sum of groups", async (file) => {
    const scene = load(file);
    const assets = await loadSceneAssetsFromDisk(scene, scenesDir);
    // keep the aspect ratio, shrink to about 48 pixels wide
    const w = 48;
    scene.image = { width: w, height: Math.max(1, Math.round((w * scene.image.height) / scene.image.width)) };
    scene.render.spp = 2;
    const compiled = compileScene(scene, assets);
    const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
    addUnit(acc, renderUnit(compiled, { x0: 0, y0: 0, x1: compiled.width, y1: compiled.height, passStart: 0, passEnd: 2 }));
    const beauty = resolveBeauty(acc);
    let sum = 0;
    for (const v of beauty.data) {
      expect(Number.isFinite(v)).toBe(true);
      expect(v).toBeGreaterThanOrEqual(0);
      sum += v;
    }
    expect(sum / beauty.data.length).toBeGreaterThan(1e-3);
    const groups = compiled.groupNames.map((_, g) => resolveGroup(acc, g));
    for (let i = 0; i < beauty.data.length; i += 97) {
      const s = groups.reduce((t, g) => t + g.data[i]!, 0);
      expect(Math.abs(s - beauty.data[i]!)).toBeLessThanOrEqual(1e-5 * Math.max(1, beauty.data[i]!));
    }
    // the light groups are exactly the scene's named groups (+ the environment when there is one)
    const expected = new Set(scene.lights.map((l) => l.group));
    if (scene.environment) expected.add("environment");
    expect(new Set(compiled.groupNames)).toEqual(expected);
    expect(accumulationHash(acc)).toMatch(/\S/);
  });
});
