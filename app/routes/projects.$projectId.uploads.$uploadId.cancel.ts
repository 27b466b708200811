// POST (no body): give up a staged upload. Its staged files are deleted and it can no longer be finished.
// Answers { ok: true, status } with the upload's state afterwards ("failed", or "finished" if it was too late).
import { cancelUpload } from "~/models/upload.server";
import { requireUpload, uploadJson } from "~/services/upload-access.server";
import type { Route } from "./+types/projects.$projectId.uploads.$uploadId.cancel";

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return uploadJson(405, { ok: false, error: "only POST" });
  const { row } = await requireUpload(request, params.projectId, params.uploadId);
  return uploadJson(200, await cancelUpload(row));
}
