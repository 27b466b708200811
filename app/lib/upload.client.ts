// The browser's half of a staged upload (the server's half is app/models/upload.server.ts):
//   1. POST /projects/:id/uploads with a description of the files (sizes and SHA-256s, no bytes);
//   2. PUT each file to its own URL with XMLHttpRequest, because fetch cannot report upload progress;
//   3. POST …/finish. Any failure or a cancel POSTs …/cancel, so nothing half-sent is ever published.
//
//   const r = await stagedUpload(projectId, { kind: "asset", name: file.name }, [{ slot: "file", name: file.name, body: file }],
//     { onProgress: (p) => setProgress(p.fraction), signal });
import { sha256 } from "@noble/hashes/sha2.js";
import { bytesToHex } from "@noble/hashes/utils.js";

export type UploadFileProgress = { slot: string; name: string; loaded: number; total: number };
export type UploadProgress = {
  phase: "hashing" | "uploading" | "finishing";
  loaded: number;
  total: number;
  fraction: number;
  files: UploadFileProgress[];
};

export type StagedFile = { slot: string; name: string; body: Blob | Uint8Array; sha256?: string };

export type StagedUploadResult =
  | { ok: true; body: Record<string, unknown> }
  | { ok: false; error: string; field?: string; status: number };

type StartAnswer = {
  ok: boolean;
  error?: string;
  field?: string;
  stored?: Record<string, unknown>;
  upload?: { id: string; files: { slot: string; name: string; bytes: number; url: string }[]; finishUrl: string; cancelUrl: string };
};

function byteLength(body: Blob | Uint8Array): number {
  return body instanceof Blob ? body.size : body.byteLength;
}

function asBlob(body: Blob | Uint8Array): Blob {
  return body instanceof Blob ? body : new Blob([body.slice().buffer as ArrayBuffer]);
}

const HASH_CHUNK = 4 * 1024 * 1024;

/**
 * SHA-256 as lowercase hex. The platform digest when the page is a secure context (it is much faster);
 * otherwise a maintained pure-JS implementation, fed in pieces so a large file does not freeze the page.
 */
export async function sha256Hex(body: Blob | Uint8Array): Promise<string> {
  const subtle = typeof crypto !== "undefined" && crypto.subtle ? crypto.subtle : null;
  if (subtle) {
    const bytes = body instanceof Blob ? await body.arrayBuffer() : body.slice().buffer;
    return bytesToHex(new Uint8Array(await subtle.digest("SHA-256", bytes as ArrayBuffer)));
  }
  const h = sha256.create();
  const n = byteLength(body);
  for (let at = 0; at < n; at += HASH_CHUNK) {
    const piece = body instanceof Blob ? new Uint8Array(await body.slice(at, at + HASH_CHUNK).arrayBuffer()) : body.subarray(at, at + HASH_CHUNK);
    h.update(piece);
    await new Promise((r) => setTimeout(r, 0));
  }
  return bytesToHex(h.digest());
}

async function postJson(url: string, body: unknown, keepalive = false): Promise<{ status: number; json: Record<string, unknown> | null }> {
  try {
    const res = await fetch(url, {
      method: "POST",
      headers: { "content-type": "application/json", accept: "application/json" },
      body: body === undefined ? undefined : JSON.stringify(body),
      keepalive,
    });
    const text = await res.text();
    try {
      return { status: res.status, json: JSON.parse(text) as Record<string, unknown> };
    } catch {
      return { status: res.status, json: null };
    }
  } catch {
    return { status: 0, json: null };
  }
}

function putWithProgress(url: string, body: Blob, onProgress: (loaded: number) => void, signal?: AbortSignal): Promise<{ status: number; json: Record<string, unknown> | null; aborted: boolean }> {
  return new Promise((resolve) => {
    const xhr = new XMLHttpRequest();
    xhr.open("PUT", url);
    xhr.setRequestHeader("content-type", "application/octet-stream");
    xhr.responseType = "text";
    xhr.upload.onprogress = (e) => onProgress(e.loaded);
    const onAbort = () => xhr.abort();
    signal?.addEventListener("abort", onAbort, { once: true });
    const done = (r: { status: number; json: Record<string, unknown> | null; aborted: boolean }) => {
      signal?.removeEventListener("abort", onAbort);
      resolve(r);
    };
    xhr.onload = () => {
      let json: Record<string, unknown> | null = null;
      try {
        json = JSON.parse(xhr.responseText) as Record<string, unknown>;
      } catch {
        /* reported by status */
      }
      done({ status: xhr.status, json, aborted: false });
    };
    xhr.onerror = () => done({ status: 0, json: null, aborted: false });
    xhr.onabort = () => done({ status: 0, json: null, aborted: true });
    if (signal?.aborted) {
      done({ status: 0, json: null, aborted: true });
      return;
    }
    xhr.send(body);
  });
}

function failure(status: number, json: Record<string, unknown> | null, fallback: string): StagedUploadResult {
  const error = typeof json?.error === "string" ? json.error : fallback;
  const field = typeof json?.field === "string" ? json.field : undefined;
  return { ok: false, error, field, status };
}

/**
 * Sends `files` as one staged upload. `start` is the rest of the description (kind, and for a render its
 * sceneId and meta; for an asset its name): sizes and hashes are added here. Progress is bytes sent of all
 * files, per file and overall; the final event reports every byte.
 */
export async function stagedUpload(
  projectId: string,
  start: Record<string, unknown>,
  files: StagedFile[],
  options: { onProgress?: (p: UploadProgress) => void; signal?: AbortSignal; describe?: (files: { slot: string; bytes: number; sha256: string }[]) => Record<string, unknown> } = {},
): Promise<StagedUploadResult> {
  const total = files.reduce((n, f) => n + byteLength(f.body), 0);
  const state: UploadFileProgress[] = files.map((f) => ({ slot: f.slot, name: f.name, loaded: 0, total: byteLength(f.body) }));
  const report = (phase: UploadProgress["phase"]) => {
    const loaded = state.reduce((n, f) => n + f.loaded, 0);
    options.onProgress?.({ phase, loaded, total, fraction: total ? loaded / total : 1, files: state.map((f) => ({ ...f })) });
  };
  const cancelled = (): StagedUploadResult => ({ ok: false, error: "the upload was cancelled; nothing was published", status: 0 });

  report("hashing");
  const declared: { slot: string; bytes: number; sha256: string }[] = [];
  for (const f of files) {
    if (options.signal?.aborted) return cancelled();
    declared.push({ slot: f.slot, bytes: byteLength(f.body), sha256: f.sha256 ?? (await sha256Hex(f.body)) });
  }
  const description = options.describe ? { ...start, ...options.describe(declared) } : { ...start, files: declared };
  const started = await postJson(`/projects/${projectId}/uploads`, description);
  const answer = started.json as StartAnswer | null;
  if (!answer?.ok) return failure(started.status, started.json, started.status === 0 ? "the server could not be reached; nothing was sent" : `the upload could not start (HTTP ${started.status})`);
  if (answer.stored) {
    for (const f of state) f.loaded = f.total;
    report("finishing");
    return { ok: true, body: { ok: true, created: false, asset: answer.stored } };
  }
  const upload = answer.upload!;
  const giveUp = () => void postJson(upload.cancelUrl, undefined, true);

  report("uploading");
  for (const target of upload.files) {
    const i = files.findIndex((f) => f.slot === target.slot);
    const file = files[i]!;
    const sent = await putWithProgress(
      target.url,
      asBlob(file.body),
      (loaded) => {
        state[i]!.loaded = Math.min(loaded, state[i]!.total);
        report("uploading");
      },
      options.signal,
    );
    if (sent.aborted) {
      giveUp();
      return cancelled();
    }
    if (sent.status < 200 || sent.status >= 300 || sent.json?.ok !== true) {
      giveUp();
      return failure(sent.status, sent.json, sent.status === 0 ? `${file.name}: the connection failed during the upload; nothing was published` : `${file.name}: the upload failed (HTTP ${sent.status}); nothing was published`);
    }
    state[i]!.loaded = state[i]!.total;
    report("uploading");
  }
  if (options.signal?.aborted) {
    giveUp();
    return cancelled();
  }
  report("finishing");
  const finished = await postJson(upload.finishUrl, undefined);
  if (!finished.json?.ok) {
    if (finished.status === 0) giveUp();
    return failure(finished.status, finished.json, `publishing failed (HTTP ${finished.status}); nothing was published`);
  }
  return { ok: true, body: finished.json };
}
