// GET /api/v1/renders/:renderId/groups/:group.pfm — the mean radiance of one light group of a finished render.
import { getRender } from "~/models/render.server";
import { ApiError, apiHandler, etagMatches, idParam, immutableHeaders, methodNotAllowed, notFound, notModified, requireAbility } from "~/services/api.server";
import { RENDER_FILE_TYPES, downloadName, readRenderFile } from "~/services/render-files.server";

export const loader = apiHandler(async ({ request, params, actor }) => {
  const renderId = idParam(params, "renderId", "render");
  const m = /^([A-Za-z0-9_-]{1,64})\.pfm$/.exec(params.group ?? "");
  if (!m) throw notFound(`light group file ${params.group ?? ""} (use <group>.pfm)`);
  const group = m[1];
  await requireAbility(actor, { renderId }, "view", `render ${renderId}`);
  const render = await getRender(renderId);
  if (!render) throw notFound(`render ${renderId}`);
  if (render.status !== "done") {
    throw new ApiError(409, "not_ready", `render ${renderId} is ${render.status} (${render.sppDone} of ${render.spp} spp); files exist once it is done`);
  }
  if (!render.files.groups?.[group]) {
    const known = Object.keys(render.files.groups ?? {});
    throw notFound(`light group "${group}" of render ${renderId}${known.length ? ` (it has ${known.join(", ")})` : ""}`);
  }
  const etag = `"${renderId}-group-${group}-${render.accumulationHash ?? "none"}"`;
  if (etagMatches(request, etag)) return notModified(etag);
  const bytes = await readRenderFile(render.files, { group });
  if (!bytes) throw notFound(`light group "${group}" of render ${renderId}`);
  const name = downloadName(`${render.sceneName}-v${render.versionNumber}-${renderId.slice(0, 8)}`, { group });
  // slice(): a copy on its own ArrayBuffer, the body type fetch expects
  return new Response(bytes.slice(), {
    headers: {
      ...immutableHeaders(etag),
      "Content-Type": RENDER_FILE_TYPES.pfm.contentType,
      "Content-Length": String(bytes.byteLength),
      "Content-Disposition": `attachment; filename="${name}"`,
    },
  });
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
