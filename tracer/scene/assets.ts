/**
 * The files a scene needs besides its JSON: OBJ meshes and Radiance .hdr environment maps. Callers
 * (web app, API, command line) resolve each ref to bytes; checkSceneAssets then applies the limits and
 * parses them, so a broken upload fails with a path-named message before any render starts.
 */
import type { Scene } from "./schema";
import { LIMITS } from "./limits";
import { parseObj, ObjError } from "../geometry/obj";
import { decodeHdr, readHdrSize } from "../io/rgbe";
import { ImageFormatError } from "../io/image";

export type AssetKind = "mesh" | "envmap";
export type AssetRefUse = { ref: string; kind: AssetKind; path: string };

/** Every asset use, in scene order; a ref used twice appears twice (each with its own path). */
export function listAssetRefs(scene: Scene): AssetRefUse[] {
  const out: AssetRefUse[] = [];
  scene.objects.forEach((o, i) => {
    if (o.shape.type === "mesh") out.push({ ref: o.shape.asset, kind: "mesh", path: `objects[${i}].shape.asset` });
  });
  if (scene.environment?.type === "map") out.push({ ref: scene.environment.asset, kind: "envmap", path: "environment.asset" });
  return out;
}

/** The distinct refs, for fetching each file once. */
export function uniqueAssetRefs(scene: Scene): string[] {
  return [...new Set(listAssetRefs(scene).map((u) => u.ref))];
}

export type AssetIssue = { path: string; message: string };

const KIND_WORD: Record<AssetKind, string> = { mesh: "mesh", envmap: "environment map" };

/**
 * Applies the asset limits and parses every asset the scene uses, returning path-named issues
 * (`objects[3].shape.asset: mesh "meshes/kettle.obj": line 12: face index 40 out of range`). An empty
 * list means compileScene can rely on the bytes.
 */
export function checkSceneAssets(
  scene: Scene,
  assets: ReadonlyMap<string, Uint8Array>,
  limits: { maxTriangles: number; maxAssetBytes: number; maxMapPixels: number } = LIMITS,
): AssetIssue[] {
  const issues: AssetIssue[] = [];
  let triangles = 0;
  const parsedTriangles = new Map<string, number>();
  let decoder: TextDecoder | null = null;
  for (const use of listAssetRefs(scene)) {
    const label = `${KIND_WORD[use.kind]} ${JSON.stringify(use.ref)}`;
    const bytes = assets.get(use.ref);
    if (!bytes) {
      issues.push({ path: use.path, message: `${label} was not found` });
      continue;
    }
    if (bytes.length > limits.maxAssetBytes) {
      issues.push({ path: use.path, message: `${label} is ${bytes.length} bytes, more than the ${limits.maxAssetBytes}-byte limit` });
      continue;
    }
    try {
      if (use.kind === "mesh") {
        let count = parsedTriangles.get(use.ref);
        if (count === undefined) {
          decoder ??= new TextDecoder("utf-8");
          const remaining = Math.max(0, limits.maxTriangles - triangles);
          count = parseObj(decoder.decode(bytes), { maxTriangles: remaining }).indices.length / 3;
          parsedTriangles.set(use.ref, count);
        }
        triangles += count;
        if (triangles > limits.maxTriangles) {
          issues.push({ path: use.path, message: `${label} takes the scene's meshes past the ${limits.maxTriangles}-triangle limit` });
        }
      } else {
        const size = readHdrSize(bytes);
        if (size.width * size.height > limits.maxMapPixels) {
          issues.push({ path: use.path, message: `${label} is ${size.width}×${size.height}, more than the ${limits.maxMapPixels}-pixel limit` });
          continue;
        }
        decodeHdr(bytes);
      }
    } catch (e) {
      if (e instanceof ObjError && use.kind === "mesh" && /^line \d+: more than \d+ triangles$/.test(e.message)) {
        issues.push({ path: use.path, message: `${label} takes the scene's meshes past the ${limits.maxTriangles}-triangle limit (at its line ${e.line})` });
        triangles = limits.maxTriangles + 1;
      } else if (e instanceof ObjError || e instanceof ImageFormatError) issues.push({ path: use.path, message: `${label}: ${e.message}` });
      else throw e;
    }
  }
  return issues;
}
