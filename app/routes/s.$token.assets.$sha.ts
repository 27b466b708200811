// Asset bytes for a share link's version (only the assets that version uses), for rendering in the browser.
import { data } from "react-router";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import { validateScene } from "@tracer/scene/validate";
import { getAsset, readAssetBytes } from "~/models/asset.server";
import { openShareLink } from "~/models/share.server";
import type { Route } from "./+types/s.$token.assets.$sha";

export async function loader({ params }: Route.LoaderArgs) {
  const share = await openShareLink(params.token);
  if (!share) throw data("This link is not valid (it may have been revoked or have expired).", { status: 404 });
  const checked = validateScene(share.version.scene);
  const ref = `sha256:${params.sha}`;
  if (!checked.ok || !uniqueAssetRefs(checked.scene).includes(ref) || !(await getAsset(share.link.projectId, params.sha))) {
    throw data("No such asset", { status: 404 });
  }
  const bytes = await readAssetBytes(params.sha);
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), {
    headers: { "Content-Type": "application/octet-stream", "Content-Length": String(bytes.length), "Cache-Control": "private, max-age=3600" },
  });
}
