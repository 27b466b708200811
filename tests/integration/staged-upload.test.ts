// Staged uploads end to end through the request handler: a render or an asset is published only when every
// declared file arrived whole; limits are refused before a byte is stored; a wrong size or hash, the sender
// vanishing, the store refusing a part or an abandoned upload leave no row and no object (the bucket is
// listed); viewers and other projects get 404; and a 64 MiB file streams without the server holding it.
// Run: bin/with-test-env npx vitest run tests/integration/staged-upload.test.ts
import { createHash, randomUUID } from "node:crypto";
import { readFileSync } from "node:fs";
import { request as httpRequest } from "node:http";
import { setFlagsFromString } from "node:v8";
import { runInNewContext } from "node:vm";
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { encodePng } from "@tracer/io/png";
import { TRACER_VERSION } from "@tracer/version";
import { assets, memberships, renders, uploads, users } from "~/db/schema";
import { publishFiles, type PublishMeta } from "~/lib/publish-render.client";
import { assetKey } from "~/models/asset.server";
import { deleteRender } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { cancelUpload, getUploadFor, receiveUploadFile, startUpload, sweepStaleUploads } from "~/models/upload.server";
import { db, dbPool } from "~/services/db.server";
import { readRenderFile } from "~/services/render-files.server";
import { ensureBucket, listKeys, objectExists, objectSize, s3 } from "~/services/storage.server";
import { kettleScene, renderInNode, publishMetaOf } from "../support/a3-fixtures";
import { startApp, type AppServer } from "../support/app-server";
import { Person, uniqueEmail } from "../support/person";

const SERVED = /^https?:\/\//.test(process.env.TRACEWELL_URL ?? "");
let app: AppServer;
beforeAll(async () => {
  await ensureBucket();
  app = await startApp();
}, 120_000);
afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

type Json = Record<string, unknown> & { ok?: boolean; error?: string; field?: string };
type Started = { id: string; files: { slot: string; name: string; bytes: number; url: string }[]; finishUrl: string; cancelUrl: string };

async function account(label: string) {
  const person = new Person(app);
  const email = uniqueEmail(label);
  expect((await person.signUp({ name: `${label} tester`, email, password: "kettle-glaze-amber" })).status).toBe(302);
  const row = await db().query.users.findFirst({ where: eq(users.email, email) });
  return { person, id: row!.id };
}

async function newProject(owner: { person: Person }, name: string): Promise<string> {
  const res = await owner.person.post("/projects?index", { name, description: "" });
  return /\/projects\/([0-9a-f-]{36})$/.exec(res.location ?? "")![1]!;
}

async function call(person: Person, path: string, init: { method?: string; json?: unknown; body?: BodyInit; headers?: Record<string, string> } = {}): Promise<{ status: number; json: Json }> {
  const headers: Record<string, string> = { "x-forwarded-for": person.address, ...init.headers };
  if (person.cookie) headers.cookie = person.cookie;
  if (init.json !== undefined) headers["content-type"] = "application/json";
  let res: Response;
  try {
    res = await app.fetch(path, {
      method: init.method ?? "POST",
      headers,
      body: init.json !== undefined ? JSON.stringify(init.json) : init.body,
      ...(init.body instanceof ReadableStream ? { duplex: "half" } : {}),
    } as RequestInit);
  } catch (e) {
    // Over real HTTP a server that refuses a body mid-way may close the connection before the client reads
    // the answer, and a body that errors aborts the request on the client's side: status 0.
    return { status: 0, json: { ok: false, error: `no answer: ${e instanceof Error ? e.message : String(e)}` } };
  }
  const text = await res.text();
  let json: Json = {};
  try {
    json = JSON.parse(text) as Json;
  } catch {
    json = { ok: false, error: `not JSON: ${text.slice(0, 80)}` };
  }
  return { status: res.status, json };
}

const sha = (b: Uint8Array) => createHash("sha256").update(b).digest("hex");


/** An owner, a viewer and an editor of one project with a rendered 16×12 kettle scene; a second project elsewhere. */
async function setup() {
  const owner = await account("stage-owner");
  const viewer = await account("stage-viewer");
  const editor = await account("stage-editor");
  const projectId = await newProject(owner, "Staged uploads");
  await db().insert(memberships).values([
    { projectId, userId: viewer.id, role: "viewer" },
    { projectId, userId: editor.id, role: "editor" },
  ]);
  const sceneJson = kettleScene({ spp: 2 });
  const created = await createScene({ projectId, name: "Kettle", scene: sceneJson, authorId: owner.id });
  if (!created.ok) throw new Error("scene");
  const rendered = renderInNode(sceneJson);
  const { outputs } = rendered;
  const meta: PublishMeta & { groups: string[] } = {
    ...publishMetaOf(created.version.id, rendered, { title: "staged", renderMs: 10, samplesPerSecond: 100 }),
    groups: Object.keys(outputs.groups),
  };
  const files = publishFiles(outputs).map((f) => ({ ...f, body: f.body as Uint8Array }));
  const description = { kind: "render", sceneId: created.scene.id, meta, files: files.map((f) => ({ slot: f.slot, bytes: f.body.byteLength, sha256: sha(f.body) })) };
  const outsider = await account("stage-outsider");
  const otherProjectId = await newProject(outsider, "Elsewhere");
  return { owner, viewer, editor, outsider, projectId, otherProjectId, sceneId: created.scene.id, meta, files, description };
}

async function start(person: Person, projectId: string, description: unknown) {
  const r = await call(person, `/projects/${projectId}/uploads`, { json: description });
  return { ...r, upload: r.json.upload as Started | undefined };
}

async function rendersOfScene(sceneId: string): Promise<number> {
  return (await db().select({ id: renders.id }).from(renders).where(eq(renders.sceneId, sceneId))).length;
}

async function uploadRow(id: string) {
  const [row] = await db().select().from(uploads).where(eq(uploads.id, id));
  return row!;
}

/** The upload's row once the server has dealt with a request the client gave up on (over HTTP that is later). */
async function settledRow(id: string) {
  let row = await uploadRow(id);
  for (let i = 0; i < 120 && row.status === "pending"; i++) {
    await new Promise((r) => setTimeout(r, 250));
    row = await uploadRow(id);
  }
  return row;
}

/** A body that hands out `total` bytes in `chunk`-sized pieces as they are read (never all in memory). */
function generated(total: number, opts: { chunk?: number; failAfter?: number; fill?: (piece: Uint8Array, at: number) => void; onPull?: (sent: number) => void } = {}): ReadableStream<Uint8Array> {
  const chunk = opts.chunk ?? 256 * 1024;
  let sent = 0;
  return new ReadableStream<Uint8Array>({
    pull(controller) {
      opts.onPull?.(sent);
      if (opts.failAfter !== undefined && sent >= opts.failAfter) {
        controller.error(new Error("the uploader's connection dropped (test)"));
        return;
      }
      if (sent >= total) {
        controller.close();
        return;
      }
      const piece = new Uint8Array(Math.min(chunk, total - sent));
      opts.fill?.(piece, sent);
      sent += piece.length;
      controller.enqueue(piece);
    },
  });
}

describe("staged render publishing", () => {
  it("publishes a render whose files all arrived, at their final keys, and keeps nothing in staging", async () => {
    const s = await setup();
    const started = await start(s.owner.person, s.projectId, s.description);
    expect(started.status, started.json.error).toBe(201);
    const up = started.upload!;
    for (const f of s.files) {
      const target = up.files.find((t) => t.slot === f.slot)!;
      const put = await call(s.owner.person, target.url, { method: "PUT", body: f.body as BodyInit, headers: { "content-type": "application/octet-stream" } });
      expect(put.status, put.json.error).toBe(200);
      expect(put.json.sha256).toBe(sha(f.body));
    }
    expect(await rendersOfScene(s.sceneId)).toBe(0); // nothing shows before finish
    const done = await call(s.owner.person, up.finishUrl);
    expect(done.status, done.json.error).toBe(200);
    const renderId = (done.json.render as { id: string }).id;
    const [row] = await db().select().from(renders).where(eq(renders.id, renderId));
    expect(row!.status).toBe("done");
    expect(row!.accumulationHash).toBe(s.meta.accumulationHash);
    const pfm = s.files.find((f) => f.slot === "pfm")!.body;
    expect(sha((await readRenderFile(row!.files, "pfm"))!)).toBe(sha(pfm));
    expect(Object.keys(row!.files.groups ?? {})).toEqual(s.meta.groups);
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
    expect((await uploadRow(up.id)).status).toBe("finished");
    // Finishing twice publishes nothing more.
    expect((await call(s.owner.person, up.finishUrl)).status).toBe(409);
    expect(await rendersOfScene(s.sceneId)).toBe(1);
  });

  it("one file cannot be sent twice, not even by two requests at once", async () => {
    const s = await setup();
    const up = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const pfm = s.files.find((f) => f.slot === "pfm")!;
    const url = up.files.find((f) => f.slot === "pfm")!.url;
    const both = await Promise.all([0, 1].map(() => call(s.owner.person, url, { method: "PUT", body: pfm.body as BodyInit })));
    expect(both.map((r) => r.status).sort()).toEqual([200, 409]);
    expect(both.find((r) => r.status === 409)!.json.error).toMatch(/^beauty\.pfm: already on its way or received/);
    expect((await call(s.owner.person, url, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(409);
    expect((await uploadRow(up.id)).status).toBe("pending");
    await call(s.owner.person, up.cancelUrl);
  });

  it("refuses sizes over the limits before any byte is stored, naming the file", async () => {
    const s = await setup();
    const before = (await db().select().from(uploads).where(eq(uploads.projectId, s.projectId))).length;
    const huge = { ...s.description, files: s.description.files.map((f) => (f.slot === "pfm" ? { ...f, bytes: 16 * 12 * 12 * 4 } : f)) };
    const r = await start(s.owner.person, s.projectId, huge);
    expect(r.status).toBe(413);
    expect(r.json.error).toMatch(/^beauty\.pfm: 9216 bytes, but a 16×12 PFM is 2304 bytes/);
    const thumb = { ...s.description, files: s.description.files.map((f) => (f.slot === "thumb" ? { ...f, bytes: 3 * 1024 * 1024 } : f)) };
    expect((await start(s.owner.person, s.projectId, thumb)).json.error).toMatch(/^thumb\.png: 3145728 bytes is more than the 2097152-byte limit/);
    const asset = await start(s.owner.person, s.projectId, { kind: "asset", name: "cathedral.hdr", bytes: 129 * 1024 * 1024, sha256: "0".repeat(64) });
    expect(asset.status).toBe(413);
    expect(asset.json.error).toMatch(/^cathedral\.hdr: 135266304 bytes is more than the 134217728-byte limit/);
    const missing = { ...s.description, files: s.description.files.filter((f) => f.slot !== "png") };
    expect((await start(s.owner.person, s.projectId, missing)).json.error).toMatch(/display\.png \(slot "png"\) is required/);
    expect((await start(s.owner.person, s.projectId, { ...s.description, meta: { ...s.meta, width: 17 } })).json.error).toMatch(/^meta\.width\/height: 17×12/);
    // No upload was even recorded, so nothing could have been stored.
    expect((await db().select().from(uploads).where(eq(uploads.projectId, s.projectId))).length).toBe(before);
  });

  it("a file with the wrong hash or size fails the whole upload: no row, no staged objects", async () => {
    const s = await setup();
    const up = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const png = s.files.find((f) => f.slot === "png")!;
    await call(s.owner.person, up.files.find((f) => f.slot === "pfm")!.url, { method: "PUT", body: s.files.find((f) => f.slot === "pfm")!.body as BodyInit });
    const tampered = png.body.slice();
    tampered[tampered.length - 1] ^= 0xff;
    const bad = await call(s.owner.person, up.files.find((f) => f.slot === "png")!.url, { method: "PUT", body: tampered as BodyInit });
    expect(bad.status).toBe(400);
    expect(bad.json.error).toMatch(/^display\.png: the bytes received hash to [0-9a-f]{64}, the upload declared [0-9a-f]{64}; nothing was published/);
    expect((await uploadRow(up.id)).status).toBe("failed");
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
    expect((await call(s.owner.person, up.finishUrl)).status).toBe(409);
    expect(await rendersOfScene(s.sceneId)).toBe(0);

    // A file that is not what its slot says, caught by its first bytes (no hash declared for it here).
    const hdr = s.files.find((f) => f.slot === "hdr")!.body;
    const noHash = { ...s.description, files: s.description.files.map((f) => (f.slot === "hdr" ? { slot: f.slot, bytes: f.bytes } : f)) };
    const upH = (await start(s.owner.person, s.projectId, noHash)).upload!;
    const notHdr = await call(s.owner.person, upH.files.find((f) => f.slot === "hdr")!.url, { method: "PUT", body: new Uint8Array(hdr.length).fill(0x41) as BodyInit });
    expect(notHdr.status).toBe(400);
    expect(notHdr.json.error).toMatch(/^beauty\.hdr: byte 0: not a Radiance HDR file/);
    expect(await listKeys(`staging/${upH.id}/`)).toEqual([]);

    // A body that stops short (no length header, so only the count can tell).
    const up2 = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const pfm = s.files.find((f) => f.slot === "pfm")!.body;
    const short = await call(s.owner.person, up2.files.find((f) => f.slot === "pfm")!.url, {
      method: "PUT",
      body: generated(pfm.length - 10, { fill: (p, at) => p.set(pfm.subarray(at, at + p.length)) }),
    });
    expect(short.status).toBe(400);
    expect(short.json.error).toMatch(new RegExp(`^beauty\\.pfm: the upload ended after ${pfm.length - 10} of ${pfm.length} bytes`));
    expect(await listKeys(`staging/${up2.id}/`)).toEqual([]);

    // A body longer than declared is cut off as soon as it passes the declared size.
    const up3 = (await start(s.owner.person, s.projectId, s.description)).upload!;
    let pulledBeyond = 0;
    const long = await call(s.owner.person, up3.files.find((f) => f.slot === "pfm")!.url, {
      method: "PUT",
      body: generated(64 * 1024 * 1024, { chunk: 1024, onPull: (n) => (pulledBeyond = n) }),
    });
    expect([413, 0]).toContain(long.status);
    if (long.status === 413) expect(long.json.error).toMatch(new RegExp(`^beauty\\.pfm: more than the declared ${pfm.length} bytes arrived`));
    expect(pulledBeyond).toBeLessThan(16 * 1024 * 1024); // cut off, not read to its 64 MiB end
    expect((await settledRow(up3.id)).status).toBe("failed");
    expect(await listKeys(`staging/${up3.id}/`)).toEqual([]);
    expect(await rendersOfScene(s.sceneId)).toBe(0);
  });

  it("the uploader vanishing mid-file, or cancelling, leaves nothing behind", async () => {
    const s = await setup();
    const big = { ...s.description };
    const up = (await start(s.owner.person, s.projectId, big)).upload!;
    // The state file is the largest; the stream errors after part of it, as a dropped connection does.
    const state = s.files.find((f) => f.slot === "state")!.body;
    const dropped = await call(s.owner.person, up.files.find((f) => f.slot === "state")!.url, {
      method: "PUT",
      body: generated(state.length, { chunk: 1000, failAfter: 3000, fill: (p, at) => p.set(state.subarray(at, at + p.length)) }),
    });
    expect(dropped.status === 0 || dropped.status >= 400, String(dropped.status)).toBe(true);
    expect((await settledRow(up.id)).status).toBe("failed");
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);

    const up2 = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const pfm = s.files.find((f) => f.slot === "pfm")!;
    expect((await call(s.owner.person, up2.files.find((f) => f.slot === "pfm")!.url, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(200);
    expect(await listKeys(`staging/${up2.id}/`)).toEqual([`staging/${up2.id}/pfm`]);
    const cancelled = await call(s.owner.person, up2.cancelUrl);
    expect(cancelled.json).toEqual({ ok: true, status: "failed" });
    expect(await listKeys(`staging/${up2.id}/`)).toEqual([]);
    expect((await call(s.owner.person, up2.finishUrl)).status).toBe(409);
    // Finishing with a file missing is refused too, and cleans up what did arrive.
    const up3 = (await start(s.owner.person, s.projectId, s.description)).upload!;
    await call(s.owner.person, up3.files.find((f) => f.slot === "pfm")!.url, { method: "PUT", body: pfm.body as BodyInit });
    const early = await call(s.owner.person, up3.finishUrl);
    expect(early.status).toBe(400);
    expect(early.json.error).toMatch(/^display\.png: never arrived; nothing was published/);
    expect(await listKeys(`staging/${up3.id}/`)).toEqual([]);
    expect(await rendersOfScene(s.sceneId)).toBe(0);
  });

  it("the object store refusing a part mid-file fails the upload and leaves no object", async () => {
    const s = await setup();
    // A state file larger than one 5 MiB part, so the store sees several parts and refuses the second.
    const bytes = 6 * 1024 * 1024;
    const up = await startUpload(s.projectId, s.owner.id, { ...s.description, files: s.description.files });
    if (!up.ok || !("upload" in up)) throw new Error("start");
    const row = (await getUploadFor(s.projectId, up.upload.id, s.owner.id))!;
    let parts = 0;
    const name = `refuse-part-${randomUUID()}`;
    s3().middlewareStack.add(
      (next, context) => async (args) => {
        if (context.commandName === "UploadPartCommand" && ++parts >= 2) throw Object.assign(new Error("SlowDown: the store refuses this part (test)"), { name: "SlowDown" });
        return next(args);
      },
      { step: "initialize", name },
    );
    try {
      // Declared bigger than the state is; the limit check is bypassed by writing the plan directly.
      await db()
        .update(uploads)
        .set({ plan: { ...(row.plan as object), files: [{ slot: "state", name: "accumulation.bin", bytes, sha256: null, contentType: "application/octet-stream" }] } })
        .where(eq(uploads.id, row.id));
      const r = await receiveUploadFile((await getUploadFor(s.projectId, row.id, s.owner.id))!, "state", generated(bytes), null);
      expect(r.ok).toBe(false);
      if (!r.ok) expect(r.error).toMatch(/^accumulation\.bin: the upload stopped \(.*refuses this part.*\); nothing was published/);
    } finally {
      s3().middlewareStack.remove(name);
    }
    expect(parts).toBeGreaterThanOrEqual(2);
    expect((await uploadRow(row.id)).status).toBe("failed");
    expect(await listKeys(`staging/${row.id}/`)).toEqual([]);
    expect(await rendersOfScene(s.sceneId)).toBe(0);
  });

  it("abandoned uploads are swept: marked failed and their staged objects deleted; fresh ones are left alone", async () => {
    const s = await setup();
    const pfm = s.files.find((f) => f.slot === "pfm")!;
    const old = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const fresh = (await start(s.owner.person, s.projectId, s.description)).upload!;
    for (const up of [old, fresh]) {
      expect((await call(s.owner.person, up.files.find((f) => f.slot === "pfm")!.url, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(200);
    }
    await db().update(uploads).set({ createdAt: new Date(Date.now() - 2 * 60 * 60 * 1000) }).where(eq(uploads.id, old.id));
    const swept = await sweepStaleUploads();
    expect(swept.abandoned).toBeGreaterThanOrEqual(1);
    expect((await uploadRow(old.id)).status).toBe("failed");
    expect((await uploadRow(old.id)).error).toMatch(/abandoned/);
    expect(await listKeys(`staging/${old.id}/`)).toEqual([]);
    expect((await uploadRow(fresh.id)).status).toBe("pending");
    expect(await listKeys(`staging/${fresh.id}/`)).toEqual([`staging/${fresh.id}/pfm`]);
    await call(s.owner.person, fresh.cancelUrl);
  });

  it("staged files the store would not let go of at cancel are deleted by the next sweep", async () => {
    const s = await setup();
    const up = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const pfm = s.files.find((f) => f.slot === "pfm")!;
    expect((await call(s.owner.person, up.files.find((f) => f.slot === "pfm")!.url, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(200);
    const name = `refuse-list-${randomUUID()}`;
    s3().middlewareStack.add(
      (next, context) => async (args) => {
        if (context.commandName === "ListObjectsV2Command") throw new Error("the store is unreachable (test)");
        return next(args);
      },
      { step: "initialize", name },
    );
    try {
      expect(await cancelUpload((await getUploadFor(s.projectId, up.id, s.owner.id))!)).toEqual({ ok: true, status: "failed" });
    } finally {
      s3().middlewareStack.remove(name);
    }
    expect(await listKeys(`staging/${up.id}/`)).toEqual([`staging/${up.id}/pfm`]);
    await sweepStaleUploads();
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
  });

  it("viewers cannot start, other people cannot touch someone's upload, and other projects' ids are 404", async () => {
    const s = await setup();
    expect((await start(s.viewer.person, s.projectId, s.description)).status).toBe(404);
    expect((await start(s.viewer.person, s.projectId, { kind: "asset", name: "a.obj", bytes: 10, sha256: "a".repeat(64) })).status).toBe(404);
    expect((await start(s.outsider.person, s.projectId, s.description)).status).toBe(404);
    // A scene of another project named in this project's upload.
    const theirs = await start(s.outsider.person, s.otherProjectId, s.description);
    expect(theirs.status).toBe(404);
    expect(theirs.json.error).toBe("no such scene in this project");

    const up = (await start(s.owner.person, s.projectId, s.description)).upload!;
    const pfm = s.files.find((f) => f.slot === "pfm")!;
    const pfmUrl = up.files.find((f) => f.slot === "pfm")!.url;
    for (const who of [s.viewer, s.editor, s.outsider]) {
      expect((await call(who.person, pfmUrl, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(404);
      expect((await call(who.person, up.finishUrl)).status).toBe(404);
      expect((await call(who.person, up.cancelUrl)).status).toBe(404);
    }
    // The right upload id under the wrong project.
    const crossed = pfmUrl.replace(s.projectId, s.otherProjectId);
    expect((await call(s.outsider.person, crossed, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(404);
    expect((await call(s.owner.person, crossed, { method: "PUT", body: pfm.body as BodyInit })).status).toBe(404);
    expect((await uploadRow(up.id)).status).toBe("pending");
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
    await call(s.owner.person, up.cancelUrl);
  });

  // In-process only: the probe measures this process, which is the server only when no TRACEWELL_URL is set.
  it.skipIf(SERVED)("streams a 64 MiB file through the route without holding it: live memory grows far less than the file", async () => {
    const owner = await account("stage-big");
    const projectId = await newProject(owner, "Big render");
    const w = 2048, h = 2731; // a 64 MiB PFM
    const created = await createScene({ projectId, name: "Big", scene: { ...kettleScene({ spp: 1 }), image: { width: w, height: h } }, authorId: owner.id });
    if (!created.ok) throw new Error("scene");
    const header = new TextEncoder().encode(`PF\n${w} ${h}\n-1\n`);
    const pfmBytes = header.length + w * h * 12;
    const fill = (piece: Uint8Array, at: number) => {
      for (let i = 0; i < piece.length; i++) {
        const pos = at + i;
        piece[i] = pos < header.length ? header[pos]! : (pos * 2654435761) >>> 24;
      }
    };
    // Hash the same generated bytes first, a piece at a time.
    const hasher = createHash("sha256");
    const reader = generated(pfmBytes, { chunk: 1024 * 1024, fill }).getReader();
    for (let r = await reader.read(); !r.done; r = await reader.read()) hasher.update(r.value);
    const pfmSha = hasher.digest("hex");
    const png = encodePng(w, h, new Uint8Array(w * h * 4));
    const thumb = encodePng(4, 3, new Uint8Array(48));
    const meta = { versionId: created.version.id, title: "big", spp: 1, seed: 7, width: w, height: h, integrator: "path", tracerVersion: TRACER_VERSION, accumulationHash: "fnv1a64:0123456789abcdef", renderMs: 1, samplesPerSecond: 1, groups: [] };
    const started = await start(owner.person, projectId, {
      kind: "render",
      sceneId: created.scene.id,
      meta,
      files: [
        { slot: "pfm", bytes: pfmBytes, sha256: pfmSha },
        { slot: "png", bytes: png.length, sha256: sha(png) },
        { slot: "thumb", bytes: thumb.length, sha256: sha(thumb) },
      ],
    });
    expect(started.status, started.json.error).toBe(201);
    const up = started.upload!;

    // The small files first, so that nothing but the large file moves through the route while memory is measured.
    for (const [slot, body] of [["png", png], ["thumb", thumb]] as const) {
      expect((await call(owner.person, up.files.find((f) => f.slot === slot)!.url, { method: "PUT", body: body as BodyInit })).status).toBe(200);
    }
    setFlagsFromString("--expose-gc");
    const gc = runInNewContext("gc") as () => void;
    const live = () => {
      const m = process.memoryUsage();
      return m.heapUsed + m.arrayBuffers;
    };
    // One collection does not settle the heap: what the earlier steps let go (the hashing pass, the small
    // uploads' requests) is freed over a few collections and turns of the event loop. A baseline taken
    // before that made the later, smaller readings look like growth (measured: 40+ MiB of such garbage).
    const settle = async () => {
      for (let i = 0; i < 4; i++) {
        gc();
        await new Promise((resolve) => setImmediate(resolve));
      }
      gc();
    };
    await settle();
    const before = live();
    let peak = before;
    let pulls = 0;
    // Collect garbage every 1 MiB so what is measured is what the server keeps, not what it has let go.
    const onPull = (sent: number) => {
      if (++pulls % 4 === 0) {
        gc();
        peak = Math.max(peak, live());
      }
      void sent;
    };
    const put = await call(owner.person, up.files.find((f) => f.slot === "pfm")!.url, {
      method: "PUT",
      body: generated(pfmBytes, { chunk: 256 * 1024, fill, onPull }),
      headers: { "content-length": String(pfmBytes) },
    });
    expect(put.status, put.json.error).toBe(200);
    // The floor is the lower of before and after: something of the test's own let go during the upload must
    // not hide what the upload kept.
    gc();
    const growth = peak - Math.min(before, live());

    const done = await call(owner.person, up.finishUrl);
    expect(done.status, done.json.error).toBe(200);
    const renderId = (done.json.render as { id: string }).id;
    const [row] = await db().select().from(renders).where(eq(renders.id, renderId));
    expect(await objectSize(row!.files.pfm!)).toBe(pfmBytes);
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);

    // The control: the same probe while this process does hold the whole file (reading it back in one piece).
    gc();
    const controlBase = live();
    let held = await readRenderFile(row!.files, "pfm");
    gc();
    const withHeld = live();
    expect(held!.length).toBe(pfmBytes);
    held = null;
    gc();
    const heldGrowth = withHeld - Math.min(controlBase, live());
    const mib = (n: number) => `${(n / 2 ** 20).toFixed(1)} MiB`;
    console.log(
      `64 MiB upload — file ${mib(pfmBytes)}; live memory growth while streaming it through the route: ${mib(growth)} (${((growth / pfmBytes) * 100).toFixed(0)}% of the file); ` +
        `the same probe while holding the file: ${mib(heldGrowth)} (${((heldGrowth / pfmBytes) * 100).toFixed(0)}%)`,
    );
    // The probe sees a held file; streaming stays well under it (a few 5 MiB parts in flight).
    expect(heldGrowth).toBeGreaterThan(pfmBytes * 0.8);
    expect(growth).toBeLessThan(pfmBytes / 2);
    await deleteRender(renderId); // 64 MiB is not worth keeping in the shared bucket
  }, 300_000);
});

describe("over real HTTP (run with TRACEWELL_URL=… against a served build)", () => {
  // A socket that closes mid-file is something only a real server sees; in-process the body can only error.
  it.skipIf(!SERVED)("a connection dropped mid-file fails the upload promptly and stages nothing", async () => {
    const s = await setup();
    const w = 1024, h = 1024;
    const created = await createScene({ projectId: s.projectId, name: "Drop", scene: { ...kettleScene(), image: { width: w, height: h } }, authorId: s.owner.id });
    if (!created.ok) throw new Error("scene");
    const pfmBytes = 16 + w * h * 12;
    const meta = { ...s.meta, versionId: created.version.id, width: w, height: h, groups: [] };
    const up = (await start(s.owner.person, s.projectId, { kind: "render", sceneId: created.scene.id, meta, files: [{ slot: "pfm", bytes: pfmBytes }, { slot: "png", bytes: 1000 }, { slot: "thumb", bytes: 100 }] })).upload!;
    await new Promise<void>((resolve) => {
      const req = httpRequest(`${process.env.TRACEWELL_URL}${up.files[0]!.url}`, { method: "PUT", headers: { cookie: s.owner.person.cookie, "content-length": String(pfmBytes) } });
      req.on("error", () => resolve());
      const chunk = Buffer.alloc(256 * 1024, 1);
      let sent = 0;
      const pump = () => {
        while (sent < 7 * 1024 * 1024) {
          sent += chunk.length;
          if (!req.write(chunk)) return void req.once("drain", pump);
        }
        req.destroy(); // more than one 5 MiB part has gone to the store by now
        resolve();
      };
      pump();
    });
    const row = await settledRow(up.id);
    expect(row.status).toBe("failed");
    expect(row.error).toMatch(/^beauty\.pfm: the upload stopped/);
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
    expect(await rendersOfScene(created.scene.id)).toBe(0);
  }, 120_000);
});

describe("staged asset uploads", () => {
  const kettleObj = new Uint8Array(readFileSync("scenes/meshes/wren-kettle.obj"));

  it("stores a mesh by its hash after re-checking it, and reports an already stored one without sending it", async () => {
    const owner = await account("stage-asset");
    const projectId = await newProject(owner, "Assets staged");
    const unique = new Uint8Array([...kettleObj, ...new TextEncoder().encode(`\n# ${randomUUID()}\n`)]);
    const started = await start(owner.person, projectId, { kind: "asset", name: "wren-kettle.obj", bytes: unique.length, sha256: sha(unique) });
    expect(started.status, started.json.error).toBe(201);
    const up = started.upload!;
    expect((await call(owner.person, up.files[0]!.url, { method: "PUT", body: unique as BodyInit })).status).toBe(200);
    const done = await call(owner.person, up.finishUrl);
    expect(done.status, done.json.error).toBe(200);
    expect(done.json.created).toBe(true);
    expect((done.json.asset as { ref: string }).ref).toBe(`sha256:${sha(unique)}`);
    expect(await objectSize(assetKey(sha(unique)))).toBe(unique.length);
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
    const again = await start(owner.person, projectId, { kind: "asset", name: "copy.obj", bytes: unique.length, sha256: sha(unique) });
    expect(again.status).toBe(200);
    expect((again.json.stored as { sha256: string }).sha256).toBe(sha(unique));
  });

  it("ten people finishing the same new mesh at once: one asset row, one blob, one of them told it was created", async () => {
    const owner = await account("stage-race");
    const projectId = await newProject(owner, "Assets race");
    const obj = new TextEncoder().encode(`# ${randomUUID()}\nv 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n`);
    const ups = await Promise.all(Array.from({ length: 10 }, () => start(owner.person, projectId, { kind: "asset", name: "tri.obj", bytes: obj.length, sha256: sha(obj) })));
    for (const u of ups) expect(u.status, u.json.error).toBe(201);
    await Promise.all(ups.map((u) => call(owner.person, u.upload!.files[0]!.url, { method: "PUT", body: obj as BodyInit })));
    const done = await Promise.all(ups.map((u) => call(owner.person, u.upload!.finishUrl)));
    for (const d of done) expect(d.status, d.json.error).toBe(200);
    expect(done.filter((d) => d.json.created === true).length).toBe(1);
    expect((await db().select().from(assets).where(eq(assets.projectId, projectId))).length).toBe(1);
    expect(await objectSize(assetKey(sha(obj)))).toBe(obj.length);
    for (const u of ups) expect(await listKeys(`staging/${u.upload!.id}/`)).toEqual([]);
  });

  it("a broken mesh is refused at finish naming its line: no asset row, no stored blob, nothing staged", async () => {
    const owner = await account("stage-broken");
    const projectId = await newProject(owner, "Assets broken");
    const obj = new TextEncoder().encode(`# ${randomUUID()}\nv 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\nf 1 2 9\n`);
    const up = (await start(owner.person, projectId, { kind: "asset", name: "broken.obj", bytes: obj.length, sha256: sha(obj) })).upload!;
    expect((await call(owner.person, up.files[0]!.url, { method: "PUT", body: obj as BodyInit })).status).toBe(200);
    const done = await call(owner.person, up.finishUrl);
    expect(done.status).toBe(400);
    expect(done.json.error).toMatch(/^broken\.obj: line 6: .*9.*; nothing was published/);
    expect(await db().select().from(assets).where(and(eq(assets.projectId, projectId)))).toEqual([]);
    expect(await objectExists(assetKey(sha(obj)))).toBe(false);
    expect(await listKeys(`staging/${up.id}/`)).toEqual([]);
  });
});
