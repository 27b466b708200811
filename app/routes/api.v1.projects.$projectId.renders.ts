// GET /api/v1/projects/:projectId/renders — renders of a project, newest first, cursor-paginated, with
// optional filters ?status=&source=&sceneId=&versionId=.
import { pageRenders } from "~/models/api-listing.server";
import { TimeIdCursor, apiHandler, decodeCursor, idParam, methodNotAllowed, pageResponse, parseQuery, requireAbility, slicePage } from "~/services/api.server";
import { presentRender } from "~/services/api-present.server";
import { RenderListQuerySchema } from "~/services/api-schemas.server";
import { db } from "~/services/db.server";

export const loader = apiHandler(async ({ request, params, actor }) => {
  const projectId = idParam(params, "projectId", "project");
  await requireAbility(actor, { projectId }, "view", `project ${projectId}`);
  const q = parseQuery(request, RenderListQuerySchema);
  const after = decodeCursor(q.cursor, TimeIdCursor);
  const rows = await pageRenders(
    db(),
    projectId,
    { status: q.status, source: q.source, sceneId: q.sceneId, versionId: q.versionId },
    q.limit,
    after ? { at: after[0], id: after[1] } : undefined,
  );
  const page = slicePage(rows, q.limit, (r) => [r.key, r.render.id]);
  return pageResponse(request, page.items.map((r) => presentRender(r.render)), page.nextCursor);
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
