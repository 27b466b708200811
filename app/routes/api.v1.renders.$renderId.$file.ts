// GET /api/v1/renders/:renderId/image.png | image.hdr | image.pfm | state.bin — the files of a finished render.
// Finished renders never change, so each file has a strong ETag.
import { getRender } from "~/models/render.server";
import { ApiError, apiHandler, etagMatches, idParam, immutableHeaders, methodNotAllowed, notFound, notModified, requireAbility } from "~/services/api.server";
import { RENDER_FILE_TYPES, downloadName, readRenderFile, type RenderFileKind } from "~/services/render-files.server";

const FILES: Record<string, RenderFileKind> = { "image.png": "png", "image.hdr": "hdr", "image.pfm": "pfm", "state.bin": "state" };

export const loader = apiHandler(async ({ request, params, actor }) => {
  const renderId = idParam(params, "renderId", "render");
  const kind = FILES[params.file ?? ""];
  if (!kind) throw notFound(`file ${params.file ?? ""} (use image.png, image.hdr, image.pfm or state.bin)`);
  await requireAbility(actor, { renderId }, "view", `render ${renderId}`);
  const render = await getRender(renderId);
  if (!render) throw notFound(`render ${renderId}`);
  if (render.status !== "done") {
    throw new ApiError(409, "not_ready", `render ${renderId} is ${render.status} (${render.sppDone} of ${render.spp} spp); files exist once it is done`);
  }
  const etag = `"${renderId}-${kind}-${render.accumulationHash ?? "none"}"`;
  if (etagMatches(request, etag)) return notModified(etag);
  const bytes = await readRenderFile(render.files, kind);
  if (!bytes) throw notFound(`${params.file} of render ${renderId}`);
  const name = downloadName(`${render.sceneName}-v${render.versionNumber}-${renderId.slice(0, 8)}`, kind);
  // slice(): a copy on its own ArrayBuffer, the body type fetch expects
  return new Response(bytes.slice(), {
    headers: {
      ...immutableHeaders(etag),
      "Content-Type": RENDER_FILE_TYPES[kind].contentType,
      "Content-Length": String(bytes.byteLength),
      "Content-Disposition": `attachment; filename="${name}"`,
    },
  });
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
