// `npm run worker`: one render pool worker process. It needs only the database and the object store, so it
// can run on any machine that reaches both; start as many as there are cores to spare.
import { hostname } from "node:os";
import { DeleteObjectCommand, GetObjectCommand, PutObjectCommand, S3Client } from "@aws-sdk/client-s3";
import type PgBoss from "pg-boss";
import { z } from "zod";
import { failPoolRender, releaseChunk } from "~/models/render-job.server";
import { createDatabase } from "~/services/db.server";
import { EnvSchema } from "~/services/env.server";
import { ChunkJobSchema, MergeJobSchema, PoolNameSchema, enqueueMerge, queueNames, startBoss } from "~/services/queue.server";
import { PermanentJobError, mergeRender, runChunk, type ObjectStore, type PoolDeps } from "./pool.server";
import { retryWhileUnreachable } from "./reachable";

const WorkerEnvSchema = EnvSchema.pick({
  DATABASE_URL: true,
  S3_ENDPOINT: true,
  S3_REGION: true,
  S3_BUCKET: true,
  S3_ACCESS_KEY_ID: true,
  S3_SECRET_ACCESS_KEY: true,
  S3_FORCE_PATH_STYLE: true,
}).extend({
  RENDER_WORKER_NAME: z.string().min(1).max(100).optional(),
  RENDER_WORKER_POLL_SECONDS: z.coerce.number().min(0.5).max(60).default(1),
  // How often this worker runs pg-boss maintenance, which hands the jobs of dead workers to live ones.
  RENDER_WORKER_MAINTENANCE_SECONDS: z.coerce.number().int().min(1).max(3600).default(30),
  RENDER_POOL: PoolNameSchema,
});

function parseWorkerEnv(source: Record<string, string | undefined>) {
  const cleaned = Object.fromEntries(Object.entries(source).filter(([, v]) => v !== ""));
  const result = WorkerEnvSchema.safeParse(cleaned);
  if (!result.success) {
    const lines = result.error.issues.map((i) => {
      const name = i.path.join(".");
      return `  ${name}: ${source[name] === undefined || source[name] === "" ? "is not set" : i.message}`;
    });
    console.error(`render worker configuration is invalid:\n${lines.join("\n")}`);
    process.exit(2);
  }
  return result.data;
}

function objectStore(env: ReturnType<typeof parseWorkerEnv>): ObjectStore {
  const s3 = new S3Client({
    endpoint: env.S3_ENDPOINT,
    region: env.S3_REGION,
    forcePathStyle: env.S3_FORCE_PATH_STYLE,
    credentials: { accessKeyId: env.S3_ACCESS_KEY_ID, secretAccessKey: env.S3_SECRET_ACCESS_KEY },
    requestChecksumCalculation: "WHEN_REQUIRED",
    responseChecksumValidation: "WHEN_REQUIRED",
    maxAttempts: 3,
  });
  const Bucket = env.S3_BUCKET;
  return {
    async get(Key) {
      const res = await s3.send(new GetObjectCommand({ Bucket, Key }));
      if (!res.Body) throw new Error(`object ${Key} has no body`);
      return res.Body.transformToByteArray();
    },
    async put(Key, Body, ContentType) {
      await s3.send(new PutObjectCommand({ Bucket, Key, Body, ContentType }));
    },
    async delete(Key) {
      await s3.send(new DeleteObjectCommand({ Bucket, Key }));
    },
  };
}

type JobMeta = { id: string; retryCount: number; retryLimit: number };

async function main() {
  const env = parseWorkerEnv(process.env);
  const name = env.RENDER_WORKER_NAME ?? `${hostname()}:${process.pid}`;
  const { db, pool } = createDatabase(env.DATABASE_URL);
  const boss: PgBoss = await startBoss(env.DATABASE_URL, { supervise: true, maintenanceIntervalSeconds: env.RENDER_WORKER_MAINTENANCE_SECONDS });
  let stopping = false;

  const deps: PoolDeps = {
    db,
    store: objectStore(env),
    worker: name,
    onAllChunksDone: (renderId) => enqueueMerge(boss, renderId),
    stopping: () => stopping,
    log: (m) => console.log(`[${name}] ${m}`),
  };

  // A job that keeps failing for reasons other than a bad scene fails its render on its last attempt.
  async function onFailure(renderId: string, job: JobMeta, err: unknown): Promise<"handled" | "retry"> {
    const message = err instanceof Error ? err.message : String(err);
    if (err instanceof PermanentJobError || job.retryCount >= job.retryLimit) {
      console.error(`[${name}] render ${renderId} failed: ${message}`);
      await failPoolRender(db, renderId, message);
      return "handled";
    }
    console.error(`[${name}] render ${renderId}: ${message} (attempt ${job.retryCount + 1}, will retry)`);
    return "retry";
  }

  // A failed chunk's bookkeeping waits for the database (see reachable.ts) so the failure is recorded.
  const whenReachable = <T>(step: () => Promise<T>) => retryWhileUnreachable(step, { stopping: () => stopping });

  const queues = queueNames(env.RENDER_POOL);
  await boss.work(queues.chunk, { pollingIntervalSeconds: env.RENDER_WORKER_POLL_SECONDS, batchSize: 1, includeMetadata: true }, async ([job]) => {
    const data = ChunkJobSchema.parse(job.data);
    if (stopping) throw new Error("worker is stopping; another worker will take this chunk");
    let outcome: Awaited<ReturnType<typeof runChunk>>;
    try {
      outcome = await runChunk(deps, data.renderId, data.index);
    } catch (err) {
      if (!stopping && (await whenReachable(() => onFailure(data.renderId, job, err))) === "handled") return { outcome: "failed" };
      await whenReachable(() => releaseChunk(db, data.renderId, data.index));
      throw err;
    }
    if (outcome === "stopped") {
      await whenReachable(() => releaseChunk(db, data.renderId, data.index));
      throw new Error("worker stopped mid-chunk; another worker will take it");
    }
    return { outcome };
  });

  await boss.work(queues.merge, { pollingIntervalSeconds: env.RENDER_WORKER_POLL_SECONDS, batchSize: 1, includeMetadata: true }, async ([job]) => {
    const data = MergeJobSchema.parse(job.data);
    try {
      return { outcome: await mergeRender(deps, data.renderId) };
    } catch (err) {
      if ((await onFailure(data.renderId, job, err)) === "handled") return { outcome: "failed" };
      throw err;
    }
  });

  console.log(`[${name}] render worker ready (queues ${queues.chunk}, ${queues.merge})`);

  const shutdown = async (signal: string) => {
    if (stopping) return;
    stopping = true;
    console.log(`[${name}] ${signal}: stopping; a chunk in progress goes back to the queue`);
    await boss.stop({ graceful: true, wait: true, timeout: 15_000 }).catch(() => undefined);
    await pool.end().catch(() => undefined);
    process.exit(0);
  };
  process.on("SIGTERM", () => void shutdown("SIGTERM"));
  process.on("SIGINT", () => void shutdown("SIGINT"));
  // While the database restarts, the queue's own polling can reject with nobody awaiting it. The worker must
  // outlive the outage (its chunks are retried through the queue), so such rejections are logged, not fatal.
  process.on("unhandledRejection", (err) => {
    console.error(`[${name}] unhandled rejection (continuing):`, err instanceof Error ? err.message : err);
  });
}

main().catch((err: unknown) => {
  console.error("render worker failed to start:", err);
  process.exit(1);
});

