// GET    /api/v1/renders/:renderId — status, progress (spp done of target), chunks of pool renders and, when
//        done, links to the files.
// DELETE /api/v1/renders/:renderId — cancel a queued or running pool render; workers stop its chunks.
import { cancelPoolRender, getPoolRender, listChunks } from "~/models/render-job.server";
import { ApiError, apiHandler, idParam, json, methodNotAllowed, notFound, requireAbility } from "~/services/api.server";
import { presentRender } from "~/services/api-present.server";
import { db } from "~/services/db.server";

export const loader = apiHandler(async ({ params, actor }) => {
  const renderId = idParam(params, "renderId", "render");
  await requireAbility(actor, { renderId }, "view", `render ${renderId}`);
  const render = await getPoolRender(db(), renderId);
  if (!render) throw notFound(`render ${renderId}`);
  const chunks = render.source === "pool" ? await listChunks(db(), renderId) : undefined;
  return json(presentRender(render, chunks));
});

export const action = apiHandler(async ({ request, params, actor }) => {
  if (request.method !== "DELETE") throw methodNotAllowed(["GET", "DELETE"]);
  const renderId = idParam(params, "renderId", "render");
  await requireAbility(actor, { renderId }, "render", `render ${renderId}`);
  const render = await getPoolRender(db(), renderId);
  if (!render) throw notFound(`render ${renderId}`);
  if (!(await cancelPoolRender(db(), renderId))) {
    throw new ApiError(409, "not_running", `render ${renderId} is ${render.status}; only queued or running renders can be cancelled`);
  }
  const after = await getPoolRender(db(), renderId);
  return json(presentRender(after ?? render, await listChunks(db(), renderId)));
});
