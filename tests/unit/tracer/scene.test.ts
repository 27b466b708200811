import { describe, expect, it } from "vitest";
import { validateScene, formatIssue, type SceneIssue } from "../../../tracer/scene/validate";
import { SceneSchema, type SceneInput } from "../../../tracer/scene/schema";
import { LIMITS } from "../../../tracer/scene/limits";
import { listAssetRefs, uniqueAssetRefs } from "../../../tracer/scene/assets";
import { parseJsonWithPositions, JsonTextError } from "../../../tracer/scene/json-text";

function minimal(): SceneInput {
  return {
    format: "tracewell.scene/1",
    name: "Wren kettle, grey card",
    image: { width: 8, height: 6 },
    camera: { position: [0, 1, 4], target: [0, 0.5, 0], fovY: 40 },
    render: { spp: 4 },
    materials: { glaze: { type: "diffuse", albedo: [0.8, 0.7, 0.6] } },
    objects: [{ id: "kettle", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "glaze" }],
  };
}

function issuesOf(input: unknown): SceneIssue[] {
  const r = validateScene(input);
  if (r.ok) throw new Error("expected the scene to be rejected");
  return r.issues;
}

function messages(input: unknown): string[] {
  return issuesOf(input).map(formatIssue);
}

describe("scene defaults (scene-format.md tables)", () => {
  it("fills every documented default", () => {
    const r = validateScene(minimal());
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const s = r.scene;
    expect(s.camera.up).toEqual([0, 1, 0]);
    expect(s.camera.aperture).toBe(0);
    expect(s.camera.focusDistance).toBeUndefined();
    expect(s.camera.shutter).toEqual([0, 0]);
    expect(s.render).toEqual({ spp: 4, integrator: "path", seed: 1, maxDepth: 8, clamp: 0 });
    expect(s.display).toEqual({ exposure: 0, toneMap: "none" });
    expect(s.environment).toBeUndefined();
    expect(s.lights).toEqual([]);
  });

  it("fills material, mesh and light defaults", () => {
    const input = minimal();
    input.materials = {
      glass: { type: "glass" },
      chrome: { type: "metal", reflectance: [0.9, 0.9, 0.9] },
    };
    input.objects = [
      { id: "kettle", shape: { type: "mesh", asset: "meshes/wren-kettle.obj" }, material: "glass" },
      { id: "ball", shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "chrome" },
    ];
    input.lights = [
      { id: "key", type: "area", shape: { type: "disk", center: [0, 2, 0], normal: [0, -1, 0], radius: 0.3 }, power: 40 },
      { id: "bulb", type: "point", position: [1, 2, 1], intensity: [2, 2, 2] },
    ];
    input.environment = { type: "map", asset: "maps/lightbox.hdr" };
    const r = validateScene(input);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.scene.materials.glass).toEqual({ type: "glass", ior: 1.5, roughness: 0, absorption: [0, 0, 0] });
    expect(r.scene.materials.chrome).toEqual({ type: "metal", reflectance: [0.9, 0.9, 0.9], roughness: 0 });
    const mesh = r.scene.objects[0]!.shape;
    expect(mesh).toEqual({ type: "mesh", asset: "meshes/wren-kettle.obj", translate: [0, 0, 0], rotate: [0, 0, 0], scale: 1 });
    expect(r.scene.lights[0]).toMatchObject({ visible: true, group: "default", power: 40 });
    expect(r.scene.lights[1]).toMatchObject({ group: "default" });
    expect(r.scene.environment).toEqual({ type: "map", asset: "maps/lightbox.hdr", scale: 1, rotationY: 0 });
    expect(listAssetRefs(r.scene)).toEqual([
      { ref: "meshes/wren-kettle.obj", kind: "mesh", path: "objects[0].shape.asset" },
      { ref: "maps/lightbox.hdr", kind: "envmap", path: "environment.asset" },
    ]);
    expect(uniqueAssetRefs(r.scene)).toEqual(["meshes/wren-kettle.obj", "maps/lightbox.hdr"]);
  });

  it("is idempotent: a validated scene validates to itself", () => {
    const r = validateScene(minimal());
    if (!r.ok) throw new Error("unexpected");
    const again = validateScene(JSON.parse(JSON.stringify(r.scene)));
    expect(again).toEqual(r);
  });
});

describe("path-named errors", () => {
  it("names the light's radius path", () => {
    const input = minimal();
    input.lights = [
      { id: "a", type: "point", position: [0, 1, 0], intensity: [1, 1, 1] },
      { id: "b", type: "point", position: [0, 1, 0], intensity: [1, 1, 1] },
      { id: "c", type: "area", shape: { type: "sphere", center: [0, 2, 0], radius: 0 }, radiance: [1, 1, 1] },
    ];
    expect(messages(input)).toEqual(["lights[2].shape.radius: must be > 0"]);
  });

  it("reports every problem, not just the first", () => {
    const input = minimal() as Record<string, unknown>;
    input.image = { width: 0, height: 10.5 };
    input.render = { spp: 4, integrator: "bidirectional", maxDepth: 65 };
    input.colour = "red";
    expect(messages(input)).toEqual([
      "image.width: must be at least 1",
      "image.height: must be an integer, got the number 10.5",
      'render.integrator: must be one of "path", "whitted", "direct"',
      `render.maxDepth: must be at most ${LIMITS.maxDepth}`,
      "colour: unknown field",
    ]);
  });

  it("suggests the field a typo meant", () => {
    const input = minimal() as { camera: Record<string, unknown> };
    delete input.camera.fovY;
    input.camera.fovy = 40;
    expect(messages(input)).toEqual(["camera.fovY: is required", 'camera.fovy: unknown field (did you mean "fovY"?)']);
  });

  it("names unknown shape and material types with the allowed list", () => {
    const input = minimal() as Record<string, unknown>;
    input.objects = [{ id: "k", shape: { type: "cone", radius: 1 }, material: "glaze" }];
    input.materials = { glaze: { type: "plastic" } };
    expect(messages(input)).toEqual([
      'materials.glaze.type: the string "plastic" is not allowed; must be one of "diffuse", "metal", "glass"',
      'objects[0].shape.type: the string "cone" is not allowed; must be one of "sphere", "rect", "disk", "box", "mesh"',
    ]);
  });

  it("rejects non-finite numbers and out-of-range reflectance", () => {
    const input = minimal();
    input.camera.position = [0, Number.NaN, 4];
    input.materials = { glaze: { type: "diffuse", albedo: [0.8, 1.2, 0.5] } };
    expect(messages(input)).toEqual(["camera.position[1]: must be a finite number", "materials.glaze.albedo[1]: must be at most 1"]);
  });

  it("checks geometric sanity per shape", () => {
    const input = minimal();
    input.objects = [
      { id: "a", shape: { type: "box", min: [0, 0, 0], max: [1, 0, 1] }, material: "glaze" },
      { id: "b", shape: { type: "rect", center: [0, 0, 0], u: [1, 0, 0], v: [2, 0, 0] }, material: "glaze" },
      { id: "c", shape: { type: "disk", center: [0, 0, 0], normal: [0, 0, 0], radius: 1 }, material: "glaze" },
    ];
    expect(messages(input)).toEqual([
      "objects[0].shape.max[1]: must be greater than min y (0)",
      "objects[1].shape.v: u and v must be non-zero and not parallel (the rectangle has no area)",
      "objects[2].shape.normal: must be non-zero",
    ]);
  });

  it("checks the camera frame and shutter", () => {
    const a = minimal();
    a.camera = { position: [1, 1, 1], target: [1, 1, 1], fovY: 40 };
    expect(messages(a)).toEqual(["camera.target: must differ from camera.position"]);
    const b = minimal();
    b.camera = { position: [0, 5, 0], target: [0, 0, 0], fovY: 40, shutter: [1, 0] };
    expect(messages(b)).toEqual([
      "camera.up: must not be zero or parallel to the view direction (target − position)",
      "camera.shutter: close time must not be earlier than open time",
    ]);
  });

  it("needs exactly one of radiance and power on an area light", () => {
    const input = minimal();
    const shape = { type: "rect" as const, center: [0, 2, 0] as [number, number, number], u: [1, 0, 0] as [number, number, number], v: [0, 0, 1] as [number, number, number] };
    input.lights = [
      { id: "a", type: "area", shape },
      { id: "b", type: "area", shape, radiance: [1, 1, 1], power: 10 },
    ];
    expect(messages(input)).toEqual(["lights[0].radiance: an area light needs radiance or power", "lights[1].power: give radiance or power, not both"]);
  });

  it("rejects box as a light shape", () => {
    const input = minimal() as Record<string, unknown>;
    input.lights = [{ id: "a", type: "area", shape: { type: "box", min: [0, 0, 0], max: [1, 1, 1] }, radiance: [1, 1, 1] }];
    expect(messages(input)).toEqual(['lights[0].shape.type: the string "box" is not allowed; must be one of "rect", "disk", "sphere"']);
  });

  it("checks ids and asset refs", () => {
    const input = minimal() as Record<string, unknown>;
    input.materials = { "warm glaze": { type: "diffuse", albedo: [1, 1, 1] } };
    input.objects = [
      { id: "k", shape: { type: "mesh", asset: "../secrets/passwd" }, material: "warm" },
      { id: "m", shape: { type: "mesh", asset: "sha256:ABC" }, material: "warm" },
      { id: "n", shape: { type: "mesh", asset: "/etc/x.obj" }, material: "warm" },
      { id: "o", shape: { type: "mesh", asset: "https://example.com/x.obj" }, material: "warm" },
    ];
    expect(messages(input)).toEqual([
      'materials["warm glaze"]: id "warm glaze" must be 1–64 characters from A–Z, a–z, 0–9, _ and -',
      'objects[0].shape.asset: must be a relative path without empty, "." or ".." segments',
      'objects[1].shape.asset: must be "sha256:" followed by 64 lowercase hex digits',
      "objects[2].shape.asset: must be a relative path (no leading /)",
      'objects[3].shape.asset: must be "sha256:<64 hex>" or a relative path',
    ]);
  });

  it("accepts a sha256 asset ref", () => {
    const input = minimal();
    input.objects = [{ id: "k", shape: { type: "mesh", asset: "sha256:" + "0123456789abcdef".repeat(4) }, material: "glaze" }];
    expect(validateScene(input).ok).toBe(true);
  });
});

describe("cross-reference checks", () => {
  it("names unknown materials, duplicate ids and the reserved group", () => {
    const input = minimal();
    input.objects = [
      { id: "kettle", shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "glaz" },
      { id: "kettle", shape: { type: "sphere", center: [0, 3, 0], radius: 1 }, material: "steel" },
    ];
    input.lights = [
      { id: "bulb", type: "point", position: [0, 1, 0], intensity: [1, 1, 1] },
      { id: "bulb", type: "point", position: [0, 1, 0], intensity: [1, 1, 1], group: "environment" },
    ];
    expect(messages(input)).toEqual([
      'objects[0].material: unknown material "glaz" (did you mean "glaze"?)',
      'objects[1].id: duplicate id "kettle" (also objects[0])',
      'objects[1].material: unknown material "steel"; materials defines "glaze"',
      'lights[1].id: duplicate id "bulb" (also lights[0])',
      'lights[1].group: "environment" is reserved for the environment\'s light',
    ]);
  });

  it("limits the number of light groups", () => {
    const input = minimal();
    input.lights = Array.from({ length: LIMITS.maxLightGroups + 1 }, (_, i) => ({
      id: `l${i}`,
      type: "point" as const,
      position: [0, 1, 0] as [number, number, number],
      intensity: [1, 1, 1] as [number, number, number],
      group: `g${i}`,
    }));
    expect(messages(input)).toEqual([`lights: uses ${LIMITS.maxLightGroups + 1} light groups (including the environment); at most ${LIMITS.maxLightGroups} are allowed`]);
  });
});

describe("limits", () => {
  it("enforces image area, spp and counts with path-named messages", () => {
    const input = minimal();
    input.image = { width: LIMITS.maxImageSide, height: LIMITS.maxImageSide };
    input.render = { spp: LIMITS.maxSpp + 1 };
    input.objects = Array.from({ length: LIMITS.maxObjects + 1 }, (_, i) => ({
      id: `o${i}`,
      shape: { type: "sphere" as const, center: [0, 0, 0] as [number, number, number], radius: 1 },
      material: "glaze",
    }));
    expect(messages(input)).toEqual([
      `image: width × height must be at most ${LIMITS.maxImagePixels} pixels (got ${LIMITS.maxImageSide ** 2})`,
      `render.spp: must be at most ${LIMITS.maxSpp}`,
      `objects: must have at most ${LIMITS.maxObjects} items`,
    ]);
  });
});

describe("scene text", () => {
  it("gives line and column for a JSON syntax error", () => {
    const text = '{\n  "format": "tracewell.scene/1",\n  "name": "x",,\n}';
    const issues = issuesOf(text);
    expect(issues).toHaveLength(1);
    expect(issues[0]).toMatchObject({ path: "", line: 3, column: 15 });
    expect(issues[0]!.message).toMatch(/^invalid JSON: expected a quoted field name, found character ","/);
  });

  it("gives the line of a schema error and of an unknown key", () => {
    const input = minimal() as Record<string, unknown>;
    (input.camera as Record<string, unknown>).fovY = 0;
    (input.image as Record<string, unknown>).depth = 3;
    const text = JSON.stringify(input, null, 2);
    const lines = text.split("\n");
    const fovLine = lines.findIndex((l) => l.includes('"fovY"')) + 1;
    const depthLine = lines.findIndex((l) => l.includes('"depth"')) + 1;
    const issues = issuesOf(text);
    expect(issues).toEqual([
      { path: "image.depth", message: "unknown field", line: depthLine, column: 5 },
      { path: "camera.fovY", message: "must be at least 1", line: fovLine, column: 5 },
    ]);
  });

  it("points a missing field at its parent object", () => {
    const input = minimal() as Record<string, unknown>;
    delete (input.render as Record<string, unknown>).spp;
    const text = JSON.stringify(input, null, 2);
    const renderLine = text.split("\n").findIndex((l) => l.includes('"render"')) + 1;
    expect(issuesOf(text)).toEqual([{ path: "render.spp", message: "is required", line: renderLine, column: 3 }]);
  });

  it("reports duplicate keys that JSON.parse would silently drop", () => {
    const text = JSON.stringify(minimal()).replace('"name":', '"name":"first","name":');
    expect(messages(text)).toEqual(["name: duplicate field (it appears more than once in this object) (line 1, column 46)"]);
  });

  it("parses the same values as JSON.parse (ECMA-404 grammar)", () => {
    const samples = [
      '{"a":[1,-2.5e3,0.125,1E-2,true,false,null,"x\\u00e9\\n\\"y"],"b":{"c":{}},"d":[]}',
      "  [ ]  ",
      '"\\ud83d\\ude00"',
      "-0",
    ];
    for (const s of samples) expect(parseJsonWithPositions(s).value).toEqual(JSON.parse(s));
    for (const bad of ["{", "[1,]", "01", "1.", '{"a" 1}', "nul", '"a\tb"', "[1] 2", "+1", ".5"]) {
      expect(() => JSON.parse(bad)).toThrow();
      expect(() => parseJsonWithPositions(bad)).toThrow(JsonTextError);
    }
  });

  it("keeps __proto__ as plain data", () => {
    const v = parseJsonWithPositions('{"__proto__": {"polluted": 1}}').value as Record<string, unknown>;
    expect(Object.keys(v)).toEqual(["__proto__"]);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(messages(JSON.stringify(minimal()).replace("{", '{"__proto__":1,'))).toEqual(["__proto__: unknown field (line 1, column 2)"]);
  });

  it("limits nesting depth instead of overflowing the stack", () => {
    expect(messages("[".repeat(100000))[0]).toMatch(/nested deeper than 256 levels/);
  });
});

describe("schema object", () => {
  it("is strict at every level", () => {
    expect(SceneSchema.safeParse({ ...minimal(), display: { exposure: 1, gamma: 2.2 } }).success).toBe(false);
  });
});
