// Where a render's bytes live in object storage: renders/<renderId>/<file>. Writing is all-or-nothing:
// if any object fails to upload, every object written so far is deleted again, so no caller ever sees a
// render whose files are only half there.
import type { RenderFiles } from "~/db/schema";
import { deleteObject, getObjectBytes, presignDownload, putObject } from "./storage.server";

export type RenderFileBytes = {
  pfm?: Uint8Array;
  hdr?: Uint8Array;
  png?: Uint8Array;
  thumb?: Uint8Array;
  state?: Uint8Array;
  groups?: Record<string, Uint8Array>;
};

export type RenderFileKind = "pfm" | "hdr" | "png" | "thumb" | "state";

export const RENDER_FILE_TYPES: Record<RenderFileKind, { name: string; contentType: string }> = {
  pfm: { name: "beauty.pfm", contentType: "application/x-portable-floatmap" },
  hdr: { name: "beauty.hdr", contentType: "image/vnd.radiance" },
  png: { name: "display.png", contentType: "image/png" },
  thumb: { name: "thumb.png", contentType: "image/png" },
  state: { name: "accumulation.bin", contentType: "application/octet-stream" },
};

const GROUP_NAME = /^[A-Za-z0-9_-]{1,64}$/;

export function renderKey(renderId: string, file: string): string {
  return `renders/${renderId}/${file}`;
}

export function groupFileName(group: string): string {
  if (!GROUP_NAME.test(group)) throw new Error(`light group name "${group}" is not a valid id`);
  return `group-${group}.pfm`;
}

/** Test seam: lets integration tests make an upload fail half-way. */
type Put = (key: string, body: Uint8Array, contentType: string) => Promise<void>;
let put: Put = (key, body, contentType) => putObject(key, body, contentType);
export function setRenderFileWriterForTests(fn: Put | null): void {
  put = fn ?? ((key, body, contentType) => putObject(key, body, contentType));
}

export async function storeRenderFiles(renderId: string, files: RenderFileBytes): Promise<RenderFiles> {
  const plan: { field: RenderFileKind | { group: string }; key: string; body: Uint8Array; contentType: string }[] = [];
  for (const kind of Object.keys(RENDER_FILE_TYPES) as RenderFileKind[]) {
    const body = files[kind];
    if (body) plan.push({ field: kind, key: renderKey(renderId, RENDER_FILE_TYPES[kind].name), body, contentType: RENDER_FILE_TYPES[kind].contentType });
  }
  for (const [group, body] of Object.entries(files.groups ?? {})) {
    plan.push({ field: { group }, key: renderKey(renderId, groupFileName(group)), body, contentType: RENDER_FILE_TYPES.pfm.contentType });
  }

  const written: string[] = [];
  try {
    for (const item of plan) {
      written.push(item.key); // before the put: a failed put may still have left a partial object
      await put(item.key, item.body, item.contentType);
    }
  } catch (err) {
    await deleteKeys(written);
    throw err;
  }

  const out: RenderFiles = {};
  for (const item of plan) {
    if (typeof item.field === "string") out[item.field] = item.key;
    else (out.groups ??= {})[item.field.group] = item.key;
  }
  return out;
}

async function deleteKeys(keys: readonly string[]): Promise<void> {
  await Promise.all(
    keys.map((k) =>
      deleteObject(k).catch((e: unknown) => console.error(`could not delete ${k} while undoing a render upload:`, e)),
    ),
  );
}

export function renderFileKeys(files: RenderFiles): string[] {
  const keys: string[] = [];
  for (const kind of Object.keys(RENDER_FILE_TYPES) as RenderFileKind[]) {
    const k = files[kind];
    if (k) keys.push(k);
  }
  for (const k of Object.values(files.groups ?? {})) keys.push(k);
  return keys;
}

export async function deleteRenderFiles(files: RenderFiles): Promise<void> {
  await deleteKeys(renderFileKeys(files));
}

export async function readRenderFile(files: RenderFiles, kind: RenderFileKind | { group: string }): Promise<Uint8Array | null> {
  const key = typeof kind === "string" ? files[kind] : files.groups?.[kind.group];
  if (!key) return null;
  return getObjectBytes(key);
}

/** A download name that says which render it is: <scene>-v<version>-<id8>-<file>. */
export function downloadName(base: string, kind: RenderFileKind | { group: string }): string {
  const safe = base.replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "").slice(0, 80) || "render";
  const file = typeof kind === "string" ? RENDER_FILE_TYPES[kind].name : groupFileName(kind.group);
  return `${safe}-${file}`;
}

export function renderDownloadUrl(files: RenderFiles, kind: RenderFileKind): Promise<string> | null {
  const key = files[kind];
  return key ? presignDownload(key) : null;
}

/** "pfm", "png", … or "group-<name>" as used in URLs; the stored names ("display.png", "group-key.pfm") work too. */
export function parseRenderFile(file: string): RenderFileKind | { group: string } | null {
  if (Object.prototype.hasOwnProperty.call(RENDER_FILE_TYPES, file)) return file as RenderFileKind;
  for (const kind of Object.keys(RENDER_FILE_TYPES) as RenderFileKind[]) if (RENDER_FILE_TYPES[kind].name === file) return kind;
  const m = /^group-([A-Za-z0-9_-]{1,64})(\.pfm)?$/.exec(file);
  return m ? { group: m[1]! } : null;
}
