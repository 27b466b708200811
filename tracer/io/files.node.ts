/**
 * Node-only: reading a scene file and the assets it names from disk, for the command line, tests and
 * server scripts. Relative asset refs resolve against the scene file's folder and may not leave it;
 * "sha256:" refs name uploaded assets, which only the web app and API can resolve.
 */
import { readFile, realpath, stat } from "node:fs/promises";
import path from "node:path";
import { LIMITS } from "../scene/limits";
import { listAssetRefs } from "../scene/assets";
import type { Scene } from "../scene/schema";
import type { SceneIssue } from "../scene/validate";

export class AssetLoadError extends Error {
  readonly issues: SceneIssue[];
  constructor(issues: SceneIssue[]) {
    super(issues.map((i) => `${i.path}: ${i.message}`).join("\n"));
    this.name = "AssetLoadError";
    this.issues = issues;
  }
}

function isInside(dir: string, file: string): boolean {
  const rel = path.relative(dir, file);
  return rel !== "" && !rel.startsWith("..") && !path.isAbsolute(rel);
}

/**
 * Reads every asset the scene uses (each file once). Throws AssetLoadError naming the scene path of
 * each ref that is missing, too large, outside the scene folder or not resolvable from disk.
 */
export async function loadSceneAssetsFromDisk(scene: Scene, sceneDir: string): Promise<Map<string, Uint8Array>> {
  const assets = new Map<string, Uint8Array>();
  const issues: SceneIssue[] = [];
  const failed = new Set<string>();
  const baseDir = await realpath(sceneDir);
  for (const use of listAssetRefs(scene)) {
    if (assets.has(use.ref)) continue;
    const label = `${use.kind === "mesh" ? "mesh" : "environment map"} ${JSON.stringify(use.ref)}`;
    if (failed.has(use.ref)) {
      issues.push({ path: use.path, message: `${label} could not be loaded (see above)` });
      continue;
    }
    if (use.ref.startsWith("sha256:")) {
      issues.push({ path: use.path, message: `${label} is an uploaded asset; from the command line give a path relative to the scene file` });
      failed.add(use.ref);
      continue;
    }
    const file = path.resolve(baseDir, ...use.ref.split("/"));
    try {
      const real = await realpath(file);
      if (!isInside(baseDir, real)) {
        issues.push({ path: use.path, message: `${label} resolves outside the scene's folder (${real})` });
        failed.add(use.ref);
        continue;
      }
      const info = await stat(real);
      if (!info.isFile()) throw Object.assign(new Error("not a file"), { code: "ENOTFILE" });
      if (info.size > LIMITS.maxAssetBytes) {
        issues.push({ path: use.path, message: `${label} is ${info.size} bytes, more than the ${LIMITS.maxAssetBytes}-byte limit` });
        failed.add(use.ref);
        continue;
      }
      const buf = await readFile(real);
      assets.set(use.ref, new Uint8Array(buf.buffer, buf.byteOffset, buf.byteLength));
    } catch (e) {
      const code = (e as { code?: string }).code;
      const why = code === "ENOENT" ? "was not found" : code === "ENOTFILE" ? "is not a file" : `could not be read (${(e as Error).message})`;
      issues.push({ path: use.path, message: `${label} ${why} (looked for ${file})` });
      failed.add(use.ref);
    }
  }
  if (issues.length) throw new AssetLoadError(issues);
  return assets;
}
