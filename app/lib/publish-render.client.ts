// Publishing a render from the browser: one multipart POST through XMLHttpRequest, because fetch cannot
// report upload progress. The server stores every file before it records the render, so a failed or
// cancelled upload publishes nothing.
//
//   const result = await publishRenderUpload({
//     projectId, sceneId,
//     meta: { versionId, title, spp, seed, width, height, integrator, tracerVersion, accumulationHash, renderMs, samplesPerSecond, groups },
//     files: renderOutputs(acc, scene.display, compiled.groupNames),   // from ~/lib/render-outputs
//   }, { onProgress: (p) => setProgress(p.fraction), signal });
//   if (result.ok) navigate(result.render.url); else toast(result.error);
import type { RenderOutputs } from "./render-outputs";

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

export type PublishFiles = Pick<RenderOutputs, "pfm" | "png"> & Partial<Pick<RenderOutputs, "hdr" | "thumb" | "state" | "groups">>;

export type PublishResult =
  | { ok: true; render: { id: string; accumulationHash: string; url: string } }
  | { ok: false; error: string; field?: string; status: number };

export type UploadProgress = { loaded: number; total: number; fraction: number };

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

export function publishRenderUpload(
  input: { projectId: string; sceneId: string; meta: PublishMeta; files: PublishFiles },
  options: { onProgress?: (p: UploadProgress) => void; signal?: AbortSignal } = {},
): Promise<PublishResult> {
  return new Promise((resolve) => {
    const xhr = new XMLHttpRequest();
    xhr.open("POST", `/projects/${input.projectId}/renders/publish`);
    xhr.responseType = "text";
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) options.onProgress?.({ loaded: e.loaded, total: e.total, fraction: e.total ? e.loaded / e.total : 0 });
    };
    xhr.onload = () => {
      try {
        const body = JSON.parse(xhr.responseText) as { ok: boolean; error?: string; field?: string; render?: { id: string; accumulationHash: string; url: string } };
        if (body.ok && body.render) resolve({ ok: true, render: body.render });
        else resolve({ ok: false, error: body.error ?? `publishing failed (HTTP ${xhr.status})`, field: body.field, status: xhr.status });
      } catch {
        resolve({ ok: false, error: `publishing failed (HTTP ${xhr.status})`, status: xhr.status });
      }
    };
    xhr.onerror = () => resolve({ ok: false, error: "the connection failed during the upload; nothing was published", status: 0 });
    xhr.onabort = () => resolve({ ok: false, error: "the upload was cancelled; nothing was published", status: 0 });
    options.signal?.addEventListener("abort", () => xhr.abort(), { once: true });
    xhr.send(publishForm(input));
  });
}
