// GET /api/v1/projects — the projects the caller is a member of, newest first, cursor-paginated.
import { pageProjectsForUser } from "~/models/api-listing.server";
import { TimeIdCursor, apiHandler, decodeCursor, methodNotAllowed, pageResponse, parseQuery, slicePage } from "~/services/api.server";
import { presentProject } from "~/services/api-present.server";
import { PageQuerySchema } from "~/services/api-schemas.server";
import { db } from "~/services/db.server";

export const loader = apiHandler(async ({ request, actor }) => {
  const q = parseQuery(request, PageQuerySchema);
  const after = decodeCursor(q.cursor, TimeIdCursor);
  const rows = await pageProjectsForUser(db(), actor.user.id, q.limit, after ? { at: after[0], id: after[1] } : undefined);
  const page = slicePage(rows, q.limit, (r) => [r.key, r.project.id]);
  return pageResponse(request, page.items.map((r) => presentProject(r.project, r.role)), page.nextCursor);
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
