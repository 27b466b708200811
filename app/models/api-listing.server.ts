// Keyset-paginated lists for API v1. Pages are cut by (created_at, id) or by version number rather than by
// offset, so a pipeline walking a long list never skips or repeats a row when new ones arrive meanwhile.
// Cursors carry PostgreSQL's own text form of the time stamp (microseconds), not a JavaScript Date
// (milliseconds), so rows created within the same millisecond are still ordered exactly.
import { and, desc, eq, lt, or, sql, type SQL } from "drizzle-orm";
import type { AnyPgColumn } from "drizzle-orm/pg-core";
import { memberships, projects, renders, scenes, sceneVersions } from "~/db/schema";
import type { Database } from "~/services/db.server";

export type TimeKey = { at: string; id: string };

const keyText = (col: AnyPgColumn) => sql<string>`${col}::text`;

function before(createdAt: AnyPgColumn, id: AnyPgColumn, key: TimeKey | undefined): SQL | undefined {
  if (!key) return undefined;
  return or(lt(createdAt, sql`${key.at}::timestamptz`), and(eq(createdAt, sql`${key.at}::timestamptz`), lt(id, key.id)));
}

export async function pageProjectsForUser(db: Database, userId: string, limit: number, after?: TimeKey) {
  return db
    .select({ project: projects, role: memberships.role, key: keyText(projects.createdAt) })
    .from(memberships)
    .innerJoin(projects, eq(projects.id, memberships.projectId))
    .where(and(eq(memberships.userId, userId), before(projects.createdAt, projects.id, after)))
    .orderBy(desc(projects.createdAt), desc(projects.id))
    .limit(limit + 1);
}

export async function pageScenes(db: Database, projectId: string, limit: number, after?: TimeKey) {
  return db
    .select({ scene: scenes, key: keyText(scenes.createdAt) })
    .from(scenes)
    .where(and(eq(scenes.projectId, projectId), before(scenes.createdAt, scenes.id, after)))
    .orderBy(desc(scenes.createdAt), desc(scenes.id))
    .limit(limit + 1);
}

/** Version summaries (no scene document), newest first. */
export async function pageVersions(db: Database, sceneId: string, limit: number, beforeNumber?: number) {
  return db
    .select({
      id: sceneVersions.id,
      sceneId: sceneVersions.sceneId,
      number: sceneVersions.number,
      parentId: sceneVersions.parentId,
      kind: sceneVersions.kind,
      message: sceneVersions.message,
      authorId: sceneVersions.authorId,
      createdAt: sceneVersions.createdAt,
    })
    .from(sceneVersions)
    .where(and(eq(sceneVersions.sceneId, sceneId), beforeNumber === undefined ? undefined : lt(sceneVersions.number, beforeNumber)))
    .orderBy(desc(sceneVersions.number))
    .limit(limit + 1);
}

export type RenderListFilters = {
  status?: (typeof renders.$inferSelect)["status"];
  source?: (typeof renders.$inferSelect)["source"];
  sceneId?: string;
  versionId?: string;
};

export async function pageRenders(db: Database, projectId: string, filters: RenderListFilters, limit: number, after?: TimeKey) {
  return db
    .select({ render: renders, key: keyText(renders.createdAt) })
    .from(renders)
    .where(
      and(
        eq(renders.projectId, projectId),
        filters.status ? eq(renders.status, filters.status) : undefined,
        filters.source ? eq(renders.source, filters.source) : undefined,
        filters.sceneId ? eq(renders.sceneId, filters.sceneId) : undefined,
        filters.versionId ? eq(renders.versionId, filters.versionId) : undefined,
        before(renders.createdAt, renders.id, after),
      ),
    )
    .orderBy(desc(renders.createdAt), desc(renders.id))
    .limit(limit + 1);
}
