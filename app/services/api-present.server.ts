// Database rows → API v1 JSON. One function per resource so every route shows a thing the same way.
import type { renders, projects, scenes } from "~/db/schema";
import type { RenderChunk } from "~/models/render-job.server";
import type { ApiProject, ApiRender, ApiScene, ApiVersion, ApiVersionSummary } from "./api-schemas.server";

const iso = (d: Date) => d.toISOString();

export function presentProject(p: typeof projects.$inferSelect, role: ApiProject["role"]): ApiProject {
  return { id: p.id, name: p.name, description: p.description, role, createdAt: iso(p.createdAt) };
}

export function presentScene(s: typeof scenes.$inferSelect): ApiScene {
  return {
    id: s.id,
    projectId: s.projectId,
    name: s.name,
    headVersionId: s.headVersionId,
    createdAt: iso(s.createdAt),
    updatedAt: iso(s.updatedAt),
  };
}

type VersionFields = {
  id: string;
  sceneId: string;
  number: number;
  parentId: string | null;
  kind: ApiVersionSummary["kind"];
  message: string;
  authorId: string | null;
  createdAt: Date;
};

export function presentVersionSummary(v: VersionFields): ApiVersionSummary {
  return {
    id: v.id,
    sceneId: v.sceneId,
    number: v.number,
    parentId: v.parentId,
    kind: v.kind,
    message: v.message,
    authorId: v.authorId,
    createdAt: iso(v.createdAt),
  };
}

export function presentVersion(v: VersionFields & { scene: Record<string, unknown> }): ApiVersion {
  return { ...presentVersionSummary(v), scene: v.scene };
}

export const renderPath = (id: string) => `/api/v1/renders/${id}`;

export function presentRender(r: typeof renders.$inferSelect, chunks?: RenderChunk[]): ApiRender {
  const self = renderPath(r.id);
  const links: ApiRender["links"] = { self };
  if (r.status === "done") {
    if (r.files.png) links.png = `${self}/image.png`;
    if (r.files.hdr) links.hdr = `${self}/image.hdr`;
    if (r.files.pfm) links.pfm = `${self}/image.pfm`;
    if (r.files.state) links.state = `${self}/state.bin`;
    const groups = Object.keys(r.files.groups ?? {});
    if (groups.length > 0) links.groups = Object.fromEntries(groups.map((g) => [g, `${self}/groups/${encodeURIComponent(g)}.pfm`]));
  }
  return {
    id: r.id,
    projectId: r.projectId,
    sceneId: r.sceneId,
    versionId: r.versionId,
    source: r.source,
    status: r.status,
    title: r.title,
    spp: r.spp,
    sppDone: r.sppDone,
    progress: r.spp > 0 ? Math.min(1, r.sppDone / r.spp) : 0,
    seed: r.seed,
    width: r.width,
    height: r.height,
    integrator: r.integrator,
    tracerVersion: r.tracerVersion,
    accumulationHash: r.accumulationHash,
    continuedFromId: r.continuedFromId,
    renderMs: r.renderMs,
    samplesPerSecond: r.samplesPerSecond,
    error: r.error,
    createdAt: iso(r.createdAt),
    finishedAt: r.finishedAt ? iso(r.finishedAt) : null,
    ...(chunks
      ? {
          chunks: chunks.map((c) => ({
            index: c.index,
            passStart: c.passStart,
            passEnd: c.passEnd,
            status: c.status,
            attempts: c.attempts,
            worker: c.worker,
          })),
        }
      : {}),
    links,
  };
}
