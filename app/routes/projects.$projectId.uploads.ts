// POST JSON: start a staged upload (app/models/upload.server.ts explains the steps; the browser side is
// app/lib/upload.client.ts). A render:
//   { kind: "render", sceneId, meta: {versionId, spp, seed, width, height, …, groups}, files: [{ slot: "pfm", bytes, sha256 }, …] }
// an asset: { kind: "asset", name: "kettle.obj", bytes, sha256 }.
// Answers { ok: true, upload: { id, files: [{ slot, name, bytes, url }] } }, or for an asset this project already
// has { ok: true, stored: { sha256, ref, … } }, or { ok: false, error, field } naming the file or field at fault.
// Size limits are checked here, so an oversized file is refused before any of its bytes are sent.
import { assetRef } from "~/models/asset.server";
import { startUpload } from "~/models/upload.server";
import { BodyTooLargeError, readBodyLimited } from "~/services/body-limit.server";
import { requireAccess } from "~/services/permissions.server";
import { uploadAbility, uploadJson } from "~/services/upload-access.server";
import type { Route } from "./+types/projects.$projectId.uploads";

/** A start request is a description of files, never their bytes. */
const START_BODY_LIMIT = 64 * 1024;

export async function loader() {
  return uploadJson(405, { ok: false, error: "POST a JSON description of the files to upload" });
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return uploadJson(405, { ok: false, error: "only POST" });
  let raw: unknown = null;
  let bodyError: string | null = null;
  try {
    raw = JSON.parse(new TextDecoder().decode(await readBodyLimited(request, START_BODY_LIMIT)));
  } catch (e) {
    bodyError = e instanceof BodyTooLargeError ? `the description is more than ${START_BODY_LIMIT} bytes` : "the body must be a JSON object";
  }
  const kind = raw && typeof raw === "object" && "kind" in raw && raw.kind === "asset" ? "asset" : "render";
  const access = await requireAccess(request, { projectId: params.projectId }, uploadAbility(kind));
  if (bodyError) return uploadJson(400, { ok: false, error: bodyError });
  const started = await startUpload(access.projectId, access.actor.user.id, raw);
  if (!started.ok) return uploadJson(started.status, started);
  if ("stored" in started) {
    const a = started.stored;
    return uploadJson(200, { ok: true, stored: { sha256: a.sha256, ref: assetRef(a.sha256), name: a.name, kind: a.kind, bytes: a.bytes, facts: a.facts } });
  }
  const base = `/projects/${access.projectId}/uploads/${started.upload.id}`;
  return uploadJson(201, {
    ok: true,
    upload: {
      id: started.upload.id,
      files: started.upload.files.map((f) => ({ ...f, url: `${base}/files/${f.slot}` })),
      finishUrl: `${base}/finish`,
      cancelUrl: `${base}/cancel`,
    },
  });
}
