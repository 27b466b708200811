// Demo scenes for Harrow Lane Studio: every example in scenes/*.json with a short history (a few saves, one
// restore) in the first project, and a fork of the kettle into the second. Idempotent: a scene that already
// exists (same name in the same project) is left alone. Relative asset paths are uploaded and rewritten to
// their sha256: references, as a web scene must use.
import { readdirSync, readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { and, eq } from "drizzle-orm";
import { scenes } from "~/db/schema";
import { uploadAsset } from "~/models/asset.server";
import { createSceneWith, saveVersionWith, type SceneJson } from "~/models/scene.server";
import type { Database } from "~/services/db.server";
import { ensureBucket } from "~/services/storage.server";

export type SeedScenesOptions = { projectIds: string[]; userIds: string[]; scenesDir?: string };
export type SeedScenesResult = { created: number; skipped: number; versions: number; forks: number; assets: number };

type Json = Record<string, unknown>;

const clone = <T,>(v: T): T => JSON.parse(JSON.stringify(v)) as T;

/** Each file's small lighting-review story: what a team member changed after the first save. */
function edits(): { message: string; apply: (s: Json) => void }[] {
  return [
    {
      message: "Half a stop brighter for the review",
      apply: (s) => {
        const display = (s.display ??= {}) as { exposure?: number };
        display.exposure = (display.exposure ?? 0) + 0.5;
      },
    },
    {
      message: "Key light 20% stronger",
      apply: (s) => {
        const light = (s.lights as Json[] | undefined)?.find((l) => Array.isArray(l.radiance) || Array.isArray(l.intensity));
        if (!light) return;
        const key = Array.isArray(light.radiance) ? "radiance" : "intensity";
        light[key] = (light[key] as number[]).map((x) => Math.round(x * 1.2 * 1000) / 1000);
      },
    },
  ];
}

async function rewriteAssets(conn: Database, projectId: string, userId: string, scene: Json, baseDir: string): Promise<number> {
  let uploaded = 0;
  const upload = async (ref: string): Promise<string> => {
    if (ref.startsWith("sha256:")) return ref;
    const bytes = new Uint8Array(readFileSync(join(baseDir, ref)));
    const { asset, created } = await uploadAsset({ projectId, name: ref.split("/").pop() ?? ref, bytes, uploadedBy: userId }, conn);
    if (created) uploaded++;
    return `sha256:${asset.sha256}`;
  };
  for (const o of (scene.objects as Json[] | undefined) ?? []) {
    const shape = o.shape as Json;
    if (shape.type === "mesh" && typeof shape.asset === "string") shape.asset = await upload(shape.asset);
  }
  const env = scene.environment as Json | undefined;
  if (env?.type === "map" && typeof env.asset === "string") env.asset = await upload(env.asset);
  return uploaded;
}

export async function seedScenes(conn: Database, options: SeedScenesOptions): Promise<SeedScenesResult> {
  const [projectId, secondProjectId] = options.projectIds;
  const [author, ...others] = options.userIds;
  if (!projectId || !author) throw new Error("seedScenes needs at least one project id and one user id");
  const dir = options.scenesDir ?? join(process.cwd(), "scenes");
  const files = readdirSync(dir).filter((f) => f.endsWith(".json")).sort();
  const result: SeedScenesResult = { created: 0, skipped: 0, versions: 0, forks: 0, assets: 0 };
  await ensureBucket();

  let kettleVersionForFork: { json: Json; name: string; versionId: string } | null = null;
  for (const [i, file] of files.entries()) {
    const json = JSON.parse(readFileSync(join(dir, file), "utf8")) as Json;
    const name = String(json.name ?? file.replace(/\.json$/, ""));
    const [existing] = await conn.select({ id: scenes.id }).from(scenes).where(and(eq(scenes.projectId, projectId), eq(scenes.name, name)));
    if (existing) {
      result.skipped++;
      continue;
    }
    result.assets += await rewriteAssets(conn, projectId, author, json, dirname(join(dir, file)));
    const created = await createSceneWith(conn, { projectId, name, scene: json, authorId: author, message: "First look from the example file" });
    if (!created.ok) throw new Error(`${file}: ${created.issues.map((x) => `${x.path}: ${x.message}`).join("; ")}`);
    result.created++;
    result.versions++;
    let head = created.version;
    let current = clone(json);
    for (const [k, edit] of edits().entries()) {
      edit.apply(current);
      const saved = await saveVersionWith(conn, {
        sceneId: created.scene.id,
        parentVersionId: head.id,
        scene: current,
        message: edit.message,
        authorId: others[(i + k) % Math.max(1, others.length)] ?? author,
      });
      if (!saved.ok) throw new Error(`${file}: could not save "${edit.message}" (${saved.reason})`);
      head = saved.version;
      current = clone(current);
      result.versions++;
    }
    // The first scene also gets a restore of its first version, so the history shows one.
    if (i === 0) {
      const restored = await saveVersionWith(conn, {
        sceneId: created.scene.id,
        parentVersionId: head.id,
        scene: created.version.scene,
        message: "Back to the first look",
        authorId: author,
        kind: "restore",
        sourceVersionId: created.version.id,
      });
      if (restored.ok) result.versions++;
    }
    if (/kettle/i.test(file)) kettleVersionForFork = { json: head.scene, name, versionId: head.id };
  }

  if (secondProjectId && kettleVersionForFork) {
    const forkName = `${kettleVersionForFork.name} (fork)`;
    const [existing] = await conn.select({ id: scenes.id }).from(scenes).where(and(eq(scenes.projectId, secondProjectId), eq(scenes.name, forkName)));
    if (!existing) {
      // The fork's project needs its own entries for the assets the scene uses.
      const forkJson = clone(kettleVersionForFork.json);
      await rewriteAssetsFromProject(conn, secondProjectId, author, forkJson, dir);
      const fork = await createSceneWith(conn, {
        projectId: secondProjectId,
        name: forkName,
        scene: forkJson,
        authorId: others[0] ?? author,
        kind: "fork",
        forkedFromVersionId: kettleVersionForFork.versionId,
        message: `Forked from “${kettleVersionForFork.name}”`,
      });
      if (fork.ok) {
        result.forks++;
        const warmer = clone(forkJson);
        const display = (warmer.display ??= {}) as { exposure?: number };
        display.exposure = (display.exposure ?? 0) - 0.5;
        const saved = await saveVersionWith(conn, { sceneId: fork.scene.id, parentVersionId: fork.version.id, scene: warmer, message: "Darker mood for the catalogue", authorId: others[0] ?? author });
        if (saved.ok) result.versions++;
      }
    }
  }
  return result;
}

/** sha256: refs copied into another project: re-register the example files there (content is identical). */
async function rewriteAssetsFromProject(conn: Database, projectId: string, userId: string, scene: Json, dir: string): Promise<void> {
  const wanted = new Set<string>();
  for (const o of (scene.objects as Json[] | undefined) ?? []) {
    const shape = o.shape as Json;
    if (shape.type === "mesh" && typeof shape.asset === "string") wanted.add(shape.asset);
  }
  const env = scene.environment as Json | undefined;
  if (env?.type === "map" && typeof env.asset === "string") wanted.add(env.asset);
  if (wanted.size === 0) return;
  for (const sub of ["meshes", "maps"]) {
    let names: string[] = [];
    try {
      names = readdirSync(join(dir, sub));
    } catch {
      continue;
    }
    for (const n of names) {
      const bytes = new Uint8Array(readFileSync(join(dir, sub, n)));
      const { createHash } = await import("node:crypto");
      const ref = `sha256:${createHash("sha256").update(bytes).digest("hex")}`;
      if (wanted.has(ref)) await uploadAsset({ projectId, name: n, bytes, uploadedBy: userId }, conn);
    }
  }
}

export type { SceneJson };
