// `npm run bench:api`: load API v1 on loopback with autocannon and report requests per second and p50/p99
// latency for reading a version and listing renders, against a separate database (tracewell_bench) holding
// thousands of versions and renders. Options: --duration <s> (default 8), --connections <n> (default 10),
// --json. The served build is ./build (rebuilt when stale), or BENCH_BUILD_DIR's build.
// Runs through bin/with-test-env by itself when no database is configured (it needs the object store settings
// for the server; the data lives only in tracewell_bench).
import { spawn, spawnSync } from "node:child_process";
import { rmSync } from "node:fs";
import { cpus, loadavg } from "node:os";
import { randomUUID } from "node:crypto";
import { join } from "node:path";
import autocannon from "autocannon";
import { drizzle } from "drizzle-orm/node-postgres";
import { migrate } from "drizzle-orm/node-postgres/migrator";
import pg from "pg";
import { z } from "zod";
import * as schema from "~/db/schema";

const ROOT = join(import.meta.dirname, "../..");

if (!process.env.DATABASE_URL || !process.env.S3_ENDPOINT) {
  const r = spawnSync(join(ROOT, "bin/with-test-env"), [join(ROOT, "node_modules/.bin/tsx"), ...process.argv.slice(1)], { stdio: "inherit", cwd: ROOT });
  process.exit(r.status ?? 1);
}

const Args = z.object({
  duration: z.coerce.number().int().min(1).max(120).default(8),
  connections: z.coerce.number().int().min(1).max(200).default(10),
  json: z.boolean().default(false),
});
function parseArgs(argv: string[]) {
  const raw: Record<string, string | boolean> = {};
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === "--json") raw.json = true;
    else if (a.startsWith("--") && argv[i + 1] !== undefined) raw[a.slice(2)] = argv[++i];
  }
  const parsed = Args.safeParse(raw);
  if (!parsed.success) {
    console.error(parsed.error.issues.map((i) => `--${i.path.join(".")}: ${i.message}`).join("\n"));
    process.exit(2);
  }
  return parsed.data;
}
const args = parseArgs(process.argv.slice(2));

const SCENES = 60;
const VERSIONS_PER_SCENE = 60; // 3,600 versions
const RENDERS = 6000;
const BENCH_DB = "tracewell_bench";

const benchUrl = (() => {
  const u = new URL(process.env.DATABASE_URL!);
  u.pathname = `/${BENCH_DB}`;
  return u.toString();
})();

async function ensureDatabase() {
  const admin = new URL(process.env.DATABASE_URL!);
  admin.pathname = "/postgres";
  const client = new pg.Client({ connectionString: admin.toString() });
  await client.connect();
  const exists = await client.query("select 1 from pg_database where datname = $1", [BENCH_DB]);
  if (exists.rowCount === 0) await client.query(`create database ${BENCH_DB}`);
  await client.end();
}

/** A version document like the studio's: the desk-lamp corner with its lights and materials. */
function sceneDoc(i: number, v: number) {
  return {
    format: "tracewell.scene/1",
    name: `Osier lamp study ${i}`,
    notes: "Harrow Lane Studio benchmark data: the lamp corner with small changes per version.",
    image: { width: 640, height: 400 },
    camera: { position: [0, 0.6, 2.4], target: [0, 0.3, 0], fovY: 40 },
    render: { integrator: "path", spp: 64, seed: v + 1, maxDepth: 6 },
    display: { exposure: 0, toneMap: "filmic" },
    environment: { type: "sky", zenith: [0.05, 0.07, 0.12], horizon: [0.12, 0.11, 0.1], ground: [0.03, 0.03, 0.03] },
    materials: {
      card: { type: "diffuse", albedo: [0.5, 0.5, 0.48] },
      shade: { type: "metal", reflectance: [0.9, 0.8, 0.6], roughness: 0.3 },
      bulb: { type: "glass", ior: 1.5, roughness: 0 },
    },
    objects: [
      { id: "card", shape: { type: "rect", center: [0, 0, 0], u: [3, 0, 0], v: [0, 0, -3] }, material: "card" },
      { id: "shade", shape: { type: "sphere", center: [0, 0.3, 0], radius: 0.3 }, material: "shade" },
      { id: "bulb", shape: { type: "sphere", center: [0, 0.45, 0.1], radius: 0.06 }, material: "bulb" },
    ],
    lights: [
      { id: "key", type: "area", group: "key", shape: { type: "rect", center: [0.8, 1.4, 0.6], u: [0.5, 0, 0], v: [0, 0, 0.5] }, radiance: [9, 8, 6 + (v % 5) * 0.1] },
      { id: "fill", type: "area", group: "fill", shape: { type: "sphere", center: [-1, 0.8, 1], radius: 0.15 }, radiance: [2, 2.5, 3] },
    ],
  };
}

type Seeded = { projectId: string; versionIds: string[]; token: string };

async function seed(): Promise<Seeded> {
  const pool = new pg.Pool({ connectionString: benchUrl, max: 4 });
  const bdb = drizzle(pool, { schema });
  await migrate(bdb, { migrationsFolder: join(ROOT, "drizzle") });
  const existing = await pool.query<{ id: string; project_id: string }>(
    "select p.id as project_id from projects p where p.name = 'Harrow Lane benchmark' limit 1",
  );
  let projectId: string;
  let userId: string;
  if (existing.rowCount === 0) {
    const t0 = Date.now();
    const [user] = await bdb.insert(schema.users).values({ email: `bench-${randomUUID().slice(0, 8)}@example.test`, name: "Bench pipeline", passwordHash: "not-a-real-hash" }).returning();
    userId = user!.id;
    const [project] = await bdb.insert(schema.projects).values({ name: "Harrow Lane benchmark", description: "seeded by bench:api", createdBy: userId }).returning();
    projectId = project!.id;
    await bdb.insert(schema.memberships).values({ projectId, userId, role: "owner" });
    const versionRows: { id: string; sceneId: string }[] = [];
    for (let s = 0; s < SCENES; s++) {
      const [scene] = await bdb.insert(schema.scenes).values({ projectId, name: `Lamp study ${s}`, createdBy: userId }).returning();
      const ids = Array.from({ length: VERSIONS_PER_SCENE }, () => randomUUID());
      const values = ids.map((id, v) => ({
        id,
        parentId: v === 0 ? null : ids[v - 1],
        sceneId: scene!.id,
        number: v + 1,
        message: `Version ${v + 1} of lamp study ${s}`,
        authorId: userId,
        kind: (v === 0 ? "create" : "save") as "create" | "save",
        scene: sceneDoc(s, v) as Record<string, unknown>,
      }));
      await bdb.insert(schema.sceneVersions).values(values);
      await pool.query("update scenes set head_version_id = $1 where id = $2", [values[values.length - 1].id, scene!.id]);
      versionRows.push(...values.map((v) => ({ id: v.id, sceneId: v.sceneId })));
    }
    const statuses = ["done", "done", "done", "failed", "cancelled"] as const;
    for (let start = 0; start < RENDERS; start += 500) {
      const batch = Array.from({ length: Math.min(500, RENDERS - start) }, (_, k) => {
        const i = start + k;
        const v = versionRows[(i * 7919) % versionRows.length];
        return {
          projectId,
          sceneId: v.sceneId,
          versionId: v.id,
          source: (i % 3 === 0 ? "pool" : "browser") as "pool" | "browser",
          status: statuses[i % statuses.length],
          title: `Bench render ${i}`,
          spp: 64,
          sppDone: 64,
          seed: i,
          width: 640,
          height: 400,
          integrator: "path",
          tracerVersion: "bench",
          accumulationHash: `fnv1a64:${i.toString(16).padStart(16, "0")}`,
          files: { png: `renders/bench/${i}/display.png`, pfm: `renders/bench/${i}/beauty.pfm` },
          createdBy: userId,
          createdAt: new Date(Date.UTC(2026, 0, 1) + i * 60_000),
        };
      });
      await bdb.insert(schema.renders).values(batch);
    }
    console.error(`seeded ${SCENES * VERSIONS_PER_SCENE} versions and ${RENDERS} renders in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
  } else {
    projectId = existing.rows[0].project_id;
    const owner = await pool.query<{ user_id: string }>("select user_id from memberships where project_id = $1 limit 1", [projectId]);
    userId = owner.rows[0].user_id;
  }
  const counts = await pool.query<{ versions: string; renders: string }>(
    "select (select count(*) from scene_versions) as versions, (select count(*) from renders) as renders",
  );
  console.error(`bench database: ${counts.rows[0].versions} versions, ${counts.rows[0].renders} renders`);
  const versions = await pool.query<{ id: string }>(
    "select v.id from scene_versions v join scenes s on s.id = v.scene_id where s.project_id = $1 order by v.id limit 500",
    [projectId],
  );
  await pool.end();
  // Tokens through the app's own model, so the hash scheme is the real one.
  process.env.DATABASE_URL = benchUrl;
  const { createToken } = await import("~/models/token.server");
  const { token } = await createToken({ userId, name: "bench", scope: "read", expiresAt: null });
  const { dbPool } = await import("~/services/db.server");
  await dbPool().end();
  return { projectId, versionIds: versions.rows.map((r) => r.id), token };
}

async function serve(): Promise<{ url: string; stop(): void }> {
  let dir = process.env.BENCH_BUILD_DIR;
  if (!dir) {
    const { ensureBuild } = await import("../integration/api-fixtures");
    dir = await ensureBuild();
  }
  const { freePort } = await import("../integration/api-fixtures");
  const port = await freePort();
  const child = spawn(join(ROOT, "node_modules/.bin/react-router-serve"), ["./build/server/index.js"], {
    cwd: dir,
    env: {
      ...process.env,
      DATABASE_URL: benchUrl,
      NODE_ENV: "production",
      PORT: String(port),
      HOST: "127.0.0.1",
      // The load generator is one token; measure the server, not the rate limiter.
      API_RATE_LIMIT_PER_SECOND: "1000000000",
      API_RATE_LIMIT_BURST: "1000000000",
    },
    stdio: ["ignore", "ignore", "inherit"],
  });
  const url = `http://127.0.0.1:${port}`;
  for (let i = 0; i < 240; i++) {
    try {
      if ((await fetch(`${url}/api/v1/openapi.json`)).ok) {
        return {
          url,
          stop: () => {
            child.kill("SIGTERM");
            if (!process.env.BENCH_BUILD_DIR) child.once("exit", () => rmSync(dir, { recursive: true, force: true }));
          },
        };
      }
    } catch {
      // starting
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  child.kill("SIGTERM");
  throw new Error("the server did not start");
}

type Scenario = { name: string; paths: string[]; headers?: Record<string, string>; expect: number };
type Row = { name: string; requestsPerSecond: number; p50: number; p99: number; errors: number; non2xx: number };

async function load(url: string, token: string, s: Scenario, duration: number): Promise<Row> {
  let i = 0;
  const result = await autocannon({
    url,
    connections: args.connections,
    duration,
    headers: { authorization: `Bearer ${token}`, ...(s.headers ?? {}) },
    requests: [
      {
        setupRequest: (req) => ({ ...req, path: s.paths[i++ % s.paths.length] }),
      },
    ],
  });
  return {
    name: s.name,
    requestsPerSecond: result.requests.average,
    p50: result.latency.p50,
    p99: result.latency.p99,
    errors: result.errors + result.timeouts,
    non2xx: s.expect === 304 ? result.non2xx - (result["3xx"] ?? 0) : result.non2xx,
  };
}

async function main() {
  await ensureDatabase();
  const seeded = await seed();
  const server = await serve();
  try {
    const api = (p: string) => fetch(server.url + p, { headers: { authorization: `Bearer ${seeded.token}` } });
    // A cursor deep in the list (page 60 of 100 at 50 per page) to show keyset paging does not slow down with depth.
    let cursor: string | null = null;
    for (let p = 0; p < 60; p++) {
      const res = await api(`/api/v1/projects/${seeded.projectId}/renders?limit=50${cursor ? `&cursor=${cursor}` : ""}`);
      cursor = ((await res.json()) as { nextCursor: string | null }).nextCursor;
    }
    const etagRes = await api(`/api/v1/versions/${seeded.versionIds[0]}`);
    const etag = etagRes.headers.get("etag") ?? "";
    const scenarios: Scenario[] = [
      { name: "read a version (GET /versions/:id)", paths: seeded.versionIds.map((id) => `/api/v1/versions/${id}`), expect: 200 },
      { name: "list renders, first page of 50", paths: [`/api/v1/projects/${seeded.projectId}/renders?limit=50`], expect: 200 },
      { name: "list renders, page 61 of 50 (cursor)", paths: [`/api/v1/projects/${seeded.projectId}/renders?limit=50&cursor=${cursor}`], expect: 200 },
      { name: "list renders, status=done filter", paths: [`/api/v1/projects/${seeded.projectId}/renders?limit=50&status=done`], expect: 200 },
      { name: "revalidate a version (If-None-Match → 304)", paths: [`/api/v1/versions/${seeded.versionIds[0]}`], headers: { "if-none-match": etag }, expect: 304 },
    ];
    // Warm the server (JIT, connection pool) before measuring.
    await load(server.url, seeded.token, scenarios[0], 2);
    const rows: Row[] = [];
    for (const s of scenarios) rows.push(await load(server.url, seeded.token, s, args.duration));
    const base = rows[0].requestsPerSecond;
    if (args.json) {
      console.log(JSON.stringify({ connections: args.connections, durationSeconds: args.duration, loadAverage: loadavg(), rows: rows.map((r) => ({ ...r, ratioToVersionRead: r.requestsPerSecond / base })) }));
    } else {
      const load = loadavg().map((l) => l.toFixed(1)).join(" ");
      console.log(`\nAPI v1 on loopback: ${args.connections} connections, ${args.duration} s per scenario (autocannon), one server process; load average ${load} on ${cpus().length} cores`);
      console.log(["scenario".padEnd(44), "req/s".padStart(9), "× version read".padStart(15), "p50 ms".padStart(8), "p99 ms".padStart(8), "errors".padStart(7)].join(" "));
      for (const r of rows) {
        console.log(
          [r.name.padEnd(44), r.requestsPerSecond.toFixed(0).padStart(9), (r.requestsPerSecond / base).toFixed(2).padStart(15), String(r.p50).padStart(8), String(r.p99).padStart(8), String(r.errors + r.non2xx).padStart(7)].join(" "),
        );
      }
    }
  } finally {
    server.stop();
  }
}

main().catch((err: unknown) => {
  console.error(err);
  process.exit(1);
});
