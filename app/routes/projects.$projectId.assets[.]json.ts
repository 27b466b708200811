// The project's assets as references for the scene editor's completion:
// { assets: [{ ref: "sha256:…", name, kind: "mesh" | "envmap", bytes, facts }] }.
import { assetRef, listAssets } from "~/models/asset.server";
import { requireAccess } from "~/services/permissions.server";
import type { Route } from "./+types/projects.$projectId.assets[.]json";

export async function loader({ request, params }: Route.LoaderArgs) {
  const access = await requireAccess(request, { projectId: params.projectId }, "view");
  const list = await listAssets(access.projectId);
  return Response.json({
    assets: list.map((a) => ({ ref: assetRef(a.sha256), sha256: a.sha256, name: a.name, kind: a.kind, bytes: a.bytes, facts: a.facts })),
  });
}
