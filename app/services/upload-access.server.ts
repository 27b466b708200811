// Who may touch a staged upload: a member who may still do what it is for (keep renders for a render, upload
// for an asset), and only the person who started it. Everyone else gets the same 404 as for an id that does
// not exist, so upload ids reveal nothing.
import { getUploadFor, type UploadRow } from "~/models/upload.server";
import { authorize, requireAccess, type Ability } from "./permissions.server";

export function uploadAbility(kind: UploadRow["kind"]): Ability {
  return kind === "asset" ? "upload" : "render";
}

export function uploadJson(status: number, body: Record<string, unknown>): Response {
  return Response.json(body, { status, headers: { "cache-control": "no-store" } });
}

export async function requireUpload(request: Request, projectId: string, uploadId: string): Promise<{ row: UploadRow; userId: string; projectId: string }> {
  const access = await requireAccess(request, { projectId }, "view");
  const row = await getUploadFor(access.projectId, uploadId, access.actor.user.id);
  const allowed = row ? await authorize(access.actor, { projectId: access.projectId }, uploadAbility(row.kind)) : null;
  if (!row || !allowed?.ok) throw uploadJson(404, { ok: false, error: "no such upload in this project" });
  return { row, userId: access.actor.user.id, projectId: access.projectId };
}
