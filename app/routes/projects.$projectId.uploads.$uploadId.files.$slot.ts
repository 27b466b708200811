// PUT the raw bytes of one declared file of a staged upload. The body is streamed to object storage through
// a byte counter and a SHA-256, never buffered whole; more or fewer bytes than declared, a wrong hash or
// header, or the connection dropping fails the whole upload (nothing staged is kept).
// Answers { ok: true, slot, bytes, sha256 } or { ok: false, error }.
import { receiveUploadFile } from "~/models/upload.server";
import { requireUpload, uploadJson } from "~/services/upload-access.server";
import type { Route } from "./+types/projects.$projectId.uploads.$uploadId.files.$slot";

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "PUT") return uploadJson(405, { ok: false, error: "only PUT" });
  const { row } = await requireUpload(request, params.projectId, params.uploadId);
  const header = request.headers.get("content-length");
  const declared = header !== null && /^\d+$/.test(header) ? Number(header) : null;
  const result = await receiveUploadFile(row, params.slot, request.body, declared);
  return uploadJson(result.ok ? 200 : result.status, result);
}
