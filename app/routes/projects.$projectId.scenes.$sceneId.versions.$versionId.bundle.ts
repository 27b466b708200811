// GET: download one version as a self-contained bundle (scene JSON + every asset it uses, base64).
import { data } from "react-router";
import { exportBundle } from "~/models/bundle.server";
import { AssetError } from "~/models/asset.server";
import { getScene, getVersion } from "~/models/scene.server";
import { requireInProject } from "~/services/project-access.server";
import type { Route } from "./+types/projects.$projectId.scenes.$sceneId.versions.$versionId.bundle";

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireInProject(request, params.projectId, { versionId: params.versionId }, "view");
  const version = await getVersion(params.versionId);
  const scene = version ? await getScene(version.sceneId) : null;
  if (!version || !scene || scene.id !== params.sceneId) throw data("No such version", { status: 404 });
  try {
    const bundle = await exportBundle({ projectId: params.projectId, sceneName: scene.name, version });
    const file = `${scene.name.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-|-$/g, "") || "scene"}-v${version.number}.tracewell.json`;
    return new Response(JSON.stringify(bundle), {
      headers: { "Content-Type": "application/json", "Content-Disposition": `attachment; filename="${file}"` },
    });
  } catch (e) {
    if (e instanceof AssetError) throw data(e.message, { status: e.status });
    throw e;
  }
}
