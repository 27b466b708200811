import { readFileSync } from "node:fs";
import { describe, expect, it } from "vitest";
import { buildSceneJsonSchema, sceneJsonSchemaText } from "../../../tracer/scene/json-schema";

type Json = Record<string, unknown>;
const committedPath = new URL("../../../tracer/scene/scene.schema.json", import.meta.url);

describe("scene.schema.json", () => {
  it("is current: regenerate with `npm run schema:scene` after changing tracer/scene/schema.ts", () => {
    expect(readFileSync(committedPath, "utf8")).toBe(sceneJsonSchemaText());
  });

  it("is a draft 2020-12 schema of the input form, strict at every object", () => {
    const s = buildSceneJsonSchema();
    expect(s.$schema).toBe("https://json-schema.org/draft/2020-12/schema");
    expect(s.required).toEqual(["format", "name", "image", "camera", "render", "materials", "objects"]);
    const strictEverywhere = (node: unknown, path: string): void => {
      if (!node || typeof node !== "object") return;
      const n = node as Json;
      if (n.type === "object" && n.properties) expect(n.additionalProperties, path).toBe(false);
      for (const [k, v] of Object.entries(n)) strictEverywhere(v, `${path}/${k}`);
    };
    strictEverywhere(s, "#");
  });

  it("carries descriptions and defaults for editor hover help", () => {
    const s = buildSceneJsonSchema() as { properties: Record<string, Json> };
    const camera = s.properties.camera as { properties: Record<string, Json> };
    expect(camera.properties.fovY!.description).toMatch(/vertical field of view/);
    expect(camera.properties.up!.default).toEqual([0, 1, 0]);
    const render = s.properties.render as { properties: Record<string, Json> };
    expect(render.properties.integrator).toMatchObject({ default: "path", enum: ["path", "whitted", "direct"] });
    expect(render.properties.spp).toMatchObject({ minimum: 1, maximum: 65536 });
    // every property somewhere in the tree has a description
    const missing: string[] = [];
    const walk = (node: unknown, path: string): void => {
      if (!node || typeof node !== "object") return;
      const n = node as Json;
      if (n.properties && typeof n.properties === "object") {
        for (const [k, v] of Object.entries(n.properties as Record<string, Json>)) {
          if (k !== "type" && typeof v.description !== "string") missing.push(`${path}.${k}`);
        }
      }
      for (const [k, v] of Object.entries(n)) walk(v, `${path}/${k}`);
    };
    walk(s, "#");
    expect(missing).toEqual([]);
  });
});
