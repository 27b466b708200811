// GET  /api/v1/scenes/:sceneId/versions — version summaries, newest first, cursor-paginated.
// POST /api/v1/scenes/:sceneId/versions — a new version: 201, 409 when the parent is no longer the head,
//      422 with every validation problem named by its scene path.
import { pageVersions } from "~/models/api-listing.server";
import { saveVersion } from "~/models/scene.server";
import {
  ApiError,
  NumberCursor,
  apiHandler,
  decodeCursor,
  idParam,
  json,
  methodNotAllowed,
  notFound,
  pageResponse,
  parseJsonBody,
  parseQuery,
  requireAbility,
  slicePage,
  validationError,
} from "~/services/api.server";
import { presentVersion, presentVersionSummary } from "~/services/api-present.server";
import { CreateVersionBodySchema, PageQuerySchema } from "~/services/api-schemas.server";
import { db } from "~/services/db.server";

export const loader = apiHandler(async ({ request, params, actor }) => {
  const sceneId = idParam(params, "sceneId", "scene");
  await requireAbility(actor, { sceneId }, "view", `scene ${sceneId}`);
  const q = parseQuery(request, PageQuerySchema);
  const after = decodeCursor(q.cursor, NumberCursor);
  const rows = await pageVersions(db(), sceneId, q.limit, after?.[0]);
  const page = slicePage(rows, q.limit, (v) => [v.number]);
  return pageResponse(request, page.items.map(presentVersionSummary), page.nextCursor);
});

export const action = apiHandler(async ({ request, params, actor }) => {
  if (request.method !== "POST") throw methodNotAllowed(["GET", "POST"]);
  const sceneId = idParam(params, "sceneId", "scene");
  await requireAbility(actor, { sceneId }, "edit", `scene ${sceneId}`);
  const body = await parseJsonBody(request, CreateVersionBodySchema);
  const result = await saveVersion({
    sceneId,
    parentVersionId: body.parentVersionId,
    scene: body.scene,
    message: body.message,
    authorId: actor.user.id,
  });
  if (result.ok) {
    return json(presentVersion(result.version), { status: 201, headers: { Location: `/api/v1/versions/${result.version.id}` } });
  }
  if (result.reason === "not_found") throw notFound(`scene ${sceneId}`);
  if (result.reason === "conflict") {
    throw new ApiError(
      409,
      "conflict",
      `version ${body.parentVersionId} is no longer the head of this scene; the head is version ${result.head.number} (${result.head.id}). Fetch it, reapply your change and save again with it as parentVersionId.`,
      { path: "parentVersionId", headVersionId: result.head.id },
    );
  }
  throw validationError(
    result.issues.map((i) => ({
      path: i.path ? `scene.${i.path}`.replace(/\.\[/g, "[") : "scene",
      message: i.message,
      ...(i.line !== undefined ? { line: i.line } : {}),
      ...(i.column !== undefined ? { column: i.column } : {}),
    })),
  );
});
