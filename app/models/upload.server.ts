// Staged uploads: how a large render or asset gets from the browser into the library without the server
// ever holding a whole file in memory, and without a failed or abandoned upload leaving anything published.
//
//   1. start   — the browser declares every file (slot, byte size, SHA-256) and, for a render, its metadata.
//                Permissions, the scene/version and every size limit are checked here, before any byte is
//                accepted; a pending row is recorded.
//   2. receive — each file is streamed (one PUT per file) through a byte counter and a SHA-256 into a
//                multipart upload under staging/<uploadId>/<slot>. Crossing the declared size, a hash or
//                header that does not match, the sender vanishing or the store refusing a part fails the
//                whole upload: its staged objects are deleted and the row is marked failed.
//   3. finish  — every staged object must exist with its declared size and hash (assets are parsed again);
//                then one transaction writes the render/asset row, copies the objects to their final keys
//                and marks the upload finished. If anything fails, the copies are removed and nothing shows.
//   cancel / sweep — an upload the browser gives up on, or one left pending longer than STALE_UPLOAD_MINUTES,
//                is marked failed and its staged objects deleted.
import { createHash, randomUUID } from "node:crypto";
import { Readable, Transform, type TransformCallback } from "node:stream";
import { and, eq, inArray, lt, sql } from "drizzle-orm";
import { z } from "zod";
import { encodePng } from "@tracer/io/png";
import { assets, renders, uploads, type RenderFiles } from "~/db/schema";
import { assetKindForName, inspectAsset, mapThumbnail, MAX_ASSET_BYTES } from "~/lib/asset-inspect";
import { assetKey, assetThumbKey, SHA256_HEX, type AssetRow } from "~/models/asset.server";
import { checkPublishTarget, PublishMetadataSchema, publishedRenderValues, type PublishMetadata, type RenderRow } from "~/models/render.server";
import { db } from "~/services/db.server";
import { groupFileName, RENDER_FILE_TYPES, renderKey, type RenderFileKind } from "~/services/render-files.server";
import { copyObject, deleteObject, getObjectStream, listKeys, objectExists, objectSize, putObject, putObjectStream } from "~/services/storage.server";

export type UploadRow = typeof uploads.$inferSelect;

export const STAGING_PREFIX = "staging/";
/** A pending upload older than this is abandoned: the sweep deletes what it staged. */
export const STALE_UPLOAD_MINUTES = 30;
/** The most one render may bring in all its files (a 4096×4096 render with its state is about 0.9 GiB). */
export const MAX_RENDER_UPLOAD_BYTES = 2 * 1024 * 1024 * 1024;
/** A thumbnail is a small PNG (at most 160 px on its longer side when the browser makes it). */
const MAX_THUMB_BYTES = 2 * 1024 * 1024;
/** Bytes of each file kept while it streams, to check its header without reading it again. */
const HEAD_BYTES = 64;

export function stagingKey(uploadId: string, slot: string): string {
  return `${STAGING_PREFIX}${uploadId}/${slot}`;
}

// ---------------------------------------------------------------------------------------------
// what the browser declares

const Sha256Schema = z.string().regex(SHA256_HEX, { message: "must be 64 lowercase hex digits (SHA-256)" });
const SLOT = /^(pfm|png|hdr|thumb|state|group-[A-Za-z0-9_-]{1,64})$/;

export const RenderFileDeclSchema = z.strictObject({
  slot: z.string().regex(SLOT, { message: 'must be "pfm", "png", "hdr", "thumb", "state" or "group-<name>"' }),
  bytes: z.number().int().min(1, { message: "must be at least 1 byte" }),
  sha256: Sha256Schema.optional(),
});

export const StartRenderUploadSchema = z.strictObject({
  kind: z.literal("render"),
  sceneId: z.string().min(1),
  meta: PublishMetadataSchema,
  files: z.array(RenderFileDeclSchema).min(1).max(24),
});

export const StartAssetUploadSchema = z.strictObject({
  kind: z.literal("asset"),
  name: z.string().trim().min(1, { message: "the file name is required" }).max(200),
  bytes: z.number().int().min(0),
  sha256: Sha256Schema,
});

export const StartUploadSchema = z.discriminatedUnion("kind", [StartRenderUploadSchema, StartAssetUploadSchema]);
export type StartUploadInput = z.input<typeof StartUploadSchema>;

type PlannedFile = { slot: string; name: string; bytes: number; sha256: string | null; contentType: string };
type RenderPlan = { kind: "render"; sceneId: string; meta: PublishMetadata; files: PlannedFile[] };
type AssetPlan = { kind: "asset"; name: string; files: PlannedFile[] };
type Plan = RenderPlan | AssetPlan;
type Received = { bytes: number; sha256: string } | { arriving: true };

export type UploadFailure = { ok: false; status: 400 | 404 | 409 | 413 | 502; error: string; field?: string };

/** The file name a slot is stored and reported under. */
export function slotFileName(slot: string): string {
  if (slot.startsWith("group-")) return groupFileName(slot.slice(6));
  return RENDER_FILE_TYPES[slot as RenderFileKind].name;
}

function slotContentType(slot: string): string {
  return slot.startsWith("group-") ? RENDER_FILE_TYPES.pfm.contentType : RENDER_FILE_TYPES[slot as RenderFileKind].contentType;
}

function pfmBytes(w: number, h: number): number {
  return w * h * 12;
}

function stateBytes(w: number, h: number, groupCount: number): number {
  // serializeAccumulation: a 24-byte header, then float64 counts[n], sums[n·groups·3], sq[n·2].
  const n = w * h;
  return 24 + 8 * (n + n * groupCount * 3 + n * 2);
}

/** Why a declared render file cannot be right for a w×h render, or null. Named by the file, before any byte moves. */
function renderFileSizeProblem(slot: string, bytes: number, meta: PublishMetadata): { status: 400 | 413; error: string } | null {
  const { width: w, height: h } = meta;
  const name = slotFileName(slot);
  if (slot === "pfm" || slot.startsWith("group-")) {
    // "PF\n<w> <h>\n<scale>\n" then the pixels: the header is a handful of bytes.
    const data = pfmBytes(w, h);
    if (bytes < data + 8 || bytes > data + HEAD_BYTES) {
      return { status: bytes > data ? 413 : 400, error: `${name}: ${bytes} bytes, but a ${w}×${h} PFM is ${data} bytes of pixels plus a short header` };
    }
  } else if (slot === "png") {
    // Worst case of a stored (uncompressed) RGBA PNG: every row plus its filter byte, and chunk overhead.
    const max = h * (w * 4 + 1) + Math.ceil((h * (w * 4 + 1)) / 16_000) * 12 + 64 * 1024;
    if (bytes > max) return { status: 413, error: `${name}: ${bytes} bytes is more than the ${max}-byte ceiling for a ${w}×${h} PNG` };
  } else if (slot === "hdr") {
    // Flat RGBE is 4 bytes a pixel; run-length coding can add a count byte per 128 and a header.
    const max = w * h * 4 + Math.ceil((w * h * 4) / 128) + h * 4 + 64 * 1024;
    if (bytes > max) return { status: 413, error: `${name}: ${bytes} bytes is more than the ${max}-byte ceiling for a ${w}×${h} Radiance HDR` };
  } else if (slot === "thumb") {
    if (bytes > MAX_THUMB_BYTES) return { status: 413, error: `${name}: ${bytes} bytes is more than the ${MAX_THUMB_BYTES}-byte limit for a thumbnail` };
  } else if (slot === "state") {
    const sizes = Array.from({ length: meta.groups.length + 1 }, (_, i) => stateBytes(w, h, i + 1));
    if (!sizes.includes(bytes)) {
      return { status: bytes > sizes[sizes.length - 1]! ? 413 : 400, error: `${name}: ${bytes} bytes is not the size of a ${w}×${h} accumulation (${sizes[0]} bytes for one light group)` };
    }
  }
  return null;
}

function fail(status: UploadFailure["status"], error: string, field?: string): UploadFailure {
  return { ok: false, status, error, ...(field ? { field } : {}) };
}

export type StartedUpload = {
  ok: true;
  upload: { id: string; files: { slot: string; name: string; bytes: number }[] };
};
export type AlreadyStored = { ok: true; stored: AssetRow };

/**
 * Step 1. The caller has authorised the person for the project (render for renders, upload for assets).
 * Refuses, naming the file or field, anything that cannot be published, so no byte of it is ever stored.
 */
export async function startUpload(
  projectId: string,
  userId: string,
  raw: unknown,
): Promise<StartedUpload | AlreadyStored | UploadFailure> {
  await sweepStaleUploads().catch((e: unknown) => console.error("sweeping stale uploads failed:", e));
  const parsed = StartUploadSchema.safeParse(raw);
  if (!parsed.success) {
    const i = parsed.error.issues[0]!;
    const path = i.path.join(".");
    return fail(400, `${path || "body"}: ${i.message}`, path || undefined);
  }
  const input = parsed.data;
  let plan: Plan;
  if (input.kind === "render") {
    const target = await checkPublishTarget(projectId, input.sceneId, input.meta);
    if (!target.ok) return fail(target.status, target.error, target.field);
    const slots = new Set<string>();
    for (const [i, f] of input.files.entries()) {
      if (slots.has(f.slot)) return fail(400, `files.${i}.slot: "${f.slot}" is listed twice`, `files.${i}.slot`);
      slots.add(f.slot);
      if (f.slot.startsWith("group-") && !input.meta.groups.includes(f.slot.slice(6))) {
        return fail(400, `files.${i}.slot: light group "${f.slot.slice(6)}" is not in meta.groups`, `files.${i}.slot`);
      }
      const problem = renderFileSizeProblem(f.slot, f.bytes, input.meta);
      if (problem) return fail(problem.status, problem.error, `files.${i}.bytes`);
    }
    for (const required of ["pfm", "png", "thumb"] as const) {
      if (!slots.has(required)) return fail(400, `files: ${slotFileName(required)} (slot "${required}") is required`, "files");
    }
    for (const g of input.meta.groups) {
      if (!slots.has(`group-${g}`)) return fail(400, `files: light group "${g}" is listed in meta.groups but has no file (slot "group-${g}")`, "files");
    }
    const total = input.files.reduce((n, f) => n + f.bytes, 0);
    if (total > MAX_RENDER_UPLOAD_BYTES) {
      return fail(413, `the render's files come to ${total} bytes, more than the ${MAX_RENDER_UPLOAD_BYTES}-byte limit for one render`, "files");
    }
    plan = {
      kind: "render",
      sceneId: target.sceneId,
      meta: input.meta,
      files: input.files.map((f) => ({ slot: f.slot, name: slotFileName(f.slot), bytes: f.bytes, sha256: f.sha256 ?? null, contentType: slotContentType(f.slot) })),
    };
  } else {
    const kind = assetKindForName(input.name);
    if (!kind) return fail(400, `${input.name}: only Wavefront .obj meshes and Radiance .hdr maps can be uploaded`, "name");
    if (input.bytes === 0) return fail(400, `${input.name}: the file is empty`, "bytes");
    if (input.bytes > MAX_ASSET_BYTES) return fail(413, `${input.name}: ${input.bytes} bytes is more than the ${MAX_ASSET_BYTES}-byte limit`, "bytes");
    // Same content already in this project: nothing to send. (A hash alone never adds another project's file.)
    const [existing] = await db().select().from(assets).where(and(eq(assets.projectId, projectId), eq(assets.sha256, input.sha256)));
    if (existing) return { ok: true, stored: existing };
    plan = {
      kind: "asset",
      name: input.name,
      files: [{ slot: "file", name: input.name, bytes: input.bytes, sha256: input.sha256, contentType: kind === "mesh" ? "model/obj" : "image/vnd.radiance" }],
    };
  }
  const [row] = await db()
    .insert(uploads)
    .values({ projectId, kind: plan.kind, plan: plan as unknown as Record<string, unknown>, createdBy: userId })
    .returning();
  return { ok: true, upload: { id: row!.id, files: plan.files.map((f) => ({ slot: f.slot, name: f.name, bytes: f.bytes })) } };
}

/** The pending or past upload `uploadId` of this person in this project, or null (which callers answer 404). */
export async function getUploadFor(projectId: string, uploadId: string, userId: string): Promise<UploadRow | null> {
  if (!/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(uploadId)) return null;
  const [row] = await db()
    .select()
    .from(uploads)
    .where(and(eq(uploads.id, uploadId), eq(uploads.projectId, projectId), eq(uploads.createdBy, userId)));
  return row ?? null;
}

function planOf(row: UploadRow): Plan {
  return row.plan as unknown as Plan;
}

function receivedOf(row: UploadRow): Record<string, Received> {
  return row.received as unknown as Record<string, Received>;
}

// ---------------------------------------------------------------------------------------------
// step 2: one file's bytes

class UploadRefused extends Error {
  constructor(
    message: string,
    readonly status: UploadFailure["status"],
  ) {
    super(message);
    this.name = "UploadRefused";
  }
}

/** Counts and hashes bytes as they pass, keeps the first few, and stops the stream the moment it exceeds `limit`. */
class ByteMeter extends Transform {
  bytes = 0;
  readonly head = new Uint8Array(HEAD_BYTES);
  private readonly hash = createHash("sha256");
  sha256 = "";
  constructor(
    private readonly limit: number,
    private readonly name: string,
  ) {
    super();
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, done: TransformCallback): void {
    if (this.bytes < HEAD_BYTES) this.head.set(chunk.subarray(0, HEAD_BYTES - this.bytes), this.bytes);
    this.bytes += chunk.length;
    if (this.bytes > this.limit) {
      done(new UploadRefused(`${this.name}: more than the declared ${this.limit} bytes arrived`, 413));
      return;
    }
    this.hash.update(chunk);
    done(null, chunk);
  }
  override _flush(done: TransformCallback): void {
    if (this.bytes !== this.limit) {
      done(new UploadRefused(`${this.name}: the upload ended after ${this.bytes} of ${this.limit} bytes`, 400));
      return;
    }
    this.sha256 = this.hash.digest("hex");
    done();
  }
}

function ascii(bytes: Uint8Array, from: number, to: number): string {
  let s = "";
  for (let i = from; i < to && i < bytes.length; i++) s += String.fromCharCode(bytes[i]!);
  return s;
}

/** Width, height and header length of a PFM from its first bytes ("PF\n<w> <h>\n<scale>\n"). */
export function pfmHeader(head: Uint8Array): { width: number; height: number; headerBytes: number; channels: 1 | 3 } | { error: string } {
  const m = /^(PF|Pf)\s(\d+)\s(\d+)\s(\S+)\s/.exec(ascii(head, 0, HEAD_BYTES));
  if (!m) return { error: 'byte 0: not a PFM header ("PF", width, height and scale expected)' };
  const scale = Number(m[4]);
  if (!Number.isFinite(scale) || scale === 0) return { error: `byte ${m[0].length - m[4]!.length - 1}: invalid scale "${m[4]}"` };
  return { width: Number(m[2]), height: Number(m[3]), headerBytes: m[0].length, channels: m[1] === "PF" ? 3 : 1 };
}

/** Width and height from a PNG's signature and IHDR chunk (its first 24 bytes). */
export function pngSize(head: Uint8Array): { width: number; height: number } | { error: string } {
  const sig = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
  for (let i = 0; i < 8; i++) if (head[i] !== sig[i]) return { error: `byte ${i}: not a PNG signature` };
  if (ascii(head, 12, 16) !== "IHDR") return { error: "byte 12: the first chunk is not IHDR" };
  const dv = new DataView(head.buffer, head.byteOffset, head.byteLength);
  return { width: dv.getUint32(16), height: dv.getUint32(20) };
}

/** Problems the first bytes of a staged render file reveal, named by byte. */
function headProblem(slot: string, head: Uint8Array, bytes: number, meta: PublishMetadata): string | null {
  const name = slotFileName(slot);
  const { width: w, height: h } = meta;
  if (slot === "pfm" || slot.startsWith("group-")) {
    const hd = pfmHeader(head);
    if ("error" in hd) return `${name}: ${hd.error}`;
    if (hd.width !== w || hd.height !== h) return `${name}: the file is ${hd.width}×${hd.height}, meta says ${w}×${h}`;
    const expected = hd.headerBytes + w * h * hd.channels * 4;
    if (hd.channels !== 3 || bytes !== expected) return `${name}: byte ${hd.headerBytes}: pixel data is ${bytes - hd.headerBytes} bytes, a ${w}×${h} RGB map needs ${w * h * 12}`;
  } else if (slot === "png" || slot === "thumb") {
    const size = pngSize(head);
    if ("error" in size) return `${name}: ${size.error}`;
    if (slot === "png" && (size.width !== w || size.height !== h)) return `${name}: the picture is ${size.width}×${size.height}, meta says ${w}×${h}`;
  } else if (slot === "hdr") {
    // Radiance files begin with "#?" and a program name (the format's own signature line).
    if (ascii(head, 0, 2) !== "#?") return `${name}: byte 0: not a Radiance HDR file (it must begin with "#?")`;
  } else if (slot === "state") {
    const dv = new DataView(head.buffer, head.byteOffset, head.byteLength);
    if (ascii(head, 0, 5) !== "TWACC") return `${name}: byte 0: not a saved accumulation`;
    if (dv.getUint32(8, true) !== w || dv.getUint32(12, true) !== h) return `${name}: byte 8: the accumulation is ${dv.getUint32(8, true)}×${dv.getUint32(12, true)}, meta says ${w}×${h}`;
  }
  return null;
}

/**
 * Step 2. Streams `body` into staging under the declared size. Any refusal fails the whole upload (its staged
 * objects are deleted) so that a half-sent render can never be finished by accident.
 */
export async function receiveUploadFile(
  row: UploadRow,
  slot: string,
  body: ReadableStream<Uint8Array> | null,
  declaredLength: number | null,
): Promise<{ ok: true; slot: string; bytes: number; sha256: string } | UploadFailure> {
  if (row.status !== "pending") return fail(409, `this upload is already ${row.status}; start a new one`);
  const plan = planOf(row);
  const file = plan.files.find((f) => f.slot === slot);
  if (!file) return fail(404, `this upload has no file "${slot}"`);
  if (receivedOf(row)[slot]) return fail(409, `${file.name}: already on its way or received`);
  if (declaredLength !== null && declaredLength !== file.bytes) {
    // Refused before reading: the request says it carries a different file than the one declared.
    await failUpload(row.id, `${file.name}: the request carries ${declaredLength} bytes, the upload declared ${file.bytes}`);
    return fail(declaredLength > file.bytes ? 413 : 400, `${file.name}: the request carries ${declaredLength} bytes, the upload declared ${file.bytes}; nothing was published`);
  }
  if (!body) return fail(400, `${file.name}: the request has no body`);
  // Claim the slot, so two requests for one file can never both write its staged object.
  const claimed = await db()
    .update(uploads)
    .set({ received: sql`${uploads.received} || ${JSON.stringify({ [slot]: { arriving: true } })}::jsonb` })
    .where(and(eq(uploads.id, row.id), eq(uploads.status, "pending"), sql`not (${uploads.received} ? ${slot})`))
    .returning({ id: uploads.id });
  if (claimed.length === 0) return fail(409, `${file.name}: already on its way or received, or the upload is closed`);

  const meter = new ByteMeter(file.bytes, file.name);
  const source = Readable.fromWeb(body as import("node:stream/web").ReadableStream<Uint8Array>);
  source.on("error", (e) => meter.destroy(e));
  const key = stagingKey(row.id, slot);
  try {
    await putObjectStream(key, source.pipe(meter), file.contentType);
  } catch (e) {
    source.destroy();
    const refused = e instanceof UploadRefused ? e : meter.destroyed && meter.errored instanceof UploadRefused ? meter.errored : null;
    const message = refused ? refused.message : `${file.name}: the upload stopped (${e instanceof Error ? e.message : String(e)})`;
    await failUpload(row.id, message);
    return fail(refused ? refused.status : 502, `${message}; nothing was published`);
  }
  const problem =
    file.sha256 && file.sha256 !== meter.sha256
      ? `${file.name}: the bytes received hash to ${meter.sha256}, the upload declared ${file.sha256}`
      : plan.kind === "render"
        ? headProblem(slot, meter.head.subarray(0, Math.min(HEAD_BYTES, meter.bytes)), meter.bytes, plan.meta)
        : null;
  if (problem) {
    await failUpload(row.id, problem);
    return fail(400, `${problem}; nothing was published`);
  }
  const entry = { bytes: meter.bytes, sha256: meter.sha256 };
  const updated = await db()
    .update(uploads)
    .set({ received: sql`${uploads.received} || ${JSON.stringify({ [slot]: entry })}::jsonb` })
    .where(and(eq(uploads.id, row.id), eq(uploads.status, "pending")))
    .returning({ id: uploads.id });
  if (updated.length === 0) {
    // Cancelled, swept or finished while this file was on its way: what it staged must not stay.
    await deleteObject(key).catch(() => undefined);
    return fail(409, `${file.name}: the upload was closed while this file was arriving; nothing was published`);
  }
  return { ok: true, slot, bytes: entry.bytes, sha256: entry.sha256 };
}

// ---------------------------------------------------------------------------------------------
// step 3: finish

/** Every declared file staged, with the declared size (as the store reports it) and hash. */
async function verifyStaged(row: UploadRow): Promise<string | null> {
  const received = receivedOf(row);
  for (const f of planOf(row).files) {
    const got = received[f.slot];
    if (!got || "arriving" in got) return `${f.name}: never arrived`;
    const size = await objectSize(stagingKey(row.id, f.slot));
    if (size === null) return `${f.name}: the stored copy is missing`;
    if (size !== f.bytes || got.bytes !== f.bytes) return `${f.name}: ${size} bytes stored, ${f.bytes} declared`;
    if (f.sha256 && got.sha256 !== f.sha256) return `${f.name}: the bytes hash to ${got.sha256}, the upload declared ${f.sha256}`;
  }
  return null;
}

/** Reads a staged object piece by piece into one buffer of its declared size (assets must be parsed whole). */
async function readStaged(key: string, bytes: number): Promise<{ bytes: Uint8Array; sha256: string }> {
  const out = new Uint8Array(bytes);
  const hash = createHash("sha256");
  let at = 0;
  const reader = (await getObjectStream(key)).getReader();
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    if (at + value.length > bytes) throw new Error(`${key} is longer than ${bytes} bytes`);
    out.set(value, at);
    hash.update(value);
    at += value.length;
  }
  if (at !== bytes) throw new Error(`${key} is ${at} bytes, ${bytes} expected`);
  return { bytes: out, sha256: hash.digest("hex") };
}

export type FinishedUpload = { ok: true; kind: "render"; render: RenderRow } | { ok: true; kind: "asset"; asset: AssetRow; created: boolean };

/** Step 3. Publishes everything or nothing; a refusal marks the upload failed and deletes what it staged. */
export async function finishUpload(row: UploadRow): Promise<FinishedUpload | UploadFailure> {
  if (row.status !== "pending") return fail(409, `this upload is already ${row.status}; start a new one`);
  const problem = await verifyStaged(row);
  if (problem) {
    await failUpload(row.id, problem);
    return fail(400, `${problem}; nothing was published`);
  }
  const plan = planOf(row);
  try {
    const result = plan.kind === "render" ? await finishRender(row, plan) : await finishAsset(row, plan);
    await deleteStaged(row.id); // published: the staged copies are only clutter now
    return result;
  } catch (e) {
    const message = e instanceof UploadRefused ? e.message : `the files could not be published (${e instanceof Error ? e.message : String(e)})`;
    await failUpload(row.id, message);
    return fail(e instanceof UploadRefused ? e.status : 502, `${message}; nothing was published`);
  }
}

async function finishRender(row: UploadRow, plan: RenderPlan): Promise<FinishedUpload> {
  const target = await checkPublishTarget(row.projectId, plan.sceneId, plan.meta);
  if (!target.ok) throw new UploadRefused(target.error, target.status);
  const renderId = randomUUID();
  const files: RenderFiles = {};
  const moves: { from: string; to: string; contentType: string }[] = [];
  for (const f of plan.files) {
    const to = renderKey(renderId, f.name);
    if (f.slot.startsWith("group-")) (files.groups ??= {})[f.slot.slice(6)] = to;
    else files[f.slot as RenderFileKind] = to;
    moves.push({ from: stagingKey(row.id, f.slot), to, contentType: f.contentType });
  }
  const copied: string[] = [];
  try {
    const render = await db().transaction(async (tx) => {
      const [locked] = await tx.select({ status: uploads.status }).from(uploads).where(eq(uploads.id, row.id)).for("update");
      if (locked?.status !== "pending") throw new UploadRefused(`this upload is already ${locked?.status ?? "gone"}`, 409);
      const [inserted] = await tx
        .insert(renders)
        .values(publishedRenderValues(renderId, { projectId: row.projectId, sceneId: plan.sceneId, meta: plan.meta, files, createdBy: row.createdBy }))
        .returning();
      for (const m of moves) {
        copied.push(m.to); // before the copy: a failed copy may still have left an object
        await copyObject(m.from, m.to, m.contentType);
      }
      await tx.update(uploads).set({ status: "finished", resultId: renderId, finishedAt: new Date() }).where(eq(uploads.id, row.id));
      return inserted!;
    });
    return { ok: true, kind: "render", render };
  } catch (e) {
    await Promise.all(copied.map((k) => deleteObject(k).catch(() => undefined)));
    throw e;
  }
}

async function finishAsset(row: UploadRow, plan: AssetPlan): Promise<FinishedUpload> {
  const file = plan.files[0]!;
  const staged = stagingKey(row.id, file.slot);
  // The parsers need the whole file; it is bounded by MAX_ASSET_BYTES, checked before the upload began.
  const { bytes, sha256 } = await readStaged(staged, file.bytes);
  if (sha256 !== file.sha256) throw new UploadRefused(`${file.name}: the stored bytes hash to ${sha256}, the upload declared ${file.sha256}`, 400);
  const inspection = inspectAsset(file.name, bytes);
  if (!inspection.ok) throw new UploadRefused(inspection.message, 400);
  const facts: Record<string, unknown> = { ...inspection.facts };
  const created: string[] = [];
  try {
    return await db().transaction(async (tx) => {
      const [locked] = await tx.select({ status: uploads.status }).from(uploads).where(eq(uploads.id, row.id)).for("update");
      if (locked?.status !== "pending") throw new UploadRefused(`this upload is already ${locked?.status ?? "gone"}`, 409);
      if (inspection.kind === "envmap") facts.thumb = assetThumbKey(sha256);
      const inserted = await tx
        .insert(assets)
        .values({ projectId: row.projectId, sha256, name: file.name.slice(0, 200), kind: inspection.kind, bytes: file.bytes, facts, uploadedBy: row.createdBy })
        .onConflictDoNothing()
        .returning();
      if (!(await objectExists(assetKey(sha256)))) {
        created.push(assetKey(sha256));
        await copyObject(staged, assetKey(sha256), file.contentType);
      }
      if (inspection.kind === "envmap" && !(await objectExists(assetThumbKey(sha256)))) {
        created.push(assetThumbKey(sha256));
        const thumb = mapThumbnail(inspection.image);
        await putObject(assetThumbKey(sha256), encodePng(thumb.width, thumb.height, thumb.rgba), "image/png");
      }
      await tx.update(uploads).set({ status: "finished", resultId: sha256, finishedAt: new Date() }).where(eq(uploads.id, row.id));
      if (inserted[0]) return { ok: true as const, kind: "asset" as const, asset: inserted[0], created: true };
      const [existing] = await tx.select().from(assets).where(and(eq(assets.projectId, row.projectId), eq(assets.sha256, sha256)));
      return { ok: true as const, kind: "asset" as const, asset: existing!, created: false };
    });
  } catch (e) {
    // The blob is shared by content: keep it if another project's (or a concurrent upload's) row now uses it.
    const [{ n }] = (await db().select({ n: sql<number>`count(*)::int` }).from(assets).where(eq(assets.sha256, sha256))) as [{ n: number }];
    if (Number(n) === 0) await Promise.all(created.map((k) => deleteObject(k).catch(() => undefined)));
    throw e;
  }
}

// ---------------------------------------------------------------------------------------------
// giving up

/** Best effort: whatever stays (the store unreachable just now) is deleted by a later sweep, as the upload is no longer pending. */
async function deleteStaged(uploadId: string): Promise<void> {
  try {
    const keys = await listKeys(`${STAGING_PREFIX}${uploadId}/`);
    await Promise.all(keys.map((k) => deleteObject(k).catch((e: unknown) => console.error(`could not delete staged ${k}:`, e))));
  } catch (e) {
    console.error(`could not list the staged files of upload ${uploadId} (a later sweep deletes them):`, e instanceof Error ? e.message : e);
  }
}

/** Marks a pending upload failed (first reason wins) and deletes everything it staged. */
export async function failUpload(uploadId: string, error: string): Promise<void> {
  await db()
    .update(uploads)
    .set({ status: "failed", error, finishedAt: new Date() })
    .where(and(eq(uploads.id, uploadId), eq(uploads.status, "pending")));
  await deleteStaged(uploadId);
}

/** The browser gave up (cancel button, closed dialog, an error on its side). */
export async function cancelUpload(row: UploadRow): Promise<{ ok: true; status: UploadRow["status"] }> {
  if (row.status === "pending") await failUpload(row.id, "cancelled by the uploader");
  const [now] = await db().select({ status: uploads.status }).from(uploads).where(eq(uploads.id, row.id));
  return { ok: true, status: now?.status ?? "failed" };
}

/**
 * Pending uploads older than `maxAgeMinutes` are abandoned; staged objects of any upload that is no longer
 * pending (or has no row) are deleted. Runs at the start of every upload, so it needs no scheduler.
 */
export async function sweepStaleUploads(options: { now?: Date; maxAgeMinutes?: number } = {}): Promise<{ abandoned: number; deletedObjects: number }> {
  const now = options.now ?? new Date();
  const cutoff = new Date(now.getTime() - (options.maxAgeMinutes ?? STALE_UPLOAD_MINUTES) * 60_000);
  const abandoned = await db()
    .update(uploads)
    .set({ status: "failed", error: "abandoned: never finished", finishedAt: now })
    .where(and(eq(uploads.status, "pending"), lt(uploads.createdAt, cutoff)))
    .returning({ id: uploads.id });
  const keys = await listKeys(STAGING_PREFIX, 5000);
  const ids = [...new Set(keys.map((k) => k.slice(STAGING_PREFIX.length).split("/")[0]!))].filter((id) => /^[0-9a-f-]{36}$/.test(id));
  const pending = ids.length
    ? new Set((await db().select({ id: uploads.id }).from(uploads).where(and(inArray(uploads.id, ids), eq(uploads.status, "pending")))).map((r) => r.id))
    : new Set<string>();
  const stray = keys.filter((k) => !pending.has(k.slice(STAGING_PREFIX.length).split("/")[0]!));
  await Promise.all(stray.map((k) => deleteObject(k).catch(() => undefined)));
  return { abandoned: abandoned.length, deletedObjects: stray.length };
}
