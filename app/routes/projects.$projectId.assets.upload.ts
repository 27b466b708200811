// POST the raw bytes of one small OBJ or .hdr file (?name=kettle.obj) in one request (scripts, tests). Answers
// JSON { ok, asset } or { ok: false, error } whose message names the line (OBJ) or byte (HDR) at fault.
// The Assets tab's drop zone uses staged uploads instead (/projects/:id/uploads), which stream any file up to
// the full asset limit without holding it in the server's memory.
import { logActivity } from "~/models/activity.server";
import { AssetError, assetRef, uploadAsset } from "~/models/asset.server";
import { BodyTooLargeError, readBodyLimited } from "~/services/body-limit.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId.assets.upload";

/** This path holds the body in memory, so it takes only small files; the staged upload takes up to LIMITS.maxAssetBytes. */
const ONE_REQUEST_ASSET_BYTES = 32 * 1024 * 1024;

function fail(status: number, error: string) {
  return Response.json({ ok: false, error }, { status });
}

export async function action({ request, params }: Route.ActionArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "upload");
  const name = (new URL(request.url).searchParams.get("name") ?? "").trim();
  if (!name) return fail(400, "name: the file name is required (?name=…)");
  let bytes: Uint8Array;
  try {
    bytes = await readBodyLimited(request, ONE_REQUEST_ASSET_BYTES);
  } catch (e) {
    if (e instanceof BodyTooLargeError) return fail(413, `${name}: more than the ${ONE_REQUEST_ASSET_BYTES}-byte limit of a one-request upload; drop it on the Assets tab (a staged upload) instead`);
    throw e;
  }
  try {
    const { asset, created } = await uploadAsset({ projectId: access.projectId, name, bytes, uploadedBy: access.actor.user.id });
    if (created) await logActivity(access.projectId, access.actor.user.id, "asset.uploaded", { sha256: asset.sha256, name: asset.name });
    return Response.json({ ok: true, created, asset: { sha256: asset.sha256, ref: assetRef(asset.sha256), name: asset.name, kind: asset.kind, bytes: asset.bytes, facts: asset.facts } });
  } catch (e) {
    if (e instanceof AssetError) return fail(e.status, e.message);
    throw e;
  }
}

export async function loader() {
  return fail(405, "POST the file's bytes here");
}
