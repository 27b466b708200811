// GET /api/v1/projects/:projectId/scenes — the scenes of a project, newest first, cursor-paginated.
import { pageScenes } from "~/models/api-listing.server";
import { TimeIdCursor, apiHandler, decodeCursor, idParam, methodNotAllowed, pageResponse, parseQuery, requireAbility, slicePage } from "~/services/api.server";
import { presentScene } from "~/services/api-present.server";
import { PageQuerySchema } from "~/services/api-schemas.server";
import { db } from "~/services/db.server";

export const loader = apiHandler(async ({ request, params, actor }) => {
  const projectId = idParam(params, "projectId", "project");
  await requireAbility(actor, { projectId }, "view", `project ${projectId}`);
  const q = parseQuery(request, PageQuerySchema);
  const after = decodeCursor(q.cursor, TimeIdCursor);
  const rows = await pageScenes(db(), projectId, q.limit, after ? { at: after[0], id: after[1] } : undefined);
  const page = slicePage(rows, q.limit, (r) => [r.key, r.scene.id]);
  return pageResponse(request, page.items.map((r) => presentScene(r.scene)), page.nextCursor);
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
