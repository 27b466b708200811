// Project assets: OBJ meshes and Radiance .hdr maps, stored once by content (assets/<sha256>) and listed
// per project. Scenes refer to them as "sha256:<hex>". A project sees only the assets it uploaded or that
// came with a fork or an import, so a hash alone never opens another team's file.
import { createHash } from "node:crypto";
import { and, desc, eq, inArray, sql } from "drizzle-orm";
import { encodePng } from "@tracer/io/png";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import { validateScene } from "@tracer/scene/validate";
import type { Scene } from "@tracer/scene/schema";
import { assets, scenes, sceneVersions, users } from "~/db/schema";
import { inspectAsset, mapThumbnail, type AssetFacts, type AssetKind } from "~/lib/asset-inspect";
import { db, type Database } from "~/services/db.server";
import { deleteObject, getObjectBytes, objectExists, putObject } from "~/services/storage.server";

export type AssetRow = typeof assets.$inferSelect;
export type AssetListItem = AssetRow & { uploaderName: string | null; usedByVersions: number };

export const SHA256_HEX = /^[0-9a-f]{64}$/;

export function sha256Hex(bytes: Uint8Array): string {
  return createHash("sha256").update(bytes).digest("hex");
}
export function assetKey(sha: string): string {
  return `assets/${sha}`;
}
export function assetThumbKey(sha: string): string {
  return `assets/${sha}.thumb.png`;
}
export function assetRef(sha: string): string {
  return `sha256:${sha}`;
}

export class AssetError extends Error {
  constructor(
    message: string,
    readonly status: 400 | 404 | 409 | 413 = 400,
  ) {
    super(message);
    this.name = "AssetError";
  }
}

/**
 * Validate, then store the bytes (once per content) and record the asset in the project. Uploading the
 * same content again is not an error: the existing entry is returned (renamed if a new name was given).
 */
export async function uploadAsset(
  input: {
    projectId: string;
    name: string;
    bytes: Uint8Array;
    uploadedBy: string | null;
  },
  conn: Database = db(),
): Promise<{ asset: AssetRow; created: boolean }> {
  const name = input.name.trim().slice(0, 200) || "unnamed";
  const inspection = inspectAsset(name, input.bytes);
  if (!inspection.ok) throw new AssetError(inspection.message, input.bytes.length > 0 && /limit/.test(inspection.message) ? 413 : 400);
  const sha = sha256Hex(input.bytes);

  const facts: Record<string, unknown> = { ...inspection.facts };
  if (!(await objectExists(assetKey(sha)))) {
    await putObject(assetKey(sha), input.bytes, inspection.kind === "mesh" ? "model/obj" : "image/vnd.radiance");
  }
  if (inspection.kind === "envmap") {
    if (!(await objectExists(assetThumbKey(sha)))) {
      const thumb = mapThumbnail(inspection.image);
      await putObject(assetThumbKey(sha), encodePng(thumb.width, thumb.height, thumb.rgba), "image/png");
    }
    facts.thumb = assetThumbKey(sha);
  }

  const inserted = await conn
    .insert(assets)
    .values({ projectId: input.projectId, sha256: sha, name, kind: inspection.kind, bytes: input.bytes.length, facts, uploadedBy: input.uploadedBy })
    .onConflictDoNothing()
    .returning();
  if (inserted[0]) return { asset: inserted[0], created: true };
  const [existing] = await conn.select().from(assets).where(and(eq(assets.projectId, input.projectId), eq(assets.sha256, sha)));
  return { asset: existing!, created: false };
}

export async function getAsset(projectId: string, sha: string): Promise<AssetRow | null> {
  if (!SHA256_HEX.test(sha)) return null;
  const [row] = await db().select().from(assets).where(and(eq(assets.projectId, projectId), eq(assets.sha256, sha)));
  return row ?? null;
}

/** How many saved versions of the project's scenes mention the asset (a content hash cannot collide with other text). */
function usageCount(projectId: string) {
  return sql<number>`(select count(*)::int from ${sceneVersions} v join ${scenes} s on s.id = v.scene_id
    where s.project_id = ${projectId} and v.scene::text like '%sha256:' || ${assets.sha256} || '%')`;
}

export async function listAssets(projectId: string, kind?: AssetKind): Promise<AssetListItem[]> {
  const rows = await db()
    .select({ asset: assets, uploaderName: users.name, usedByVersions: usageCount(projectId) })
    .from(assets)
    .leftJoin(users, eq(users.id, assets.uploadedBy))
    .where(kind ? and(eq(assets.projectId, projectId), eq(assets.kind, kind)) : eq(assets.projectId, projectId))
    .orderBy(desc(assets.createdAt));
  return rows.map((r) => ({ ...r.asset, uploaderName: r.uploaderName, usedByVersions: Number(r.usedByVersions) }));
}

export async function assetUsage(projectId: string, sha: string): Promise<{ sceneName: string; versionNumber: number }[]> {
  const rows = await db()
    .select({ sceneName: scenes.name, versionNumber: sceneVersions.number })
    .from(sceneVersions)
    .innerJoin(scenes, eq(scenes.id, sceneVersions.sceneId))
    .where(and(eq(scenes.projectId, projectId), sql`${sceneVersions.scene}::text like ${`%sha256:${sha}%`}`))
    .orderBy(scenes.name, sceneVersions.number);
  return rows;
}

/** Refused while any saved version in the project uses it; the blob goes only when no project lists it. */
export async function deleteAsset(projectId: string, sha: string): Promise<void> {
  const asset = await getAsset(projectId, sha);
  if (!asset) throw new AssetError("no such asset in this project", 404);
  const usage = await assetUsage(projectId, sha);
  if (usage.length > 0) {
    const first = usage.slice(0, 3).map((u) => `“${u.sceneName}” v${u.versionNumber}`).join(", ");
    throw new AssetError(`“${asset.name}” is used by ${usage.length} saved version${usage.length === 1 ? "" : "s"} (${first}${usage.length > 3 ? ", …" : ""}) and cannot be deleted`, 409);
  }
  await db().delete(assets).where(and(eq(assets.projectId, projectId), eq(assets.sha256, sha)));
  const [{ n }] = (await db().select({ n: sql<number>`count(*)::int` }).from(assets).where(eq(assets.sha256, sha))) as [{ n: number }];
  if (Number(n) === 0) {
    await deleteObject(assetKey(sha));
    await deleteObject(assetThumbKey(sha)).catch(() => undefined);
  }
}

export async function readAssetBytes(sha: string): Promise<Uint8Array> {
  const bytes = await getObjectBytes(assetKey(sha));
  // A content address is a promise: refuse to hand out bytes that do not match it.
  if (sha256Hex(bytes) !== sha) throw new AssetError(`stored asset ${sha} is corrupt (its bytes no longer match its hash)`, 409);
  return bytes;
}

export type AssetRefIssue = { ref: string; message: string };

export class MissingAssetsError extends Error {
  constructor(readonly issues: AssetRefIssue[]) {
    super(issues.map((i) => `${i.ref}: ${i.message}`).join("\n"));
    this.name = "MissingAssetsError";
  }
}

function sceneOf(scene: Scene | Record<string, unknown>): Scene {
  if ("format" in scene && "objects" in scene && Array.isArray(scene.objects) && "materials" in scene) {
    const r = validateScene(scene);
    if (r.ok) return r.scene;
    throw new AssetError(`the scene is invalid: ${r.issues[0]?.path}: ${r.issues[0]?.message}`);
  }
  return scene as Scene;
}

/**
 * Bytes for every "sha256:" asset the scene uses, keyed by ref (the tracer's LoadedAssets). Used by the
 * render pool and by the asset route the browser fetches from. Relative-path refs are the command line's
 * business and are reported as missing here: a web scene must use uploaded assets.
 */
export async function loadAssetsForScene(projectId: string, scene: Scene | Record<string, unknown>): Promise<Map<string, Uint8Array>> {
  const refs = uniqueAssetRefs(sceneOf(scene));
  const out = new Map<string, Uint8Array>();
  if (refs.length === 0) return out;
  const issues: AssetRefIssue[] = [];
  const shas = refs.filter((r) => r.startsWith("sha256:")).map((r) => r.slice(7));
  const known = shas.length
    ? new Set((await db().select({ sha: assets.sha256 }).from(assets).where(and(eq(assets.projectId, projectId), inArray(assets.sha256, shas)))).map((r) => r.sha))
    : new Set<string>();
  for (const ref of refs) {
    if (!ref.startsWith("sha256:")) {
      issues.push({ ref, message: "is a file path; upload the file on the Assets tab and use its sha256: reference" });
      continue;
    }
    const sha = ref.slice(7);
    if (!known.has(sha)) {
      issues.push({ ref, message: "is not an asset of this project" });
      continue;
    }
    out.set(ref, await readAssetBytes(sha));
  }
  if (issues.length) throw new MissingAssetsError(issues);
  return out;
}

/** Give `toProjectId` the asset entries of `fromProjectId` that a scene uses (forks and share-link forks). */
export async function copyAssetsForScene(fromProjectId: string, toProjectId: string, scene: Record<string, unknown>): Promise<number> {
  if (fromProjectId === toProjectId) return 0;
  const r = validateScene(scene);
  if (!r.ok) return 0;
  const shas = uniqueAssetRefs(r.scene)
    .filter((ref) => ref.startsWith("sha256:"))
    .map((ref) => ref.slice(7));
  if (shas.length === 0) return 0;
  const rows = await db().select().from(assets).where(and(eq(assets.projectId, fromProjectId), inArray(assets.sha256, shas)));
  if (rows.length === 0) return 0;
  const inserted = await db()
    .insert(assets)
    .values(rows.map((a) => ({ ...a, projectId: toProjectId, createdAt: new Date() })))
    .onConflictDoNothing()
    .returning();
  return inserted.length;
}

/** Register already-stored content (bundle import) after checking the bytes, like an upload. */
export { type AssetFacts };
