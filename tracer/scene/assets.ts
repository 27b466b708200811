/**
 * The files a scene needs besides its JSON: OBJ meshes and Radiance .hdr environment maps. Callers
 * (web app, API, command line) resolve each ref to bytes; checkSceneAssets then applies the limits and
 * parses them, so a broken upload fails with a path-named message before any render starts.
 */
import type { Scene } from "./schema";

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
