// @vitest-environment jsdom
// The browser half of a staged upload, against a scripted server: what it declares (sizes and SHA-256s), the
// order of its requests, progress per file and overall reaching every byte, and that a failure or a cancel
// tells the server to give the upload up.
import { createHash } from "node:crypto";
import { afterEach, beforeEach, describe, expect, it, vi } from "vitest";
import { sha256Hex, stagedUpload, type UploadProgress } from "~/lib/upload.client";

type Sent = { method: string; url: string; body: unknown };
let sent: Sent[];
/** How the fake server answers each file PUT: "ok", an HTTP error, or a dropped connection. */
let putAnswer: (url: string) => { status: number; body: unknown } | "drop";

class FakeXhr {
  static lastAbort: (() => void) | null = null;
  upload: { onprogress: ((e: { loaded: number; total: number; lengthComputable: boolean }) => void) | null } = { onprogress: null };
  onload: (() => void) | null = null;
  onerror: (() => void) | null = null;
  onabort: (() => void) | null = null;
  status = 0;
  responseText = "";
  responseType = "";
  private method = "";
  private url = "";
  open(method: string, url: string) {
    this.method = method;
    this.url = url;
  }
  setRequestHeader() {}
  abort() {
    this.onabort?.();
  }
  send(body: Blob) {
    sent.push({ method: this.method, url: this.url, body: body.size });
    const total = body.size;
    FakeXhr.lastAbort = () => this.abort();
    queueMicrotask(() => {
      // Progress in three steps, as a browser reports a body leaving in pieces.
      for (const f of [0.25, 0.6, 1]) this.upload.onprogress?.({ loaded: Math.round(total * f), total, lengthComputable: true });
      const answer = putAnswer(this.url);
      if (answer === "drop") return this.onerror?.();
      this.status = answer.status;
      this.responseText = JSON.stringify(answer.body);
      this.onload?.();
    });
  }
}

beforeEach(() => {
  sent = [];
  putAnswer = () => ({ status: 200, body: { ok: true } });
  vi.stubGlobal("XMLHttpRequest", FakeXhr);
  // The pure-JS digest: jsdom's buffers are not the platform digest's (the browser tests use that one, and the
  // server checks every hash it is sent, so a wrong digest there fails them).
  vi.stubGlobal("crypto", {});
  vi.stubGlobal(
    "fetch",
    vi.fn(async (url: string, init: RequestInit) => {
      const body = init.body ? (JSON.parse(String(init.body)) as unknown) : undefined;
      sent.push({ method: init.method ?? "GET", url, body });
      if (url === "/projects/p1/uploads") {
        const files = (body as { files: { slot: string; bytes: number }[] }).files;
        return Response.json(
          {
            ok: true,
            upload: {
              id: "u1",
              files: files.map((f) => ({ slot: f.slot, name: `${f.slot}.bin`, bytes: f.bytes, url: `/projects/p1/uploads/u1/files/${f.slot}` })),
              finishUrl: "/projects/p1/uploads/u1/finish",
              cancelUrl: "/projects/p1/uploads/u1/cancel",
            },
          },
          { status: 201 },
        );
      }
      if (url.endsWith("/finish")) return Response.json({ ok: true, render: { id: "r1" } });
      if (url.endsWith("/cancel")) return Response.json({ ok: true, status: "failed" });
      return Response.json({ ok: false, error: "unexpected" }, { status: 500 });
    }),
  );
});
afterEach(() => vi.unstubAllGlobals());

const a = new Uint8Array(1000).fill(7);
const b = new Uint8Array(3000).fill(9);
const hex = (x: Uint8Array) => createHash("sha256").update(x).digest("hex");

describe("stagedUpload", () => {
  it("declares sizes and SHA-256s, sends each file, finishes, and its progress reaches every byte per file and overall", async () => {
    const events: UploadProgress[] = [];
    const r = await stagedUpload("p1", { kind: "render", sceneId: "s1" }, [{ slot: "pfm", name: "beauty.pfm", body: a }, { slot: "png", name: "display.png", body: new Blob([b]) }], {
      onProgress: (p) => events.push(p),
    });
    expect(r).toEqual({ ok: true, body: { ok: true, render: { id: "r1" } } });
    // The SHA-256 the server is told is the standard one (node:crypto as the reference implementation).
    expect(sent[0]!.body).toEqual({ kind: "render", sceneId: "s1", files: [{ slot: "pfm", bytes: 1000, sha256: hex(a) }, { slot: "png", bytes: 3000, sha256: hex(b) }] });
    expect(sent.map((s) => `${s.method} ${s.url}`)).toEqual([
      "POST /projects/p1/uploads",
      "PUT /projects/p1/uploads/u1/files/pfm",
      "PUT /projects/p1/uploads/u1/files/png",
      "POST /projects/p1/uploads/u1/finish",
    ]);
    const uploading = events.filter((e) => e.phase === "uploading");
    const fractions = uploading.map((e) => e.fraction);
    expect(fractions).toEqual([...fractions].sort((x, y) => x - y)); // never goes backwards
    const last = events.at(-1)!;
    expect(last.phase).toBe("finishing");
    expect(last.loaded).toBe(4000);
    expect(last.total).toBe(4000);
    expect(last.fraction).toBe(1);
    expect(last.files.map((f) => [f.slot, f.loaded, f.total])).toEqual([
      ["pfm", 1000, 1000],
      ["png", 3000, 3000],
    ]);
    // Half-way through the second file: all of the first, part of the second.
    expect(uploading.some((e) => e.files[0]!.loaded === 1000 && e.files[1]!.loaded > 0 && e.files[1]!.loaded < 3000)).toBe(true);
  });

  it("a refused file stops the upload, reports the server's message and asks the server to give it up", async () => {
    putAnswer = (url) => (url.endsWith("/png") ? { status: 400, body: { ok: false, error: "display.png: the bytes received hash to …; nothing was published" } } : { status: 200, body: { ok: true } });
    const r = await stagedUpload("p1", { kind: "render" }, [{ slot: "pfm", name: "beauty.pfm", body: a }, { slot: "png", name: "display.png", body: b }]);
    expect(r).toEqual({ ok: false, error: "display.png: the bytes received hash to …; nothing was published", field: undefined, status: 400 });
    expect(sent.map((s) => `${s.method} ${s.url}`).slice(-1)).toEqual(["POST /projects/p1/uploads/u1/cancel"]);
    expect(sent.some((s) => s.url.endsWith("/finish"))).toBe(false);
  });

  it("a dropped connection names the file; a cancel during a file gives the upload up", async () => {
    putAnswer = () => "drop";
    const r = await stagedUpload("p1", { kind: "asset", name: "kettle.obj" }, [{ slot: "file", name: "kettle.obj", body: a }]);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error).toBe("kettle.obj: the connection failed during the upload; nothing was published");
    expect(sent.at(-1)!.url).toBe("/projects/p1/uploads/u1/cancel");

    sent = [];
    putAnswer = () => ({ status: 200, body: { ok: true } });
    const ctrl = new AbortController();
    const pending = stagedUpload("p1", { kind: "render" }, [{ slot: "pfm", name: "beauty.pfm", body: a }], {
      signal: ctrl.signal,
      onProgress: (p) => {
        if (p.phase === "uploading" && p.loaded > 0) ctrl.abort();
      },
    });
    const cancelled = await pending;
    expect(cancelled).toEqual({ ok: false, error: "the upload was cancelled; nothing was published", status: 0 });
    expect(sent.at(-1)!.url).toBe("/projects/p1/uploads/u1/cancel");
    expect(sent.some((s) => s.url.endsWith("/finish"))).toBe(false);
  });

  it("hashes without the platform digest (pages served over plain HTTP), equal to the reference", async () => {
    const big = new Uint8Array(9 * 1024 * 1024).map((_, i) => (i * 31) & 255);
    expect(await sha256Hex(new Blob([big]))).toBe(hex(big));
    expect(await sha256Hex(big)).toBe(hex(big));
  });
});
