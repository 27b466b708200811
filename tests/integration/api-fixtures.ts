// Shared by the API and pool integration tests: unique people, projects, scenes and tokens (the test
// database is shared, nothing is ever truncated), a served build of the app, and render worker processes.
import { spawn, type ChildProcess } from "node:child_process";
import { cpSync, existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, statSync, symlinkSync } from "node:fs";
import { tmpdir } from "node:os";
import { createServer } from "node:net";
import { join } from "node:path";
import { randomUUID } from "node:crypto";
import { memberships, projects, users } from "~/db/schema";
import { createToken } from "~/models/token.server";
import { createScene } from "~/models/scene.server";
import { db } from "~/services/db.server";

const ROOT = join(import.meta.dirname, "../..");
const BIN = join(ROOT, "node_modules/.bin");

export async function makeUser(label = "api") {
  const tag = randomUUID().slice(0, 8);
  const [user] = await db()
    .insert(users)
    .values({ email: `${label}-${tag}@example.test`, name: `${label} ${tag}`, passwordHash: "not-a-real-hash" })
    .returning();
  return user!;
}

export async function makeProject(ownerId: string, name = "Harrow Lane API project") {
  const [project] = await db().insert(projects).values({ name: `${name} ${randomUUID().slice(0, 6)}`, createdBy: ownerId }).returning();
  await db().insert(memberships).values({ projectId: project!.id, userId: ownerId, role: "owner" });
  return project!;
}

export async function addMember(projectId: string, userId: string, role: "owner" | "editor" | "viewer") {
  await db().insert(memberships).values({ projectId, userId, role });
}

export async function makeToken(userId: string, scope: "read" | "render"): Promise<string> {
  const { token } = await createToken({ userId, name: `api test ${scope}`, scope, expiresAt: null });
  return token;
}

/**
 * The desk-lamp corner of Harrow Lane Studio, small enough to render in a test: a grey card, the Osier lamp's
 * shade as a sphere, a warm key rect light and a cool fill sphere light in their own groups, and a sky.
 */
export function studioScene(o: { width?: number; height?: number; spp?: number; seed?: number; radius?: number } = {}) {
  return {
    format: "tracewell.scene/1",
    name: "Osier lamp corner (API test)",
    image: { width: o.width ?? 24, height: o.height ?? 16 },
    camera: { position: [0, 0.6, 2.4], target: [0, 0.3, 0], fovY: 40 },
    render: { integrator: "path", spp: o.spp ?? 8, seed: o.seed ?? 17, maxDepth: 4 },
    display: { exposure: 0, toneMap: "reinhard" },
    environment: { type: "sky", zenith: [0.05, 0.07, 0.12], horizon: [0.12, 0.11, 0.1], ground: [0.03, 0.03, 0.03] },
    materials: {
      card: { type: "diffuse", albedo: [0.5, 0.5, 0.48] },
      shade: { type: "metal", reflectance: [0.9, 0.8, 0.6], roughness: 0.3 },
    },
    objects: [
      { id: "card", shape: { type: "rect", center: [0, 0, 0], u: [3, 0, 0], v: [0, 0, -3] }, material: "card" },
      { id: "shade", shape: { type: "sphere", center: [0, 0.3, 0], radius: o.radius ?? 0.3 }, material: "shade" },
    ],
    lights: [
      { id: "key", type: "area", group: "key", shape: { type: "rect", center: [0.8, 1.4, 0.6], u: [0.5, 0, 0], v: [0, 0, 0.5] }, radiance: [9, 8, 6] },
      { id: "fill", type: "area", group: "fill", shape: { type: "sphere", center: [-1, 0.8, 1], radius: 0.15 }, radiance: [2, 2.5, 3] },
    ],
  };
}

export async function makeScene(projectId: string, authorId: string, scene: Record<string, unknown> = studioScene()) {
  const created = await createScene({ projectId, name: `Osier corner ${randomUUID().slice(0, 6)}`, scene, authorId, message: "First light" });
  if (!created.ok) throw new Error(`test scene invalid: ${JSON.stringify(created.issues)}`);
  return created;
}

// ---------------------------------------------------------------------------------------------------------
// Processes

export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once("error", reject);
    srv.listen(0, "127.0.0.1", () => {
      const addr = srv.address();
      const port = typeof addr === "object" && addr ? addr.port : 0;
      srv.close(() => resolve(port));
    });
  });
}

function newestMtime(dir: string): number {
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, entry.name);
    if (entry.isDirectory()) newest = Math.max(newest, newestMtime(p));
    else newest = Math.max(newest, statSync(p).mtimeMs);
  }
  return newest;
}

function run(cmd: string, args: string[], env: NodeJS.ProcessEnv): Promise<void> {
  return new Promise((resolve, reject) => {
    const p = spawn(cmd, args, { cwd: ROOT, env, stdio: ["ignore", "ignore", "pipe"] });
    let err = "";
    p.stderr?.on("data", (d: Buffer) => (err += d.toString()));
    p.on("exit", (code) => (code === 0 ? resolve() : reject(new Error(`${cmd} ${args.join(" ")} exited ${code}: ${err.slice(-2000)}`))));
  });
}

/**
 * Builds the app when there is no build or the sources are newer than it (one test file at a time), and
 * returns a private copy of it: other people rebuilding ./build meanwhile must not swap files under a
 * server that is being tested.
 */
export async function ensureBuild(): Promise<string> {
  const lock = join(ROOT, ".data/api-test-build.lock");
  mkdirSync(join(ROOT, ".data"), { recursive: true });
  for (;;) {
    try {
      mkdirSync(lock);
      break;
    } catch {
      // Another test file is building; a lock older than five minutes was left by a killed run.
      if (existsSync(lock) && Date.now() - statSync(lock).mtimeMs > 300_000) rmSync(lock, { recursive: true, force: true });
      await new Promise((r) => setTimeout(r, 500));
    }
  }
  try {
    const server = join(ROOT, "build/server/index.js");
    const stale = !existsSync(server) || Math.max(newestMtime(join(ROOT, "app")), newestMtime(join(ROOT, "tracer"))) > statSync(server).mtimeMs;
    if (stale) await run(join(BIN, "react-router"), ["build"], process.env);
    const copy = mkdtempSync(join(tmpdir(), "tracewell-api-test-"));
    cpSync(join(ROOT, "build"), join(copy, "build"), { recursive: true });
    cpSync(join(ROOT, "package.json"), join(copy, "package.json"));
    symlinkSync(join(ROOT, "node_modules"), join(copy, "node_modules"));
    return copy;
  } finally {
    rmSync(lock, { recursive: true, force: true });
  }
}

export type Served = { baseUrl: string; stop(): Promise<void> };

async function waitForHttp(url: string, child: ChildProcess, log: () => string, timeoutMs = 60_000): Promise<void> {
  const until = Date.now() + timeoutMs;
  while (Date.now() < until) {
    if (child.exitCode !== null) throw new Error(`server exited early: ${log()}`);
    try {
      const res = await fetch(url);
      if (res.status < 500) return;
    } catch {
      // not listening yet
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`server did not answer ${url}: ${log()}`);
}

function stopChild(child: ChildProcess, signal: NodeJS.Signals = "SIGTERM"): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => {
    const t = setTimeout(() => child.kill("SIGKILL"), 10_000);
    child.once("exit", () => {
      clearTimeout(t);
      resolve();
    });
    child.kill(signal);
  });
}

/**
 * The server under test: TRACEWELL_URL when given (a served build, see bin/serve-test with
 * NO_RENDER_WORKER=1), otherwise the production build served here on a free port.
 */
export async function serveApp(extraEnv: Record<string, string> = {}): Promise<Served> {
  const given = process.env.TRACEWELL_URL;
  if (given && /^https?:\/\//.test(given)) return { baseUrl: given.replace(/\/$/, ""), stop: async () => undefined };
  const dir = await ensureBuild();
  const port = await freePort();
  let out = "";
  const child = spawn(join(BIN, "react-router-serve"), ["./build/server/index.js"], {
    cwd: dir,
    env: { ...process.env, NODE_ENV: "production", PORT: String(port), HOST: "127.0.0.1", ...extraEnv },
    stdio: ["ignore", "pipe", "pipe"],
  });
  child.stdout?.on("data", (d: Buffer) => (out = (out + d.toString()).slice(-4000)));
  child.stderr?.on("data", (d: Buffer) => (out = (out + d.toString()).slice(-4000)));
  const baseUrl = `http://127.0.0.1:${port}`;
  await waitForHttp(`${baseUrl}/api/v1/openapi.json`, child, () => out);
  return {
    baseUrl,
    stop: async () => {
      await stopChild(child);
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export type WorkerProc = { child: ChildProcess; name: string; output(): string; stop(signal?: NodeJS.Signals): Promise<void> };

/** `npm run worker` as a separate process, with only the database and object store settings. */
export function startWorker(name: string, extraEnv: Record<string, string> = {}): WorkerProc {
  const keep = ["PATH", "HOME", "DATABASE_URL", "S3_ENDPOINT", "S3_REGION", "S3_BUCKET", "S3_ACCESS_KEY_ID", "S3_SECRET_ACCESS_KEY", "S3_FORCE_PATH_STYLE"];
  const env: NodeJS.ProcessEnv = {};
  for (const k of keep) if (process.env[k] !== undefined) env[k] = process.env[k];
  let out = "";
  // node --import tsx (not the tsx binary, which runs the script in a child process): a signal sent to this
  // process must reach the worker itself, as SIGKILL from an out-of-memory killer would.
  const child = spawn(process.execPath, ["--import", "tsx", "app/workers/render-worker.ts"], {
    cwd: ROOT,
    env: { ...env, RENDER_WORKER_NAME: name, RENDER_WORKER_POLL_SECONDS: "0.5", RENDER_WORKER_MAINTENANCE_SECONDS: "1", ...extraEnv },
    stdio: ["ignore", "pipe", "pipe"],
  });
  child.stdout?.on("data", (d: Buffer) => (out = (out + d.toString()).slice(-20000)));
  child.stderr?.on("data", (d: Buffer) => (out = (out + d.toString()).slice(-20000)));
  return { child, name, output: () => out, stop: (signal) => stopChild(child, signal) };
}

export async function waitForOutput(w: WorkerProc, pattern: RegExp, timeoutMs = 60_000): Promise<void> {
  const until = Date.now() + timeoutMs;
  while (!pattern.test(w.output())) {
    if (w.child.exitCode !== null) throw new Error(`worker ${w.name} exited: ${w.output()}`);
    if (Date.now() > until) throw new Error(`worker ${w.name} never printed ${pattern}: ${w.output()}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

export type ApiErrorJson = { code: string; message: string; path?: string; issues?: { path: string; message: string }[]; headVersionId?: string };
export type JsonBody = { [key: string]: unknown; error?: ApiErrorJson; items?: unknown[]; nextCursor?: string | null };

/** A tiny API client: JSON in, status + JSON (or bytes) out. */
export function client(baseUrl: string, token?: string) {
  async function call(method: string, path: string, body?: unknown, headers: Record<string, string> = {}) {
    const res = await fetch(baseUrl + path, {
      method,
      headers: {
        ...(token ? { Authorization: `Bearer ${token}` } : {}),
        ...(body !== undefined ? { "Content-Type": "application/json" } : {}),
        ...headers,
      },
      body: body === undefined ? undefined : typeof body === "string" ? body : JSON.stringify(body),
    });
    const type = res.headers.get("content-type") ?? "";
    const bytes = new Uint8Array(await res.arrayBuffer());
    const json: unknown = type.includes("json") && bytes.length > 0 ? JSON.parse(Buffer.from(bytes).toString("utf8")) : null;
    return { status: res.status, headers: res.headers, json: (json ?? {}) as JsonBody, bytes };
  }
  return {
    get: (path: string, headers?: Record<string, string>) => call("GET", path, undefined, headers),
    post: (path: string, body: unknown, headers?: Record<string, string>) => call("POST", path, body, headers),
    del: (path: string) => call("DELETE", path),
  };
}
