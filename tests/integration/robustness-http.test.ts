// Hostile and crowded HTTP traffic against a served build (TRACEWELL_URL, or a build served here on a free
// port): oversized and endless bodies, forged and tampered credentials, twenty people saving onto one parent at
// once, and concurrent uploads of one file. Everything is created fresh (random people and projects).
//
// Run: bin/with-test-env npx vitest run tests/integration/robustness-http.test.ts
import { request as httpRequest } from "node:http";
import { randomUUID } from "node:crypto";
import { createCookie } from "react-router";
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { assets, memberships, scenes, sceneVersions } from "~/db/schema";
import { assetKey } from "~/models/asset.server";
import { createToken } from "~/models/token.server";
import { createUser } from "~/models/user.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket, objectExists } from "~/services/storage.server";
import type { AppServer } from "../support/app-server";
import { Person, uniqueEmail } from "../support/person";
import { addMember, client, makeProject, makeScene, makeToken, serveApp, studioScene, type Served } from "./api-fixtures";

const PASSWORD = "robust horse battery";
const API_BODY_LIMIT = 8 * 1024 * 1024; // app/services/api.server.ts MAX_BODY_BYTES
const UPLOAD_LIMIT = 128 * 1024 * 1024; // LIMITS.maxAssetBytes

let served: Served;
let base: string;
let http: AppServer;
let owner: { id: string; email: string };
let editor: { id: string; email: string };
let project: Awaited<ReturnType<typeof makeProject>>;
let renderToken: string;

/** A person's browser against the served build (cookies kept, own network address). */
function shim(): AppServer {
  return { routes: [], close: async () => undefined, fetch: (path, init) => fetch(base + path, { redirect: "manual", ...init }) };
}

async function signedIn(email: string): Promise<Person> {
  const p = new Person(http);
  const res = await p.signIn(email, PASSWORD);
  if (res.status !== 302) throw new Error(`sign-in failed for ${email}: ${res.status}`);
  return p;
}

beforeAll(async () => {
  await ensureBucket();
  served = await serveApp();
  base = served.baseUrl;
  http = shim();
  const o = await createUser({ email: uniqueEmail("robust-owner"), name: "Robust Owner", password: PASSWORD });
  const e = await createUser({ email: uniqueEmail("robust-editor"), name: "Robust Editor", password: PASSWORD });
  owner = { id: o.id, email: o.email };
  editor = { id: e.id, email: e.email };
  project = await makeProject(owner.id, "Harrow Lane robustness");
  await addMember(project.id, editor.id, "editor");
  renderToken = await makeToken(owner.id, "render");
}, 600_000);

afterAll(async () => {
  await served?.stop();
  await dbPool().end();
});

// ---------------------------------------------------------------------------------------------------------
// Bodies

/**
 * Sends an endless body (chunked, no Content-Length) and reports how many bytes the server had pulled when it
 * answered. A server that refuses by size answers after about its limit; one that reads everything first never
 * answers before the client gives up at `capBytes`.
 */
function endlessPost(path: string, headers: Record<string, string>, capBytes: number): Promise<{ status: number; body: string; sentBytes: number; answeredEarly: boolean }> {
  return new Promise((resolve, reject) => {
    const url = new URL(path, base);
    let sent = 0;
    let answered = false;
    const chunk = Buffer.alloc(64 * 1024, 0x61); // "aaaa…"
    const req = httpRequest(
      { host: url.hostname, port: url.port, path: url.pathname + url.search, method: "POST", headers: { ...headers, "transfer-encoding": "chunked" } },
      (res) => {
        answered = true;
        const sentAtAnswer = sent;
        let body = "";
        res.setEncoding("utf8");
        res.on("data", (d: string) => (body += d.slice(0, 2000)));
        res.on("end", () => {
          resolve({ status: res.statusCode ?? 0, body, sentBytes: sentAtAnswer, answeredEarly: sentAtAnswer < capBytes });
          req.destroy();
        });
      },
    );
    req.on("error", (e) => {
      if (!answered) {
        // A server that refuses by size may answer and close at once; the client can then see the reset before
        // the answer. Closing well before the cap is a refusal too (status 0 records that no answer was read).
        resolve({ status: 0, body: String(e), sentBytes: sent, answeredEarly: sent < capBytes });
      }
    });
    const pump = () => {
      while (!answered && sent < capBytes) {
        sent += chunk.length;
        if (!req.write(chunk)) {
          req.once("drain", pump);
          return;
        }
      }
      if (!answered) req.end();
    };
    pump();
  });
}

/** Declares a huge Content-Length, sends a little, and sees whether the server answers without waiting for the rest. */
function liarPost(path: string, headers: Record<string, string>, declared: number): Promise<{ status: number; body: string }> {
  return new Promise((resolve, reject) => {
    const url = new URL(path, base);
    const req = httpRequest(
      { host: url.hostname, port: url.port, path: url.pathname + url.search, method: "POST", headers: { ...headers, "content-length": String(declared) } },
      (res) => {
        let body = "";
        res.setEncoding("utf8");
        res.on("data", (d: string) => (body += d));
        res.on("end", () => {
          resolve({ status: res.statusCode ?? 0, body });
          req.destroy();
        });
      },
    );
    req.on("error", reject);
    req.write(Buffer.alloc(64 * 1024, 0x61));
    // …and never the rest: only a server that judges the declared size answers.
  });
}

describe("oversized request bodies", () => {
  it("API: a body over the limit with Content-Length is refused with 413 and a JSON message naming the limit", async () => {
    const { scene } = await makeScene(project.id, owner.id);
    const big = JSON.stringify({ parentVersionId: randomUUID(), message: "big", scene: { notes: "x".repeat(API_BODY_LIMIT + 1024) } });
    const res = await client(base, renderToken).post(`/api/v1/scenes/${scene.id}/versions`, big);
    expect(res.status).toBe(413);
    expect(res.json.error?.code).toBe("body_too_large");
    expect(res.json.error?.message).toMatch(/at most \d+ bytes/);
  });

  it("API: a Content-Length over the limit is refused without waiting for the body", async () => {
    const { scene } = await makeScene(project.id, owner.id);
    const res = await liarPost(`/api/v1/scenes/${scene.id}/versions`, { authorization: `Bearer ${renderToken}`, "content-type": "application/json" }, 1024 * 1024 * 1024);
    expect(res.status).toBe(413);
    expect(res.body).toMatch(/body_too_large/);
  });

  it("API: an endless chunked body is cut off near the limit, not read to the end", async () => {
    const { scene } = await makeScene(project.id, owner.id);
    const r = await endlessPost(`/api/v1/scenes/${scene.id}/versions`, { authorization: `Bearer ${renderToken}`, "content-type": "application/json" }, 8 * API_BODY_LIMIT);
    expect(r.answeredEarly, `the server read ${r.sentBytes} bytes before answering`).toBe(true);
    // 413, or the connection closed as the server refused the rest (the client may not get to read the answer).
    expect([413, 0], r.body).toContain(r.status);
  });

  it("upload: a declared size over the asset limit is refused with 413 naming the limit, without reading the body", async () => {
    const owner_ = await signedIn(owner.email);
    const res = await liarPost(`/projects/${project.id}/assets/upload?name=huge.obj`, { cookie: owner_.cookie, "content-type": "application/octet-stream" }, UPLOAD_LIMIT + 1);
    expect(res.status).toBe(413);
    expect(res.body).toMatch(/limit/);
  });

  it("upload: an endless chunked upload is cut off near the asset limit, not read to the end", async () => {
    const owner_ = await signedIn(owner.email);
    const r = await endlessPost(`/projects/${project.id}/assets/upload?name=endless.obj`, { cookie: owner_.cookie, "content-type": "application/octet-stream" }, UPLOAD_LIMIT + 32 * 1024 * 1024);
    expect(r.answeredEarly, `the server read ${r.sentBytes} bytes before answering`).toBe(true);
    expect([413, 0], r.body).toContain(r.status);
    // …and it is still serving.
    expect((await fetch(`${base}/healthz`)).status).toBe(200);
  }, 300_000);

  it("forms: an endless chunked form post to the sign-in page is cut off, not read to the end", async () => {
    const r = await endlessPost("/login", { "content-type": "application/x-www-form-urlencoded" }, 64 * 1024 * 1024);
    expect(r.answeredEarly, `the server read ${r.sentBytes} bytes before answering`).toBe(true);
    // A 4xx, or the connection closed as the server refused the rest.
    expect(r.status === 0 || (r.status >= 400 && r.status < 500), `status ${r.status}`).toBe(true);
  }, 300_000);

  it("the scene form refuses an oversized scene text by field, and the head stays put", async () => {
    const { scene, version } = await makeScene(project.id, owner.id);
    const ed = await signedIn(editor.email);
    const res = await ed.send(`/projects/${project.id}/scenes/${scene.id}`, {
      method: "POST",
      form: { intent: "save", message: "too big", parentVersionId: version.id, sceneText: JSON.stringify({ ...studioScene(), notes: "x".repeat(5_100_000) }) },
    });
    expect(res.status).toBeLessThan(500);
    expect(res.text).toMatch(/too large|at most/);
    const [row] = await db().select().from(scenes).where(eq(scenes.id, scene.id));
    expect(row!.headVersionId).toBe(version.id);
  });
});

// ---------------------------------------------------------------------------------------------------------
// Credentials

describe("forged, tampered and expired credentials", () => {
  const api = (headers: Record<string, string>) => fetch(`${base}/api/v1/projects`, { headers, redirect: "manual" });
  const page = (cookie: string) => fetch(`${base}/projects/${project.id}`, { headers: { cookie }, redirect: "manual" });

  it("a cookie signed with the real secret but naming a made-up session is refused", async () => {
    const secret = process.env.SESSION_SECRET;
    expect(secret, "run under bin/with-test-env so the test knows the server's cookie secret").toBeTruthy();
    // The same cookie format as the app's session storage: a signed, encoded { sid } (react-router createCookie).
    const forged = createCookie("tw_session", { secrets: [secret!] });
    const header = (await forged.serialize(btoa(JSON.stringify({ sid: randomUUID() })))).split(";")[0]!;
    const res = await page(header);
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toMatch(/^\/login/);
  });

  it("a real session cookie with one character of its signature changed is refused", async () => {
    const p = await signedIn(owner.email);
    expect((await page(p.cookie)).status).toBe(200);
    const i = p.cookie.length - 3;
    const c = p.cookie[i] === "A" ? "B" : "A";
    const tampered = p.cookie.slice(0, i) + c + p.cookie.slice(i + 1);
    const res = await page(tampered);
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toMatch(/^\/login/);
  });

  it("a session cookie replayed after signing out is refused", async () => {
    const p = await signedIn(owner.email);
    const saved = p.cookie;
    await p.post("/logout", {});
    expect(p.cookie).toBe("");
    const res = await page(saved);
    expect(res.status).toBe(302);
    expect(res.headers.get("location")).toMatch(/^\/login/);
  });

  it("a session cookie does not authenticate API calls that also carry a bad token", async () => {
    const p = await signedIn(owner.email);
    const res = await api({ cookie: p.cookie, authorization: "Bearer tw_" + "Z".repeat(43) });
    expect(res.status).toBe(401);
  });

  it("refuses forged, altered, mis-schemed, expired and revoked tokens with 401 and the JSON error", async () => {
    const valid = await makeToken(owner.id, "read");
    const altered = valid.slice(0, -1) + (valid.endsWith("A") ? "B" : "A");
    const { token: expired } = await createToken({ userId: owner.id, name: "expired", scope: "read", expiresAt: new Date(Date.now() - 1000) });
    const cases: [string, string][] = [
      ["random token", `Bearer tw_${"x".repeat(43)}`],
      ["one character changed", `Bearer ${altered}`],
      ["too long", `Bearer ${valid}A`],
      ["Basic scheme", `Basic ${Buffer.from(`${owner.email}:${valid}`).toString("base64")}`],
      ["empty bearer", "Bearer "],
      ["two tokens", `Bearer ${valid} ${valid}`],
      ["expired", `Bearer ${expired}`],
      ["NUL byte", `Bearer tw_${"a".repeat(21)}%00${"a".repeat(19)}`],
    ];
    expect((await api({ authorization: `Bearer ${valid}` })).status).toBe(200);
    for (const [name, header] of cases) {
      const res = await api({ authorization: header });
      expect(res.status, name).toBe(401);
      const body = (await res.json()) as { error?: { code?: string } };
      expect(body.error?.code, name).toBe("unauthenticated");
    }
  });

  it("a token stops reaching a project the moment its person leaves it", async () => {
    const leaver = await createUser({ email: uniqueEmail("robust-leaver"), name: "Leaver", password: PASSWORD });
    await addMember(project.id, leaver.id, "editor");
    const token = await makeToken(leaver.id, "render");
    const c = client(base, token);
    expect((await c.get(`/api/v1/projects/${project.id}`)).status).toBe(200);
    await db().delete(memberships).where(and(eq(memberships.projectId, project.id), eq(memberships.userId, leaver.id)));
    const res = await c.get(`/api/v1/projects/${project.id}`);
    expect(res.status).toBe(404);
  });
});

// ---------------------------------------------------------------------------------------------------------
// Concurrency

async function versionsOf(sceneId: string) {
  return db().select().from(sceneVersions).where(eq(sceneVersions.sceneId, sceneId));
}

describe("twenty people saving onto the same parent at once", () => {
  it("through the API: one 201, nineteen 409 naming the winner as head; the history is intact", async () => {
    const { scene, version } = await makeScene(project.id, owner.id);
    const tokens = await Promise.all(Array.from({ length: 20 }, () => makeToken(owner.id, "render")));
    const results = await Promise.all(
      tokens.map((t, i) =>
        client(base, t).post(`/api/v1/scenes/${scene.id}/versions`, {
          parentVersionId: version.id,
          scene: studioScene({ radius: 0.1 + i * 0.01 }),
          message: `Client ${i} resizes the shade`,
        }),
      ),
    );
    const statuses = results.map((r) => r.status).sort();
    expect(statuses.filter((s) => s === 201)).toHaveLength(1);
    expect(statuses.filter((s) => s === 409)).toHaveLength(19);
    const winner = results.find((r) => r.status === 201)!.json as { id: string; number: number };
    for (const r of results.filter((x) => x.status === 409)) expect(r.json.error?.headVersionId).toBe(winner.id);

    const rows = await versionsOf(scene.id);
    expect(rows.map((v) => v.number).sort()).toEqual([1, 2]);
    const [head] = await db().select().from(scenes).where(eq(scenes.id, scene.id));
    expect(head!.headVersionId).toBe(winner.id);
    expect(rows.find((v) => v.id === winner.id)!.parentId).toBe(version.id);
  });

  it("through the scene page's form: exactly one new version lands, nobody gets a server error", async () => {
    const { scene, version } = await makeScene(project.id, owner.id);
    const people = await Promise.all(Array.from({ length: 20 }, (_, i) => (i % 2 === 0 ? signedIn(owner.email) : signedIn(editor.email))));
    const results = await Promise.all(
      people.map((p, i) =>
        p.send(`/projects/${project.id}/scenes/${scene.id}`, {
          method: "POST",
          form: { intent: "save", message: `Form save ${i}`, parentVersionId: version.id, sceneText: JSON.stringify(studioScene({ radius: 0.1 + i * 0.01 }), null, 2) },
        }),
      ),
    );
    expect(results.filter((r) => r.status >= 500).map((r) => r.status)).toEqual([]);
    const rows = await versionsOf(scene.id);
    expect(rows.map((v) => v.number).sort()).toEqual([1, 2]);
    const [head] = await db().select().from(scenes).where(eq(scenes.id, scene.id));
    expect(rows.some((v) => v.id === head!.headVersionId && v.number === 2)).toBe(true);
    // The nineteen losers are told about the conflict (the page shows whose version came first).
    expect(results.filter((r) => /conflict/i.test(r.text)).length).toBe(19);
  });
});

describe("concurrent uploads of one asset", () => {
  it("ten simultaneous uploads of the same mesh store it once: one row, one object, nine answers naming the same asset", async () => {
    const owner_ = await signedIn(owner.email);
    // a unique file: our pebble with a random comment, so no other test has stored it
    const obj = `# pebble ${randomUUID()}\nv 0 0 0\nv 1 0 0\nv 0 1 0\nv 0 0 1\nf 1 3 2\nf 1 2 4\nf 1 4 3\nf 2 3 4\n`;
    const results = await Promise.all(
      Array.from({ length: 10 }, () =>
        fetch(`${base}/projects/${project.id}/assets/upload?name=pebble.obj`, {
          method: "POST",
          headers: { cookie: owner_.cookie, "content-type": "application/octet-stream" },
          body: obj,
        }).then(async (r) => ({ status: r.status, json: (await r.json()) as { ok: boolean; created?: boolean; asset?: { sha256: string } } })),
      ),
    );
    expect(results.map((r) => r.status)).toEqual(new Array(10).fill(200));
    const shas = new Set(results.map((r) => r.json.asset?.sha256));
    expect(shas.size).toBe(1);
    expect(results.filter((r) => r.json.created === true)).toHaveLength(1);
    const sha = [...shas][0]!;
    const rows = await db().select().from(assets).where(and(eq(assets.projectId, project.id), eq(assets.sha256, sha)));
    expect(rows).toHaveLength(1);
    expect(await objectExists(assetKey(sha))).toBe(true);
  });
});
