// POST (no body): publish a staged upload once every file has arrived. Answers
// { ok: true, render: { id, accumulationHash, url } } or { ok: true, asset: {…}, created },
// or { ok: false, error } — in which case nothing was published and the staged files are gone.
import { logActivity } from "~/models/activity.server";
import { assetRef } from "~/models/asset.server";
import { finishUpload } from "~/models/upload.server";
import { requireUpload, uploadJson } from "~/services/upload-access.server";
import type { Route } from "./+types/projects.$projectId.uploads.$uploadId.finish";

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return uploadJson(405, { ok: false, error: "only POST" });
  const { row, userId, projectId } = await requireUpload(request, params.projectId, params.uploadId);
  const result = await finishUpload(row);
  if (!result.ok) return uploadJson(result.status, result);
  if (result.kind === "render") {
    const r = result.render;
    await logActivity(projectId, userId, "render.published", { renderId: r.id, sceneId: r.sceneId, versionId: r.versionId });
    return uploadJson(200, { ok: true, render: { id: r.id, accumulationHash: r.accumulationHash, url: `/projects/${projectId}/renders?render=${r.id}` } });
  }
  const a = result.asset;
  if (result.created) await logActivity(projectId, userId, "asset.uploaded", { sha256: a.sha256, name: a.name });
  return uploadJson(200, { ok: true, created: result.created, asset: { sha256: a.sha256, ref: assetRef(a.sha256), name: a.name, kind: a.kind, bytes: a.bytes, facts: a.facts } });
}
