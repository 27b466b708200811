// The bytes of a project asset by content hash (the browser's renderer and the workspace fetch these), or
// its tone-mapped thumbnail with ?thumb. Content-addressed, so it can be cached forever.
import { data } from "react-router";
import { assetThumbKey, getAsset, readAssetBytes } from "~/models/asset.server";
import { requireInProject } from "~/services/project-access.server";
import { getObjectBytes } from "~/services/storage.server";
import type { Route } from "./+types/projects.$projectId.assets.$sha";

export async function loader({ request, params }: Route.LoaderArgs) {
  await requireInProject(request, params.projectId, { assetSha: params.sha, projectId: params.projectId }, "view");
  const asset = await getAsset(params.projectId, params.sha);
  if (!asset) throw data("No such asset", { status: 404 });
  const thumb = new URL(request.url).searchParams.has("thumb");
  if (thumb && asset.kind !== "envmap") throw data("Only maps have thumbnails", { status: 404 });
  const bytes = thumb ? await getObjectBytes(assetThumbKey(asset.sha256)) : await readAssetBytes(asset.sha256);
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), {
    headers: {
      "Content-Type": thumb ? "image/png" : asset.kind === "mesh" ? "model/obj" : "image/vnd.radiance",
      "Content-Length": String(bytes.length),
      "Content-Disposition": `${thumb ? "inline" : "attachment"}; filename="${asset.name.replace(/[^A-Za-z0-9._-]+/g, "-")}${thumb ? ".png" : ""}"`,
      "Cache-Control": "private, max-age=31536000, immutable",
      ETag: `"${asset.sha256}${thumb ? "-thumb" : ""}"`,
    },
  });
}
