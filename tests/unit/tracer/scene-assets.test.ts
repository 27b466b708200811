import { mkdirSync, mkdtempSync, rmSync, symlinkSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { validateScene } from "../../../tracer/scene/validate";
import type { Scene, SceneInput } from "../../../tracer/scene/schema";
import { checkSceneAssets } from "../../../tracer/scene/assets";
import { encodeHdr } from "../../../tracer/io/rgbe";
import { AssetLoadError, loadSceneAssetsFromDisk } from "../../../tracer/io/files.node.js";

const enc = (s: string) => new TextEncoder().encode(s);
const QUAD = enc("v 0 0 0\nv 1 0 0\nv 1 1 0\nv 0 1 0\nf 1 2 3 4\n"); // 2 triangles
const MAP = encodeHdr({ width: 8, height: 4, data: new Float32Array(96).fill(0.5) });

function scene(objects: { id: string; asset: string }[], map?: string): Scene {
  const input: SceneInput = {
    format: "tracewell.scene/1",
    name: "asset checks",
    image: { width: 4, height: 4 },
    camera: { position: [0, 0, 3], target: [0, 0, 0], fovY: 40 },
    render: { spp: 1 },
    materials: { m: { type: "diffuse", albedo: [0.5, 0.5, 0.5] } },
    objects: objects.map((o) => ({ id: o.id, shape: { type: "mesh" as const, asset: o.asset }, material: "m" })),
    ...(map ? { environment: { type: "map" as const, asset: map } } : {}),
  };
  const r = validateScene(input);
  if (!r.ok) throw new Error(JSON.stringify(r.issues));
  return r.scene;
}

const roomy = { maxTriangles: 100, maxAssetBytes: 1 << 20, maxMapPixels: 1000 };

describe("checkSceneAssets", () => {
  it("accepts parseable assets and reports nothing", () => {
    const s = scene([{ id: "a", asset: "q.obj" }], "sky.hdr");
    expect(checkSceneAssets(s, new Map([["q.obj", QUAD], ["sky.hdr", MAP]]), roomy)).toEqual([]);
  });

  it("names the scene path of missing, broken and oversize assets", () => {
    const s = scene([{ id: "a", asset: "missing.obj" }, { id: "b", asset: "broken.obj" }, { id: "c", asset: "big.obj" }], "bad.hdr");
    const assets = new Map([
      ["broken.obj", enc("v 0 0 0\nf 1 1\n")],
      ["big.obj", new Uint8Array(2000)],
      ["bad.hdr", enc("#?RADIANCE\nFORMAT=32-bit_rle_rgbe\n\n-Y 4 +X 8\n\x02\x02\x00")],
    ]);
    expect(checkSceneAssets(s, assets, { ...roomy, maxAssetBytes: 1000 })).toEqual([
      { path: "objects[0].shape.asset", message: 'mesh "missing.obj" was not found' },
      { path: "objects[1].shape.asset", message: 'mesh "broken.obj": line 2: face needs at least 3 vertices, got 2' },
      { path: "objects[2].shape.asset", message: 'mesh "big.obj" is 2000 bytes, more than the 1000-byte limit' },
      { path: "environment.asset", message: 'environment map "bad.hdr": Radiance .hdr: byte 48: unexpected end of data in row 0' },
    ]);
  });

  it("counts triangles over every mesh use, including a mesh used twice", () => {
    const s = scene([{ id: "a", asset: "q.obj" }, { id: "b", asset: "q.obj" }, { id: "c", asset: "q.obj" }]);
    expect(checkSceneAssets(s, new Map([["q.obj", QUAD]]), { ...roomy, maxTriangles: 6 })).toEqual([]);
    expect(checkSceneAssets(s, new Map([["q.obj", QUAD]]), { ...roomy, maxTriangles: 5 })).toEqual([
      { path: "objects[2].shape.asset", message: 'mesh "q.obj" takes the scene\'s meshes past the 5-triangle limit' },
    ]);
    const two = scene([{ id: "a", asset: "q.obj" }, { id: "b", asset: "r.obj" }]);
    expect(checkSceneAssets(two, new Map([["q.obj", QUAD], ["r.obj", QUAD]]), { ...roomy, maxTriangles: 3 })).toEqual([
      { path: "objects[1].shape.asset", message: 'mesh "r.obj" takes the scene\'s meshes past the 3-triangle limit (at its line 5)' },
    ]);
  });

  it("limits environment map pixels from the header, before decoding", () => {
    const s = scene([{ id: "a", asset: "q.obj" }], "sky.hdr");
    expect(checkSceneAssets(s, new Map([["q.obj", QUAD], ["sky.hdr", MAP]]), { ...roomy, maxMapPixels: 31 })).toEqual([
      { path: "environment.asset", message: 'environment map "sky.hdr" is 8×4, more than the 31-pixel limit' },
    ]);
  });
});

describe("loadSceneAssetsFromDisk", () => {
  let root = "";
  beforeAll(() => {
    root = mkdtempSync(path.join(tmpdir(), "tracewell-assets-"));
    mkdirSync(path.join(root, "scene/meshes"), { recursive: true });
    writeFileSync(path.join(root, "scene/meshes/q.obj"), QUAD);
    writeFileSync(path.join(root, "outside.obj"), QUAD);
    symlinkSync(path.join(root, "outside.obj"), path.join(root, "scene/meshes/link.obj"));
    mkdirSync(path.join(root, "scene/folder.obj"));
  });
  afterAll(() => rmSync(root, { recursive: true, force: true }));

  it("reads each relative ref once, against the scene folder", async () => {
    const s = scene([{ id: "a", asset: "meshes/q.obj" }, { id: "b", asset: "meshes/q.obj" }]);
    const assets = await loadSceneAssetsFromDisk(s, path.join(root, "scene"));
    expect([...assets.keys()]).toEqual(["meshes/q.obj"]);
    expect(assets.get("meshes/q.obj")).toEqual(QUAD);
  });

  it("refuses symlinks out of the scene folder, folders, missing files and uploaded-asset refs", async () => {
    const hash = "sha256:" + "ab".repeat(32);
    const s = scene([
      { id: "a", asset: "meshes/link.obj" },
      { id: "b", asset: "folder.obj" },
      { id: "c", asset: "meshes/none.obj" },
      { id: "d", asset: hash },
    ]);
    const err = await loadSceneAssetsFromDisk(s, path.join(root, "scene")).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(AssetLoadError);
    const issues = (err as AssetLoadError).issues;
    expect(issues.map((i) => i.path)).toEqual(["objects[0].shape.asset", "objects[1].shape.asset", "objects[2].shape.asset", "objects[3].shape.asset"]);
    expect(issues[0]!.message).toMatch(/^mesh "meshes\/link.obj" resolves outside the scene's folder/);
    expect(issues[1]!.message).toMatch(/^mesh "folder.obj" is not a file/);
    expect(issues[2]!.message).toMatch(/^mesh "meshes\/none.obj" was not found \(looked for .*none.obj\)$/);
    expect(issues[3]!.message).toBe(`mesh "${hash}" is an uploaded asset; from the command line give a path relative to the scene file`);
  });
});
