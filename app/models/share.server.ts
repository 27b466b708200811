// Share links: a read-only window onto one scene version (and, if chosen, its published renders) for people
// outside the project. The token is 32 random bytes (256 bits) in base64url, so links cannot be guessed; a
// link stops working when revoked or past its expiry, and owners and editors can list and copy it again.
import { randomBytes } from "node:crypto";
import { and, desc, eq } from "drizzle-orm";
import { projects, scenes, sceneVersions, shareLinks, users } from "~/db/schema";
import { db } from "~/services/db.server";

export type ShareLinkRow = typeof shareLinks.$inferSelect;
export type ShareLinkListItem = ShareLinkRow & { sceneId: string; sceneName: string; versionNumber: number; creatorName: string | null };

export const SHARE_TOKEN = /^[A-Za-z0-9_-]{43}$/;

export function newShareToken(): string {
  return randomBytes(32).toString("base64url");
}

export function shareLinkState(link: Pick<ShareLinkRow, "revokedAt" | "expiresAt">, now = new Date()): "active" | "revoked" | "expired" {
  if (link.revokedAt) return "revoked";
  if (link.expiresAt && link.expiresAt.getTime() <= now.getTime()) return "expired";
  return "active";
}

export async function createShareLink(input: {
  projectId: string;
  versionId: string;
  label?: string;
  expiresAt?: Date | null;
  includeRenders?: boolean;
  createdBy: string | null;
}): Promise<ShareLinkRow | null> {
  // The version must belong to the project the link is created in.
  const [owner] = await db()
    .select({ projectId: scenes.projectId })
    .from(sceneVersions)
    .innerJoin(scenes, eq(scenes.id, sceneVersions.sceneId))
    .where(eq(sceneVersions.id, input.versionId));
  if (!owner || owner.projectId !== input.projectId) return null;
  const [row] = await db()
    .insert(shareLinks)
    .values({
      projectId: input.projectId,
      versionId: input.versionId,
      token: newShareToken(),
      label: input.label?.trim().slice(0, 200) ?? "",
      expiresAt: input.expiresAt ?? null,
      includeRenders: input.includeRenders ?? true,
      createdBy: input.createdBy,
    })
    .returning();
  return row ?? null;
}

export async function listShareLinks(projectId: string): Promise<ShareLinkListItem[]> {
  const rows = await db()
    .select({ link: shareLinks, sceneId: scenes.id, sceneName: scenes.name, versionNumber: sceneVersions.number, creatorName: users.name })
    .from(shareLinks)
    .innerJoin(sceneVersions, eq(sceneVersions.id, shareLinks.versionId))
    .innerJoin(scenes, eq(scenes.id, sceneVersions.sceneId))
    .leftJoin(users, eq(users.id, shareLinks.createdBy))
    .where(eq(shareLinks.projectId, projectId))
    .orderBy(desc(shareLinks.createdAt));
  return rows.map((r) => ({ ...r.link, sceneId: r.sceneId, sceneName: r.sceneName, versionNumber: r.versionNumber, creatorName: r.creatorName }));
}

export async function revokeShareLink(projectId: string, linkId: string): Promise<boolean> {
  const rows = await db()
    .update(shareLinks)
    .set({ revokedAt: new Date() })
    .where(and(eq(shareLinks.id, linkId), eq(shareLinks.projectId, projectId)))
    .returning({ id: shareLinks.id });
  return rows.length === 1;
}

export type OpenShare = {
  link: ShareLinkRow;
  projectName: string;
  scene: { id: string; name: string };
  version: { id: string; number: number; message: string; createdAt: Date; scene: Record<string, unknown>; authorName: string | null };
};

/** The version behind a token, or null for an unknown, revoked or expired link (all look the same outside). */
export async function openShareLink(token: string, now = new Date()): Promise<OpenShare | null> {
  if (!SHARE_TOKEN.test(token)) return null;
  const [row] = await db()
    .select({ link: shareLinks, projectName: projects.name, scene: { id: scenes.id, name: scenes.name }, version: sceneVersions, authorName: users.name })
    .from(shareLinks)
    .innerJoin(projects, eq(projects.id, shareLinks.projectId))
    .innerJoin(sceneVersions, eq(sceneVersions.id, shareLinks.versionId))
    .innerJoin(scenes, eq(scenes.id, sceneVersions.sceneId))
    .leftJoin(users, eq(users.id, sceneVersions.authorId))
    .where(eq(shareLinks.token, token));
  if (!row || shareLinkState(row.link, now) !== "active") return null;
  return {
    link: row.link,
    projectName: row.projectName,
    scene: row.scene,
    version: {
      id: row.version.id,
      number: row.version.number,
      message: row.version.message,
      createdAt: row.version.createdAt,
      scene: row.version.scene,
      authorName: row.authorName,
    },
  };
}
