// GET a stored render file: pfm, hdr, png, thumb, state, or group-<name>. Images are served inline (the
// library's thumbnails and the compare page use them); ?download=1 asks the browser to save the file.
import { data } from "react-router";
import { decodePfm } from "@tracer/io/pfm";
import { validateScene } from "@tracer/scene/validate";
import { thumbnailPng } from "~/lib/render-outputs";
import { getRender } from "~/models/render.server";
import { getVersion } from "~/models/scene.server";
import { getObjectBytes } from "~/services/storage.server";
import { downloadName, parseRenderFile, readRenderFile, RENDER_FILE_TYPES } from "~/services/render-files.server";
import { requireInProject } from "~/services/project-access.server";
import type { Route } from "./+types/projects.$projectId.renders.$renderId.files.$file";

/** Renders from the pool may arrive without a thumbnail: make one from the linear image and the version's display. */
async function thumbnailFromLinear(pfmKey: string, versionId: string): Promise<Uint8Array | null> {
  const version = await getVersion(versionId);
  const checked = version ? validateScene(version.scene) : null;
  if (!checked?.ok) return null;
  return thumbnailPng(decodePfm(await getObjectBytes(pfmKey)), checked.scene.display);
}

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireInProject(request, params.projectId, { renderId: params.renderId }, "view");
  const render = await getRender(params.renderId);
  const kind = parseRenderFile(params.file);
  if (!render || !kind) throw data("No such file", { status: 404 });
  let bytes = await readRenderFile(render.files, kind);
  if (!bytes && kind === "thumb" && render.files.pfm) bytes = await thumbnailFromLinear(render.files.pfm, render.versionId);
  if (!bytes) throw data("This render has no such file", { status: 404 });
  const type = typeof kind === "string" ? RENDER_FILE_TYPES[kind].contentType : RENDER_FILE_TYPES.pfm.contentType;
  const name = downloadName(`${render.sceneName}-v${render.versionNumber}-${render.id.slice(0, 8)}`, kind);
  const download = new URL(request.url).searchParams.has("download") || !(kind === "png" || kind === "thumb");
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), {
    headers: {
      "Content-Type": type,
      "Content-Length": String(bytes.length),
      "Content-Disposition": `${download ? "attachment" : "inline"}; filename="${name}"`,
      // Stored render files never change.
      "Cache-Control": "private, max-age=31536000, immutable",
    },
  });
}
