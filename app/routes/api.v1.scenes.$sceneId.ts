// GET /api/v1/scenes/:sceneId — one scene (its head version id is what a new version must name as parent).
import { getScene } from "~/models/scene.server";
import { apiHandler, idParam, json, methodNotAllowed, notFound, requireAbility } from "~/services/api.server";
import { presentScene } from "~/services/api-present.server";

export const loader = apiHandler(async ({ params, actor }) => {
  const sceneId = idParam(params, "sceneId", "scene");
  await requireAbility(actor, { sceneId }, "view", `scene ${sceneId}`);
  const scene = await getScene(sceneId);
  if (!scene) throw notFound(`scene ${sceneId}`);
  return json(presentScene(scene));
});

export const action = apiHandler(async () => {
  throw methodNotAllowed(["GET"]);
});
