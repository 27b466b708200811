// Publishing a render from the browser as a staged upload (app/lib/upload.client.ts): the server checks the
// metadata and every file's size before a byte is sent, each file then streams with progress, and the
// render appears only when the server has verified all of them. A failed or cancelled upload publishes
// nothing and its staged files are deleted.
//
//   const result = await publishRenderUpload({
//     projectId, sceneId,
//     meta: { versionId, title, spp, seed, width, height, integrator, tracerVersion, accumulationHash, renderMs, samplesPerSecond },
//     files: renderOutputs(acc, scene.display, compiled.groupNames),   // from ~/lib/render-outputs
//   }, { onProgress: (p) => setProgress(p.fraction), signal });
//   if (result.ok) navigate(result.render.url); else toast(result.error);
//
// publishForm builds the older one-request form (still accepted for small renders by
// /projects/:id/renders/publish, e.g. from scripts).
import type { RenderOutputs } from "./render-outputs";
import { stagedUpload, type StagedFile, type UploadProgress } from "./upload.client";

export type PublishMeta = {
  versionId: string;
  title?: string;
  spp: number;
  seed: number;
  width: number;
  height: number;
  integrator: string;
  tracerVersion: string;
  accumulationHash: string;
  renderMs: number;
  samplesPerSecond: number;
};

export type PublishFiles = Pick<RenderOutputs, "pfm" | "png" | "thumb"> & Partial<Pick<RenderOutputs, "hdr" | "state" | "groups">>;

export type PublishResult =
  | { ok: true; render: { id: string; accumulationHash: string; url: string } }
  | { ok: false; error: string; field?: string; status: number };

export type { UploadProgress };

function blob(bytes: Uint8Array, type: string): Blob {
  return new Blob([bytes.slice().buffer as ArrayBuffer], { type });
}

export function publishForm(input: { sceneId: string; meta: PublishMeta; files: PublishFiles }): FormData {
  const form = new FormData();
  const groups = Object.keys(input.files.groups ?? {});
  form.set("sceneId", input.sceneId);
  form.set("meta", JSON.stringify({ ...input.meta, groups }));
  form.set("pfm", blob(input.files.pfm, "application/x-portable-floatmap"), "beauty.pfm");
  form.set("png", blob(input.files.png, "image/png"), "display.png");
  if (input.files.hdr) form.set("hdr", blob(input.files.hdr, "image/vnd.radiance"), "beauty.hdr");
  if (input.files.thumb) form.set("thumb", blob(input.files.thumb, "image/png"), "thumb.png");
  if (input.files.state) form.set("state", blob(input.files.state, "application/octet-stream"), "accumulation.bin");
  for (const g of groups) form.set(`group:${g}`, blob(input.files.groups![g]!, "application/x-portable-floatmap"), `group-${g}.pfm`);
  return form;
}

/** The files of a render as staged-upload slots (names as they are stored). */
export function publishFiles(files: PublishFiles): StagedFile[] {
  const out: StagedFile[] = [
    { slot: "pfm", name: "beauty.pfm", body: files.pfm },
    { slot: "png", name: "display.png", body: files.png },
    { slot: "thumb", name: "thumb.png", body: files.thumb },
  ];
  if (files.hdr) out.push({ slot: "hdr", name: "beauty.hdr", body: files.hdr });
  if (files.state) out.push({ slot: "state", name: "accumulation.bin", body: files.state });
  for (const [g, bytes] of Object.entries(files.groups ?? {})) out.push({ slot: `group-${g}`, name: `group-${g}.pfm`, body: bytes });
  return out;
}

export async function publishRenderUpload(
  input: { projectId: string; sceneId: string; meta: PublishMeta; files: PublishFiles },
  options: { onProgress?: (p: UploadProgress) => void; signal?: AbortSignal } = {},
): Promise<PublishResult> {
  const groups = Object.keys(input.files.groups ?? {});
  const result = await stagedUpload(input.projectId, { kind: "render", sceneId: input.sceneId, meta: { ...input.meta, groups } }, publishFiles(input.files), options);
  if (!result.ok) return result;
  const render = result.body.render as { id: string; accumulationHash: string; url: string } | undefined;
  if (!render) return { ok: false, error: "the server answered without the published render", status: 200 };
  return { ok: true, render };
}
