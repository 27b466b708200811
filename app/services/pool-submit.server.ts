// Queuing a render on the server pool: planning (checks, overrides, chunks), the render and chunk rows, and
// one pg-boss job per chunk. Shared by POST /api/v1/renders and the project's pool page.
import { createPoolRender, defaultChunkPasses, failPoolRender, planChunks, sceneForRender, type NewPoolRender, type PoolRender } from "~/models/render-job.server";
import { getRender } from "~/models/render.server";
import { getVersion } from "~/models/scene.server";
import { ApiError, notFound, requireAbility, validationError, type AuthedActor } from "~/services/api.server";
import type { CreateRenderBody } from "~/services/api-schemas.server";
import { db } from "~/services/db.server";
import { getEnv } from "~/services/env.server";
import { enqueueChunks, serverQueue } from "~/services/queue.server";
import { validateScene } from "@tracer/scene/validate";
import { listAssetRefs } from "@tracer/scene/assets";
import { TRACER_VERSION } from "@tracer/version";

/** More chunks than this only adds queue and merge overhead. */
const MAX_CHUNKS = 1024;

// Body fields that override scene fields, so a validation problem is reported under the name the caller sent.
const OVERRIDE_PATHS: Record<string, string> = { image: "width", "image.width": "width", "image.height": "height", "render.seed": "seed" };

function chunking(body: CreateRenderBody, from: number, to: number) {
  const chunkPasses = body.chunkPasses ?? defaultChunkPasses(to - from);
  if (Math.ceil((to - from) / chunkPasses) > MAX_CHUNKS) {
    throw validationError([{ path: "chunkPasses", message: `would make more than ${MAX_CHUNKS} chunks; use at least ${Math.ceil((to - from) / MAX_CHUNKS)}` }]);
  }
  return planChunks(from, to, chunkPasses);
}

export async function planFromVersion(actor: AuthedActor, body: CreateRenderBody & { versionId: string; spp: number }): Promise<NewPoolRender> {
  const { projectId } = await requireAbility(actor, { versionId: body.versionId }, "render", `version ${body.versionId}`);
  const version = await getVersion(body.versionId);
  if (!version) throw notFound(`version ${body.versionId}`);
  const doc = version.scene;
  const image = (doc.image ?? {}) as { width?: number; height?: number };
  const render = (doc.render ?? {}) as { seed?: number };
  const wanted = {
    width: body.width ?? image.width ?? 0,
    height: body.height ?? image.height ?? 0,
    seed: body.seed ?? render.seed ?? 1,
  };
  const checked = validateScene(sceneForRender(doc, wanted));
  if (!checked.ok) {
    throw validationError(checked.issues.map((i) => ({ path: OVERRIDE_PATHS[i.path] ?? `version.scene.${i.path}`, message: i.message })));
  }
  const fileRefs = listAssetRefs(checked.scene).filter((u) => !u.ref.startsWith("sha256:"));
  if (fileRefs.length > 0) {
    throw validationError(
      fileRefs.map((u) => ({ path: `version.scene.${u.path}`, message: `"${u.ref}" is a file path; upload the file and refer to it as sha256:… so pool workers can fetch it` })),
    );
  }
  const s = checked.scene;
  return {
    projectId,
    sceneId: version.sceneId,
    versionId: version.id,
    spp: body.spp,
    seed: s.render.seed,
    width: s.image.width,
    height: s.image.height,
    integrator: s.render.integrator,
    tracerVersion: TRACER_VERSION,
    title: body.title ?? "",
    createdBy: actor.user.id,
    continuedFromId: null,
    chunks: chunking(body, 0, body.spp),
  };
}

export async function planContinuation(actor: AuthedActor, body: CreateRenderBody & { continueFrom: string }): Promise<NewPoolRender> {
  const { projectId } = await requireAbility(actor, { renderId: body.continueFrom }, "render", `render ${body.continueFrom}`);
  const source = await getRender(body.continueFrom);
  if (!source) throw notFound(`render ${body.continueFrom}`);
  if (source.status !== "done" || !source.files.state) {
    throw new ApiError(409, "not_continuable", `render ${source.id} has no stored accumulation state to continue from (status ${source.status})`, {
      path: "continueFrom",
    });
  }
  if (source.tracerVersion !== TRACER_VERSION) {
    throw new ApiError(
      409,
      "tracer_version_mismatch",
      `render ${source.id} was made by ${source.tracerVersion}; this pool runs ${TRACER_VERSION}, so continuing would not match a fresh render`,
      { path: "continueFrom" },
    );
  }
  const from = source.sppDone;
  let target = body.spp;
  if (target === undefined) {
    const version = await getVersion(source.versionId);
    const sceneSpp = (version?.scene.render as { spp?: number } | undefined)?.spp;
    target = typeof sceneSpp === "number" ? sceneSpp : from;
  }
  if (target <= from) {
    throw validationError([{ path: "spp", message: `must be more than the ${from} samples per pixel render ${source.id} already has` }]);
  }
  return {
    projectId,
    sceneId: source.sceneId,
    versionId: source.versionId,
    spp: target,
    seed: source.seed,
    width: source.width,
    height: source.height,
    integrator: source.integrator,
    tracerVersion: TRACER_VERSION,
    title: body.title ?? source.title,
    createdBy: actor.user.id,
    continuedFromId: source.id,
    chunks: chunking(body, from, target),
  };
}

/** Plans, records and enqueues a pool render; errors are ApiErrors naming the body field. */
export async function submitPoolRender(actor: AuthedActor, body: CreateRenderBody): Promise<PoolRender> {
  const plan = body.continueFrom
    ? await planContinuation(actor, { ...body, continueFrom: body.continueFrom })
    : await planFromVersion(actor, { ...body, versionId: body.versionId as string, spp: body.spp as number });
  const render = await createPoolRender(db(), plan);
  try {
    await enqueueChunks(await serverQueue(getEnv().DATABASE_URL), render.id, plan.chunks.map((_, i) => i));
  } catch (err) {
    console.error("render pool: could not queue chunks", err);
    await failPoolRender(db(), render.id, "the job queue was unreachable");
    throw new ApiError(503, "queue_unavailable", "the render queue is unreachable; nothing was queued, try again shortly", { headers: { "Retry-After": "5" } });
  }
  return render;
}
