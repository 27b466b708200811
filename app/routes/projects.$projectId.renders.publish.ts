// POST multipart/form-data: keep a small render in the project's library in one request (scripts, tests). Fields:
//   sceneId, meta (JSON, PublishMetadataSchema), pfm (required), png (required), hdr, thumb, state,
//   group:<name> (one PFM per light group). Answers JSON { ok: true, render } or { ok: false, error, field }.
// The browser publishes through staged uploads instead (/projects/:id/uploads, app/lib/publish-render.client.ts):
// they stream, so they have no such size ceiling and never sit whole in the server's memory.
import { decodePfm } from "@tracer/io/pfm";
import { thumbnailPng } from "~/lib/render-outputs";
import { logActivity } from "~/models/activity.server";
import { checkPublishTarget, PublishMetadataSchema, publishRender } from "~/models/render.server";
import { BodyTooLargeError, formDataLimited } from "~/services/body-limit.server";
import { requireAccess } from "~/services/permissions.server";
import type { RenderFileBytes } from "~/services/render-files.server";
import type { Route } from "./+types/projects.$projectId.renders.publish";

/**
 * The whole multipart body is held in memory while it is checked, so this one-request path only takes small
 * renders (about 1000×1000 with its state); anything larger goes through a staged upload, which streams.
 */
const MAX_PUBLISH_BYTES = 32 * 1024 * 1024;

function fail(status: number, error: string, field?: string) {
  return Response.json({ ok: false, error, field }, { status });
}

async function bytesOf(form: FormData, name: string): Promise<Uint8Array | undefined> {
  const v = form.get(name);
  if (v === null) return undefined;
  if (typeof v === "string") return new TextEncoder().encode(v);
  return new Uint8Array(await v.arrayBuffer());
}

export async function loader() {
  return fail(405, "POST a render here (multipart/form-data); see app/lib/publish-render.client.ts");
}

export async function action({ request, params }: Route.ActionArgs) {
  if (request.method !== "POST") return fail(405, "only POST");
  const access = await requireAccess(request, { projectId: params.projectId }, "render");
  let form: FormData;
  try {
    form = await formDataLimited(request, MAX_PUBLISH_BYTES);
  } catch (e) {
    if (e instanceof BodyTooLargeError) return fail(413, `the upload is more than the ${MAX_PUBLISH_BYTES}-byte limit of a one-request publish; larger renders go through a staged upload (POST /projects/:id/uploads)`);
    return fail(400, "the body must be multipart/form-data");
  }
  const sceneId = String(form.get("sceneId") ?? "");
  let metaJson: unknown;
  try {
    metaJson = JSON.parse(String(form.get("meta") ?? ""));
  } catch {
    return fail(400, "meta must be a JSON object", "meta");
  }
  const parsed = PublishMetadataSchema.safeParse(metaJson);
  if (!parsed.success) {
    const i = parsed.error.issues[0]!;
    return fail(400, `meta.${i.path.join(".")}: ${i.message}`, `meta.${i.path.join(".")}`);
  }
  const meta = parsed.data;
  const target = await checkPublishTarget(access.projectId, sceneId, meta);
  if (!target.ok) return fail(target.status, target.error, target.field);
  const display = target.display;

  const files: RenderFileBytes = {
    pfm: await bytesOf(form, "pfm"),
    png: await bytesOf(form, "png"),
    hdr: await bytesOf(form, "hdr"),
    thumb: await bytesOf(form, "thumb"),
    state: await bytesOf(form, "state"),
  };
  if (!files.pfm) return fail(400, "pfm: the linear image is required", "pfm");
  if (!files.png) return fail(400, "png: the displayed image is required", "png");
  let beauty;
  try {
    beauty = decodePfm(files.pfm);
  } catch (e) {
    return fail(400, `pfm: ${e instanceof Error ? e.message : String(e)}`, "pfm");
  }
  if (beauty.width !== meta.width || beauty.height !== meta.height) {
    return fail(400, `pfm: the file is ${beauty.width}×${beauty.height}, meta says ${meta.width}×${meta.height}`, "pfm");
  }
  const groups: Record<string, Uint8Array> = {};
  for (const name of meta.groups) {
    const g = await bytesOf(form, `group:${name}`);
    if (!g) return fail(400, `group:${name}: listed in meta.groups but not uploaded`, `group:${name}`);
    groups[name] = g;
  }
  if (Object.keys(groups).length) files.groups = groups;
  files.thumb ??= thumbnailPng(beauty, display);

  try {
    const render = await publishRender({ projectId: access.projectId, sceneId: target.sceneId, meta, files, createdBy: access.actor.user.id });
    await logActivity(access.projectId, access.actor.user.id, "render.published", { renderId: render.id, sceneId: target.sceneId, versionId: target.versionId });
    return Response.json({
      ok: true,
      render: { id: render.id, accumulationHash: render.accumulationHash, url: `/projects/${access.projectId}/renders?render=${render.id}` },
    });
  } catch (e) {
    console.error("publishing a render failed:", e);
    return fail(502, "the files could not be stored; nothing was published, please try again");
  }
}
