// A published render's file through a share link: only renders of the shared version, only if the link
// includes renders.
import { data } from "react-router";
import { getRender } from "~/models/render.server";
import { openShareLink } from "~/models/share.server";
import { parseRenderFile, readRenderFile, RENDER_FILE_TYPES } from "~/services/render-files.server";
import type { Route } from "./+types/s.$token.renders.$renderId.$file";

export async function loader({ params, request }: Route.LoaderArgs) {
  const share = await openShareLink(params.token);
  if (!share || !share.link.includeRenders) throw data("This link is not valid (it may have been revoked or have expired).", { status: 404 });
  const render = await getRender(params.renderId);
  const kind = parseRenderFile(params.file);
  if (!render || render.versionId !== share.version.id || render.status !== "done" || !kind) throw data("No such file", { status: 404 });
  const bytes = await readRenderFile(render.files, kind);
  if (!bytes) throw data("No such file", { status: 404 });
  const type = typeof kind === "string" ? RENDER_FILE_TYPES[kind].contentType : RENDER_FILE_TYPES.pfm.contentType;
  const inline = (kind === "png" || kind === "thumb") && !new URL(request.url).searchParams.has("download");
  const name = typeof kind === "string" ? RENDER_FILE_TYPES[kind].name : `group-${kind.group}.pfm`;
  return new Response(new Blob([bytes.slice().buffer as ArrayBuffer]), {
    headers: { "Content-Type": type, "Content-Length": String(bytes.length), "Content-Disposition": `${inline ? "inline" : "attachment"}; filename="${name}"` },
  });
}
