// Scenes and their versions. A scene's history is linear: every save names the version it was edited
// from, and only a save whose parent is still the head wins (compare-and-set inside one transaction),
// so two people saving at once never silently overwrite each other.
import { and, asc, desc, eq, inArray, sql } from "drizzle-orm";
import { validateScene, type SceneIssue } from "@tracer/scene/validate";
import { projects, scenes, sceneVersions, users } from "~/db/schema";
import { db, type Database } from "~/services/db.server";

export type SceneRow = typeof scenes.$inferSelect;
export type VersionRow = typeof sceneVersions.$inferSelect;
export type VersionKind = VersionRow["kind"];
export type Version = VersionRow & { authorName: string | null };
export type SceneJson = Record<string, unknown>;

export type SceneSummary = SceneRow & {
  headNumber: number | null;
  headMessage: string | null;
  headAuthorName: string | null;
  headCreatedAt: Date | null;
  versionCount: number;
};

/** The scene as given (object or JSON text) after it passed validation; stored without defaults filled so the
 * author's file stays the author's file. */
type Checked = { ok: true; json: SceneJson } | { ok: false; reason: "invalid"; issues: SceneIssue[] };

export function checkScene(input: unknown): Checked {
  const result = validateScene(input);
  if (!result.ok) return { ok: false, reason: "invalid", issues: result.issues };
  const json = typeof input === "string" ? (JSON.parse(input) as unknown) : input;
  if (!json || typeof json !== "object" || Array.isArray(json)) {
    return { ok: false, reason: "invalid", issues: [{ path: "", message: "a scene must be a JSON object" }] };
  }
  return { ok: true, json: json as SceneJson };
}

const versionColumns = {
  id: sceneVersions.id,
  sceneId: sceneVersions.sceneId,
  number: sceneVersions.number,
  parentId: sceneVersions.parentId,
  kind: sceneVersions.kind,
  sourceVersionId: sceneVersions.sourceVersionId,
  message: sceneVersions.message,
  authorId: sceneVersions.authorId,
  scene: sceneVersions.scene,
  createdAt: sceneVersions.createdAt,
  authorName: users.name,
};

async function versionById(conn: Database, versionId: string): Promise<Version | null> {
  const [row] = await conn
    .select(versionColumns)
    .from(sceneVersions)
    .leftJoin(users, eq(users.id, sceneVersions.authorId))
    .where(eq(sceneVersions.id, versionId));
  return row ?? null;
}

function isUuid(s: string): boolean {
  return /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(s);
}

// ---------------------------------------------------------------------------------------------

export async function listScenes(projectId: string): Promise<SceneSummary[]> {
  const rows = await db()
    .select({
      scene: scenes,
      headNumber: sceneVersions.number,
      headMessage: sceneVersions.message,
      headCreatedAt: sceneVersions.createdAt,
      headAuthorName: users.name,
      versionCount: sql<number>`(select count(*)::int from ${sceneVersions} v where v.scene_id = ${scenes.id})`,
    })
    .from(scenes)
    .leftJoin(sceneVersions, eq(sceneVersions.id, scenes.headVersionId))
    .leftJoin(users, eq(users.id, sceneVersions.authorId))
    .where(eq(scenes.projectId, projectId))
    .orderBy(desc(scenes.updatedAt));
  return rows.map((r) => ({
    ...r.scene,
    headNumber: r.headNumber,
    headMessage: r.headMessage,
    headAuthorName: r.headAuthorName,
    headCreatedAt: r.headCreatedAt,
    versionCount: Number(r.versionCount),
  }));
}

export async function getScene(sceneId: string): Promise<SceneRow | null> {
  if (!isUuid(sceneId)) return null;
  const [row] = await db().select().from(scenes).where(eq(scenes.id, sceneId));
  return row ?? null;
}

export async function getVersion(versionId: string): Promise<Version | null> {
  if (!isUuid(versionId)) return null;
  return versionById(db(), versionId);
}

/** Newest first. */
export async function listVersions(sceneId: string): Promise<Version[]> {
  if (!isUuid(sceneId)) return [];
  return db()
    .select(versionColumns)
    .from(sceneVersions)
    .leftJoin(users, eq(users.id, sceneVersions.authorId))
    .where(eq(sceneVersions.sceneId, sceneId))
    .orderBy(desc(sceneVersions.number));
}

export async function getHead(sceneId: string): Promise<Version | null> {
  const scene = await getScene(sceneId);
  return scene?.headVersionId ? getVersion(scene.headVersionId) : null;
}

export type CreateSceneInput = {
  projectId: string;
  name: string;
  scene: unknown;
  authorId: string | null;
  message?: string;
  kind?: Extract<VersionKind, "create" | "fork" | "import">;
  forkedFromVersionId?: string | null;
};

export type CreateSceneResult =
  | { ok: true; scene: SceneRow; version: Version }
  | { ok: false; reason: "invalid"; issues: SceneIssue[] };

export async function createSceneWith(conn: Database, input: CreateSceneInput): Promise<CreateSceneResult> {
  const name = input.name.trim();
  if (!name) return { ok: false, reason: "invalid", issues: [{ path: "name", message: "the scene needs a name" }] };
  const checked = checkScene(input.scene);
  if (!checked.ok) return checked;
  const kind = input.kind ?? "create";
  const created = await conn.transaction(async (tx) => {
    const [sceneRow] = await tx
      .insert(scenes)
      .values({ projectId: input.projectId, name, createdBy: input.authorId, forkedFromVersionId: input.forkedFromVersionId ?? null })
      .returning();
    const [version] = await tx
      .insert(sceneVersions)
      .values({
        sceneId: sceneRow!.id,
        number: 1,
        parentId: null,
        kind,
        sourceVersionId: input.forkedFromVersionId ?? null,
        message: input.message?.trim() || (kind === "fork" ? "Forked" : kind === "import" ? "Imported" : "Created"),
        authorId: input.authorId,
        scene: checked.json,
      })
      .returning();
    const [updated] = await tx.update(scenes).set({ headVersionId: version!.id }).where(eq(scenes.id, sceneRow!.id)).returning();
    return { scene: updated!, versionId: version!.id };
  });
  const version = await versionById(conn, created.versionId);
  return { ok: true, scene: created.scene, version: version! };
}

export function createScene(input: CreateSceneInput): Promise<CreateSceneResult> {
  return createSceneWith(db(), input);
}

export type SaveVersionInput = {
  sceneId: string;
  parentVersionId: string;
  scene: unknown;
  message: string;
  authorId: string | null;
  kind?: Extract<VersionKind, "save" | "restore">;
  sourceVersionId?: string | null;
};

export type SaveVersionResult =
  | { ok: true; version: Version }
  | { ok: false; reason: "conflict"; head: Version }
  | { ok: false; reason: "invalid"; issues: SceneIssue[] }
  | { ok: false; reason: "not_found" };

export async function saveVersionWith(conn: Database, input: SaveVersionInput): Promise<SaveVersionResult> {
  if (!isUuid(input.sceneId)) return { ok: false, reason: "not_found" };
  const checked = checkScene(input.scene);
  if (!checked.ok) return checked;
  const message = input.message.trim() || "Saved";
  const outcome = await conn.transaction(async (tx) => {
    // The row lock serialises concurrent saves on one scene; each re-reads the head after the wait.
    const [current] = await tx.select().from(scenes).where(eq(scenes.id, input.sceneId)).for("update");
    if (!current) return { kind: "not_found" as const };
    if (current.headVersionId !== input.parentVersionId) return { kind: "conflict" as const, headId: current.headVersionId };
    const [{ next }] = (await tx
      .select({ next: sql<number>`coalesce(max(${sceneVersions.number}), 0)::int + 1` })
      .from(sceneVersions)
      .where(eq(sceneVersions.sceneId, input.sceneId))) as [{ next: number }];
    const [version] = await tx
      .insert(sceneVersions)
      .values({
        sceneId: input.sceneId,
        number: Number(next),
        parentId: input.parentVersionId,
        kind: input.kind ?? "save",
        sourceVersionId: input.sourceVersionId ?? null,
        message,
        authorId: input.authorId,
        scene: checked.json,
      })
      .returning({ id: sceneVersions.id });
    const updated = await tx
      .update(scenes)
      .set({ headVersionId: version!.id, updatedAt: new Date() })
      .where(and(eq(scenes.id, input.sceneId), eq(scenes.headVersionId, input.parentVersionId)))
      .returning({ id: scenes.id });
    if (updated.length !== 1) throw new Error("scene head moved while locked");
    return { kind: "ok" as const, versionId: version!.id };
  });
  if (outcome.kind === "not_found") return { ok: false, reason: "not_found" };
  if (outcome.kind === "conflict") {
    const head = outcome.headId ? await versionById(conn, outcome.headId) : null;
    if (!head) return { ok: false, reason: "not_found" };
    return { ok: false, reason: "conflict", head };
  }
  return { ok: true, version: (await versionById(conn, outcome.versionId))! };
}

export function saveVersion(input: SaveVersionInput): Promise<SaveVersionResult> {
  return saveVersionWith(db(), input);
}

/** Restoring makes a new head with an old version's content; history is never rewritten. */
export async function restoreVersion(input: {
  sceneId: string;
  versionId: string;
  parentVersionId: string;
  authorId: string | null;
  message?: string;
}): Promise<SaveVersionResult> {
  const source = await getVersion(input.versionId);
  if (!source || source.sceneId !== input.sceneId) return { ok: false, reason: "not_found" };
  return saveVersion({
    sceneId: input.sceneId,
    parentVersionId: input.parentVersionId,
    scene: source.scene,
    message: input.message?.trim() || `Restored version ${source.number}`,
    authorId: input.authorId,
    kind: "restore",
    sourceVersionId: source.id,
  });
}

/** A fork is a new scene (in any project) whose first version copies the origin version and points back at it. */
export async function forkScene(input: {
  versionId: string;
  targetProjectId: string;
  authorId: string | null;
  name?: string;
  message?: string;
}): Promise<CreateSceneResult | { ok: false; reason: "not_found" }> {
  const source = await getVersion(input.versionId);
  if (!source) return { ok: false, reason: "not_found" };
  const origin = await getScene(source.sceneId);
  if (!origin) return { ok: false, reason: "not_found" };
  return createScene({
    projectId: input.targetProjectId,
    name: input.name?.trim() || `${origin.name} (fork)`,
    scene: source.scene,
    authorId: input.authorId,
    message: input.message?.trim() || `Forked from “${origin.name}” version ${source.number}`,
    kind: "fork",
    forkedFromVersionId: source.id,
  });
}

export type ForkOrigin = { version: Version; scene: SceneRow; projectName: string };

/** Where a forked scene came from (null when it is not a fork or the origin was deleted). */
export async function getForkOrigin(scene: SceneRow): Promise<ForkOrigin | null> {
  if (!scene.forkedFromVersionId) return null;
  const version = await getVersion(scene.forkedFromVersionId);
  if (!version) return null;
  const [row] = await db()
    .select({ scene: scenes, projectName: projects.name })
    .from(scenes)
    .innerJoin(projects, eq(projects.id, scenes.projectId))
    .where(eq(scenes.id, version.sceneId));
  return row ? { version, scene: row.scene, projectName: row.projectName } : null;
}

export type ForkChild = { scene: SceneRow; projectName: string; fromVersionId: string };

/** Scenes forked from any version of this scene (for the version graph). */
export async function listForks(sceneId: string): Promise<ForkChild[]> {
  const versions = await db().select({ id: sceneVersions.id }).from(sceneVersions).where(eq(sceneVersions.sceneId, sceneId));
  if (versions.length === 0) return [];
  const rows = await db()
    .select({ scene: scenes, projectName: projects.name })
    .from(scenes)
    .innerJoin(projects, eq(projects.id, scenes.projectId))
    .where(inArray(scenes.forkedFromVersionId, versions.map((v) => v.id)))
    .orderBy(asc(scenes.createdAt));
  return rows.map((r) => ({ scene: r.scene, projectName: r.projectName, fromVersionId: r.scene.forkedFromVersionId! }));
}

export async function renameScene(sceneId: string, name: string): Promise<SceneRow | null> {
  const trimmed = name.trim();
  if (!trimmed) return null;
  const [row] = await db().update(scenes).set({ name: trimmed, updatedAt: new Date() }).where(eq(scenes.id, sceneId)).returning();
  return row ?? null;
}
