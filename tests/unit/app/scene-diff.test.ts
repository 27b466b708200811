// The diff must read in the scene's own terms: which light, material or object changed and each field
// from → to. Expected lines are written by hand from the two scene documents (common practice: the
// oracle is the pair of inputs, read by a person).
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { diffScenes, formatValue, sceneDiffLines } from "~/lib/scene-diff";
import { kettleScene } from "../../support/a3-fixtures";

const clone = <T,>(v: T): T => JSON.parse(JSON.stringify(v)) as T;

describe("diffScenes on hand-made pairs", () => {
  it("reports no differences for identical scenes, and for a default written out explicitly", () => {
    const a = kettleScene();
    expect(diffScenes(a, clone(a)).identical).toBe(true);
    const b = clone(a) as Record<string, unknown> & { render: Record<string, unknown> };
    b.render.maxDepth = 8; // the documented default
    const d = diffScenes(a, b);
    expect(d.normalized).toBe(true);
    expect(d.identical).toBe(true);
    expect(d.summary).toBe("No differences");
  });

  it("names a light's radiance and a material's roughness from → to", () => {
    const a = kettleScene();
    const b = kettleScene({ radiance: [8, 7.5, 7], roughness: 0.35 });
    const lines = sceneDiffLines(diffScenes(a, b));
    expect(lines).toEqual(['material "glaze": roughness 0.2 → 0.35', 'light "key": radiance [5, 5, 5] → [8, 7.5, 7]']);
  });

  it("reports objects added, removed and moved by id, not by position", () => {
    const a = kettleScene();
    const b = clone(a);
    b.objects = [
      b.objects[1]!,
      { id: "carafe", shape: { type: "sphere", center: [0.8, 0.3, 0], radius: 0.3 }, material: "glaze" },
    ];
    const d = diffScenes(a, b);
    const lines = sceneDiffLines(d);
    expect(lines).toContain('object "carafe": added: sphere, material "glaze"');
    expect(lines.some((l) => l.startsWith('object "kettle": removed (was sphere, material "glaze")'))).toBe(true);
    // "card" keeps its content; it only changed position in the list.
    expect(lines.filter((l) => l.startsWith('object "card"')).every((l) => l.includes("moved"))).toBe(true);
    expect(d.summary).toContain("1 object added");
    expect(d.summary).toContain("1 object removed");
  });

  it("names nested shape fields and the camera", () => {
    const a = kettleScene();
    const b = clone(a);
    (b.objects[0]!.shape as { radius: number }).radius = 0.45;
    b.camera.fovY = 35;
    const lines = sceneDiffLines(diffScenes(a, b));
    expect(lines).toEqual(["camera: fovY 40 → 35", 'object "kettle": shape.radius 0.5 → 0.45']);
  });

  it("describes an environment appearing and changing type", () => {
    const a = kettleScene();
    const b = { ...clone(a), environment: { type: "uniform", radiance: [0.1, 0.1, 0.1] } };
    expect(sceneDiffLines(diffScenes(a, b))).toEqual(["environment: added: uniform, radiance [0.1, 0.1, 0.1]"]);
    const c = { ...clone(a), environment: { type: "sky", zenith: [0.2, 0.3, 0.6], horizon: [0.6, 0.6, 0.6], ground: [0.1, 0.1, 0.1] } };
    const lines = sceneDiffLines(diffScenes(b, c));
    expect(lines).toContain("environment: type \"uniform\" → \"sky\"");
    expect(lines).toContain("environment: zenith set to [0.2, 0.3, 0.6]");
    expect(lines).toContain("environment: radiance removed (was [0.1, 0.1, 0.1])");
  });

  it("falls back to the JSON as written when a side is invalid, and accepts JSON text", () => {
    const a = kettleScene();
    const b = clone(a) as Record<string, unknown>;
    b.render = { spp: -1 };
    const d = diffScenes(JSON.stringify(a), b);
    expect(d.normalized).toBe(false);
    expect(sceneDiffLines(d)).toContain("render: spp 4 → -1");
    expect(sceneDiffLines(d)).toContain("render: seed removed (was 7)");
  });

  it("formats values compactly", () => {
    expect(formatValue(0.1 + 0.2)).toBe("0.3");
    expect(formatValue([1, 0.5, 0])).toBe("[1, 0.5, 0]");
    expect(formatValue("x".repeat(80))).toMatch(/…"$/);
  });
});

// Real pairs from the repository's example scenes: each edited the way a lighting artist would.
const scenesDir = join(process.cwd(), "scenes");
const sceneFiles = (() => {
  try {
    return readdirSync(scenesDir).filter((f) => f.endsWith(".json"));
  } catch {
    return [];
  }
})();

describe.skipIf(sceneFiles.length === 0)("diffScenes on the example scenes", () => {
  const load = (f: string) => JSON.parse(readFileSync(join(scenesDir, f), "utf8")) as Record<string, unknown>;

  it("finds no difference between a scene and itself, and differences between every two distinct scenes", () => {
    for (const f of sceneFiles) expect(diffScenes(load(f), load(f)).identical).toBe(true);
    for (let i = 1; i < sceneFiles.length; i++) {
      const d = diffScenes(load(sceneFiles[i - 1]!), load(sceneFiles[i]!));
      expect(d.identical).toBe(false);
      expect(sceneDiffLines(d).length).toBeGreaterThan(0);
      expect(sceneDiffLines(d).every((l) => /^(scene|image|camera|render|display|environment|material "|object "|light ")/.test(l))).toBe(true);
    }
  });

  it("reports a scaled first light and a changed first material of each example by name", () => {
    for (const f of sceneFiles) {
      const a = load(f);
      const b = clone(a) as { lights?: Record<string, unknown>[]; materials: Record<string, Record<string, unknown>> };
      const light = b.lights?.[0];
      const expected: string[] = [];
      if (light && Array.isArray(light.radiance)) {
        const before = light.radiance as number[];
        light.radiance = before.map((x) => x * 2);
        expected.push(`light "${String(light.id)}": radiance ${formatValue(before)} → ${formatValue(before.map((x) => x * 2))}`);
      }
      const [matId, mat] = Object.entries(b.materials)[0]!;
      if (mat.type === "diffuse") {
        mat.albedo = [0.25, 0.5, 0.75];
        expect(sceneDiffLines(diffScenes(a, b))).toContain(`material "${matId}": albedo ${formatValue((a.materials as Record<string, Record<string, unknown>>)[matId]!.albedo)} → [0.25, 0.5, 0.75]`);
      }
      const lines = sceneDiffLines(diffScenes(a, b));
      for (const e of expected) expect(lines).toContain(e);
    }
  });
});

describe("diffScenes when a whole collection is replaced", () => {
  it("names each light removed when the list is emptied, and each added when filled", () => {
    const a = kettleScene();
    const b = { ...clone(a), lights: [] };
    expect(sceneDiffLines(diffScenes(a, b))).toEqual(['light "key": removed (was area rect, radiance [5, 5, 5])']);
    expect(sceneDiffLines(diffScenes(b, a))).toEqual(['light "key": added: area rect, radiance [5, 5, 5]']);
  });
});
