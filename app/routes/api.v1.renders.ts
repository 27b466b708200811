// POST /api/v1/renders — queue a render on the server pool: 202 and the render job. Either
//   { versionId, spp, seed?, width?, height?, chunkPasses?, title? } to render a version, or
//   { continueFrom, spp?, chunkPasses?, title? } to take a finished render (a browser preview, say) with stored
//   accumulation state from its N passes on to spp, rendering only passes [N, spp).
import { ApiError, apiHandler, json, methodNotAllowed, parseJsonBody } from "~/services/api.server";
import { presentRender, renderPath } from "~/services/api-present.server";
import { CreateRenderBodySchema } from "~/services/api-schemas.server";
import { submitPoolRender } from "~/services/pool-submit.server";

export const action = apiHandler(async ({ request, actor }) => {
  if (request.method !== "POST") throw methodNotAllowed(["POST"]);
  const body = await parseJsonBody(request, CreateRenderBodySchema);
  const render = await submitPoolRender(actor, body);
  return json(presentRender(render), { status: 202, headers: { Location: renderPath(render.id) } });
});

export const loader = apiHandler(async () => {
  throw new ApiError(405, "method_not_allowed", "list renders with GET /api/v1/projects/{projectId}/renders", { headers: { Allow: "POST" } });
});
