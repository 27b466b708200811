// Renders: the pictures a team keeps. A browser render is published in one step (files first, then one row
// that points at them); a pool render is created queued, advances through updateRenderProgress and becomes
// visible in the library only when completeRender records its files.
import { randomUUID } from "node:crypto";
import { and, asc, count, desc, eq, gte, inArray, lte, sql, type SQL } from "drizzle-orm";
import { z } from "zod";
import { renders, scenes, sceneVersions, users, type RenderFiles } from "~/db/schema";
import { getScene, getVersion } from "~/models/scene.server";
import type { Scene } from "@tracer/scene/schema";
import { validateScene } from "@tracer/scene/validate";
import { db } from "~/services/db.server";
import { deleteRenderFiles, storeRenderFiles, type RenderFileBytes } from "~/services/render-files.server";

export type RenderRow = typeof renders.$inferSelect;
export type RenderStatus = RenderRow["status"];
export type RenderListItem = RenderRow & {
  sceneName: string;
  versionNumber: number;
  authorName: string | null;
};

export type CreateRenderInput = {
  projectId: string;
  sceneId: string;
  versionId: string;
  source: RenderRow["source"];
  title?: string;
  spp: number;
  seed: number;
  width: number;
  height: number;
  integrator: string;
  tracerVersion: string;
  createdBy: string | null;
  continuedFromId?: string | null;
  status?: RenderStatus;
};

function isUuid(s: string): boolean {
  return /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(s);
}

export async function createRender(input: CreateRenderInput): Promise<RenderRow> {
  const [row] = await db()
    .insert(renders)
    .values({
      projectId: input.projectId,
      sceneId: input.sceneId,
      versionId: input.versionId,
      source: input.source,
      status: input.status ?? "queued",
      title: input.title ?? "",
      spp: input.spp,
      seed: input.seed,
      width: input.width,
      height: input.height,
      integrator: input.integrator,
      tracerVersion: input.tracerVersion,
      createdBy: input.createdBy,
      continuedFromId: input.continuedFromId ?? null,
    })
    .returning();
  return row!;
}

export async function getRender(renderId: string): Promise<RenderListItem | null> {
  if (!isUuid(renderId)) return null;
  const [row] = await db()
    .select({ render: renders, sceneName: scenes.name, versionNumber: sceneVersions.number, authorName: users.name })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .innerJoin(sceneVersions, eq(sceneVersions.id, renders.versionId))
    .leftJoin(users, eq(users.id, renders.createdBy))
    .where(eq(renders.id, renderId));
  return row ? { ...row.render, sceneName: row.sceneName, versionNumber: row.versionNumber, authorName: row.authorName } : null;
}

export async function updateRenderProgress(renderId: string, progress: { sppDone: number; status?: RenderStatus }): Promise<void> {
  await db()
    .update(renders)
    .set({ sppDone: progress.sppDone, ...(progress.status ? { status: progress.status } : {}) })
    .where(eq(renders.id, renderId));
}

export type CompleteRenderInput = {
  accumulationHash: string;
  renderMs: number;
  samplesPerSecond: number;
  sppDone: number;
  files: RenderFiles;
};

export async function completeRender(renderId: string, done: CompleteRenderInput): Promise<RenderRow | null> {
  const [row] = await db()
    .update(renders)
    .set({
      status: "done",
      accumulationHash: done.accumulationHash,
      renderMs: Math.round(done.renderMs),
      samplesPerSecond: done.samplesPerSecond,
      sppDone: done.sppDone,
      files: done.files,
      finishedAt: new Date(),
      error: null,
    })
    .where(eq(renders.id, renderId))
    .returning();
  return row ?? null;
}

export async function failRender(renderId: string, error: string, status: Extract<RenderStatus, "failed" | "cancelled"> = "failed"): Promise<void> {
  await db().update(renders).set({ status, error, finishedAt: new Date() }).where(eq(renders.id, renderId));
}

// ---------------------------------------------------------------------------------------------
// publishing a finished browser render

export const PublishMetadataSchema = z.strictObject({
  versionId: z.uuid({ message: "must be a version id" }),
  title: z.string().max(200).default(""),
  spp: z.number().int().min(1),
  seed: z.number().int().min(0).max(0xffffffff),
  width: z.number().int().min(1),
  height: z.number().int().min(1),
  integrator: z.string().min(1).max(32),
  tracerVersion: z.string().min(1).max(64),
  accumulationHash: z.string().regex(/^([a-z0-9]{1,16}:)?[0-9a-f]{8,128}$/, { message: 'must be a hash like "fnv1a64:0123456789abcdef"' }),
  renderMs: z.number().min(0),
  samplesPerSecond: z.number().min(0),
  groups: z.array(z.string().regex(/^[A-Za-z0-9_-]{1,64}$/)).max(16).default([]),
});
export type PublishMetadata = z.output<typeof PublishMetadataSchema>;

export type PublishInput = {
  projectId: string;
  sceneId: string;
  meta: PublishMetadata;
  files: RenderFileBytes;
  createdBy: string | null;
  source?: RenderRow["source"];
};

/**
 * Objects first, then one row: a reader either finds no render at all or a render whose files all exist.
 * If the row cannot be written the objects are removed again.
 */
export async function publishRender(input: PublishInput): Promise<RenderRow> {
  const id = randomUUID();
  const files = await storeRenderFiles(id, input.files);
  try {
    return await db().transaction(async (tx) => {
      const [row] = await tx.insert(renders).values(publishedRenderValues(id, { ...input, files })).returning();
      return row!;
    });
  } catch (err) {
    await deleteRenderFiles(files);
    throw err;
  }
}

/** The row of a finished, published render whose files are already stored at `files`. */
export function publishedRenderValues(
  id: string,
  input: Omit<PublishInput, "files"> & { files: RenderFiles },
): typeof renders.$inferInsert {
  return {
    id,
    projectId: input.projectId,
    sceneId: input.sceneId,
    versionId: input.meta.versionId,
    source: input.source ?? "browser",
    status: "done",
    title: input.meta.title,
    spp: input.meta.spp,
    sppDone: input.meta.spp,
    seed: input.meta.seed,
    width: input.meta.width,
    height: input.meta.height,
    integrator: input.meta.integrator,
    tracerVersion: input.meta.tracerVersion,
    accumulationHash: input.meta.accumulationHash,
    renderMs: Math.round(input.meta.renderMs),
    samplesPerSecond: input.meta.samplesPerSecond,
    files: input.files,
    createdBy: input.createdBy,
    finishedAt: new Date(),
  };
}

export type PublishTargetCheck =
  | { ok: true; sceneId: string; versionId: string; display: Scene["display"] }
  | { ok: false; status: 400 | 404; error: string; field: string };

/**
 * Whether `meta` describes a render of a version of `sceneId` in `projectId`: the version is the scene's,
 * still validates, and its image size and integrator are the ones claimed. Used before any byte is stored.
 */
export async function checkPublishTarget(projectId: string, sceneId: string, meta: PublishMetadata): Promise<PublishTargetCheck> {
  const scene = isUuid(sceneId) ? await getScene(sceneId) : null;
  if (!scene || scene.projectId !== projectId) return { ok: false, status: 404, error: "no such scene in this project", field: "sceneId" };
  const version = await getVersion(meta.versionId);
  if (!version || version.sceneId !== scene.id) return { ok: false, status: 400, error: "meta.versionId: not a version of this scene", field: "meta.versionId" };
  const checked = validateScene(version.scene);
  if (!checked.ok) return { ok: false, status: 400, error: "the version's scene no longer validates", field: "meta.versionId" };
  const { image, render: settings, display } = checked.scene;
  if (meta.width !== image.width || meta.height !== image.height) {
    return { ok: false, status: 400, error: `meta.width/height: ${meta.width}×${meta.height} does not match the version's image ${image.width}×${image.height}`, field: "meta.width" };
  }
  if (meta.integrator !== settings.integrator) {
    return { ok: false, status: 400, error: `meta.integrator: "${meta.integrator}" does not match the version's integrator "${settings.integrator}"`, field: "meta.integrator" };
  }
  return { ok: true, sceneId: scene.id, versionId: version.id, display };
}

export async function deleteRender(renderId: string): Promise<boolean> {
  const [row] = await db().delete(renders).where(eq(renders.id, renderId)).returning();
  if (!row) return false;
  await deleteRenderFiles(row.files);
  return true;
}

// ---------------------------------------------------------------------------------------------
// the library

export const RENDER_SORTS = ["date", "spp", "scene", "author", "integrator", "time"] as const;
export type RenderSort = (typeof RENDER_SORTS)[number];

export const RenderFiltersSchema = z.object({
  sceneId: z.uuid().optional().catch(undefined),
  authorId: z.uuid().optional().catch(undefined),
  integrator: z.string().max(32).optional().catch(undefined),
  minSpp: z.coerce.number().int().min(1).optional().catch(undefined),
  maxSpp: z.coerce.number().int().min(1).optional().catch(undefined),
  from: z.iso.date().optional().catch(undefined),
  to: z.iso.date().optional().catch(undefined),
  status: z.enum(["queued", "running", "done", "failed", "cancelled", "any"]).default("done").catch("done"),
  sort: z.enum(RENDER_SORTS).default("date").catch("date"),
  dir: z.enum(["asc", "desc"]).default("desc").catch("desc"),
});
export type RenderFilters = z.output<typeof RenderFiltersSchema>;

/** Reads filters from a URL's query, ignoring (not failing on) malformed values. */
export function parseRenderFilters(params: URLSearchParams): RenderFilters {
  const raw: Record<string, string> = {};
  for (const [k, v] of params) if (v !== "") raw[k] = v;
  return RenderFiltersSchema.parse(raw);
}

export type Page = { page: number; pageSize: number };

export async function listRenders(
  projectId: string,
  filters: Partial<RenderFilters> = {},
  page: Page = { page: 1, pageSize: 20 },
): Promise<{ rows: RenderListItem[]; total: number; page: number; pageSize: number }> {
  const f = RenderFiltersSchema.parse(filters);
  const where: SQL[] = [eq(renders.projectId, projectId)];
  if (f.status !== "any") where.push(eq(renders.status, f.status));
  if (f.sceneId) where.push(eq(renders.sceneId, f.sceneId));
  if (f.authorId) where.push(eq(renders.createdBy, f.authorId));
  if (f.integrator) where.push(eq(renders.integrator, f.integrator));
  if (f.minSpp) where.push(gte(renders.spp, f.minSpp));
  if (f.maxSpp) where.push(lte(renders.spp, f.maxSpp));
  if (f.from) where.push(gte(renders.createdAt, new Date(`${f.from}T00:00:00Z`)));
  if (f.to) where.push(sql`${renders.createdAt} < (${f.to}::date + 1)`);
  const cond = and(...where);

  const column = {
    date: renders.createdAt,
    spp: renders.spp,
    scene: scenes.name,
    author: users.name,
    integrator: renders.integrator,
    time: renders.renderMs,
  }[f.sort];
  const order = f.dir === "asc" ? asc(column) : desc(column);
  const pageSize = Math.min(100, Math.max(1, Math.floor(page.pageSize)));
  const pageNo = Math.max(1, Math.floor(page.page));

  const [totalRow] = await db()
    .select({ n: count() })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .leftJoin(users, eq(users.id, renders.createdBy))
    .where(cond);
  const rows = await db()
    .select({ render: renders, sceneName: scenes.name, versionNumber: sceneVersions.number, authorName: users.name })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .innerJoin(sceneVersions, eq(sceneVersions.id, renders.versionId))
    .leftJoin(users, eq(users.id, renders.createdBy))
    .where(cond)
    .orderBy(order, desc(renders.id))
    .limit(pageSize)
    .offset((pageNo - 1) * pageSize);
  return {
    rows: rows.map((r) => ({ ...r.render, sceneName: r.sceneName, versionNumber: r.versionNumber, authorName: r.authorName })),
    total: Number(totalRow?.n ?? 0),
    page: pageNo,
    pageSize,
  };
}

/** Published renders of given versions (share links show the renders of their version). */
export async function listRendersForVersions(versionIds: string[]): Promise<RenderListItem[]> {
  if (versionIds.length === 0) return [];
  const rows = await db()
    .select({ render: renders, sceneName: scenes.name, versionNumber: sceneVersions.number, authorName: users.name })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .innerJoin(sceneVersions, eq(sceneVersions.id, renders.versionId))
    .leftJoin(users, eq(users.id, renders.createdBy))
    .where(and(inArray(renders.versionId, versionIds), eq(renders.status, "done")))
    .orderBy(desc(renders.createdAt));
  return rows.map((r) => ({ ...r.render, sceneName: r.sceneName, versionNumber: r.versionNumber, authorName: r.authorName }));
}

/** Distinct values the library's filter menus offer. */
export async function renderFacets(projectId: string): Promise<{
  scenes: { id: string; name: string }[];
  authors: { id: string; name: string }[];
  integrators: string[];
}> {
  const sceneRows = await db()
    .selectDistinct({ id: scenes.id, name: scenes.name })
    .from(renders)
    .innerJoin(scenes, eq(scenes.id, renders.sceneId))
    .where(eq(renders.projectId, projectId));
  const authorRows = await db()
    .selectDistinct({ id: users.id, name: users.name })
    .from(renders)
    .innerJoin(users, eq(users.id, renders.createdBy))
    .where(eq(renders.projectId, projectId));
  const integratorRows = await db().selectDistinct({ integrator: renders.integrator }).from(renders).where(eq(renders.projectId, projectId));
  return {
    scenes: sceneRows.sort((a, b) => a.name.localeCompare(b.name)),
    authors: authorRows.sort((a, b) => a.name.localeCompare(b.name)),
    integrators: integratorRows.map((r) => r.integrator).sort(),
  };
}
