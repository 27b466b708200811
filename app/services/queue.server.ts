// The render pool's job queue: pg-boss on the application's own PostgreSQL (schema "pgboss"), so any
// machine that can reach the database and the object store can join the pool. No home-made queue.
//
// Jobs: one "render-chunk" job per chunk of sample passes, and one "render-merge" job per render, sent by
// whichever worker finishes the last chunk. A worker killed mid-chunk leaves its job "active"; once the
// job's expireInSeconds has passed, pg-boss's supervisor fails it and it is retried by any other worker.
// Rendering is deterministic, so a chunk rendered twice gives the same bytes and retries are harmless.
import PgBoss from "pg-boss";
import { z } from "zod";

export const CHUNK_QUEUE = "render-chunk";
export const MERGE_QUEUE = "render-merge";

/**
 * A studio may run several pools on one database (say, the farm and a test bench): RENDER_POOL names the
 * pool a server queues to and a worker takes from. Unset, everyone shares the default pool.
 */
export const PoolNameSchema = z
  .string()
  .regex(/^[a-z0-9][a-z0-9-]{0,39}$/, "must be 1–40 lower-case letters, digits or dashes")
  .optional();

export function queueNames(pool: string | undefined) {
  return pool ? { chunk: `${CHUNK_QUEUE}-${pool}`, merge: `${MERGE_QUEUE}-${pool}` } : { chunk: CHUNK_QUEUE, merge: MERGE_QUEUE };
}

export const ChunkJobSchema = z.object({ renderId: z.uuid(), index: z.number().int().min(0) });
export const MergeJobSchema = z.object({ renderId: z.uuid() });
export type ChunkJob = z.infer<typeof ChunkJobSchema>;
export type MergeJob = z.infer<typeof MergeJobSchema>;

const QueueEnvSchema = z.object({
  // Longest a chunk may stay claimed before another worker takes it over; must exceed one chunk's render time.
  RENDER_CHUNK_EXPIRE_SECONDS: z.coerce.number().int().min(1).max(82_800).default(900),
  RENDER_CHUNK_RETRY_LIMIT: z.coerce.number().int().min(0).max(100).default(5),
  RENDER_POOL: PoolNameSchema,
});

export function queueSettings(source: Record<string, string | undefined> = process.env) {
  return QueueEnvSchema.parse({
    RENDER_CHUNK_EXPIRE_SECONDS: source.RENDER_CHUNK_EXPIRE_SECONDS || undefined,
    RENDER_CHUNK_RETRY_LIMIT: source.RENDER_CHUNK_RETRY_LIMIT || undefined,
    RENDER_POOL: source.RENDER_POOL || undefined,
  });
}

export type BossOptions = {
  /** Run pg-boss maintenance (expiring stuck jobs) from this process; workers do, the web server need not. */
  supervise?: boolean;
  maintenanceIntervalSeconds?: number;
  max?: number;
};

export async function startBoss(databaseUrl: string, opts: BossOptions = {}): Promise<PgBoss> {
  const names = queueNames(queueSettings().RENDER_POOL);
  // Several processes starting at once (workers, the app) race to create the queue's schema and queues;
  // PostgreSQL may then abort one of them with a deadlock. That loser simply tries again with a fresh client.
  for (let attempt = 1; ; attempt++) {
    const boss = new PgBoss({
      connectionString: databaseUrl,
      schema: "pgboss",
      supervise: opts.supervise ?? false,
      schedule: false,
      max: opts.max ?? 4,
      ...(opts.maintenanceIntervalSeconds ? { maintenanceIntervalSeconds: opts.maintenanceIntervalSeconds } : {}),
    });
    boss.on("error", (err: Error) => console.error("pg-boss:", err.message));
    try {
      await boss.start();
      await boss.createQueue(names.chunk, { name: names.chunk, policy: "standard" });
      await boss.createQueue(names.merge, { name: names.merge, policy: "standard" });
      return boss;
    } catch (err) {
      await boss.stop({ graceful: false, wait: true }).catch(() => undefined);
      const transient = err instanceof Error && /deadlock detected|duplicate key|already exists/i.test(err.message);
      if (!transient || attempt >= 5) throw err;
      await new Promise((r) => setTimeout(r, 200 * attempt + Math.floor(Math.random() * 200)));
    }
  }
}

export async function enqueueChunks(boss: PgBoss, renderId: string, indices: readonly number[]): Promise<void> {
  const { RENDER_CHUNK_EXPIRE_SECONDS, RENDER_CHUNK_RETRY_LIMIT, RENDER_POOL } = queueSettings();
  await boss.insert(
    indices.map((index) => ({
      name: queueNames(RENDER_POOL).chunk,
      data: { renderId, index } satisfies ChunkJob,
      retryLimit: RENDER_CHUNK_RETRY_LIMIT,
      retryDelay: 1,
      expireInSeconds: RENDER_CHUNK_EXPIRE_SECONDS,
    })),
  );
}

export async function enqueueMerge(boss: PgBoss, renderId: string): Promise<void> {
  const { RENDER_CHUNK_EXPIRE_SECONDS, RENDER_CHUNK_RETRY_LIMIT, RENDER_POOL } = queueSettings();
  await boss.send(queueNames(RENDER_POOL).merge, { renderId } satisfies MergeJob, {
    retryLimit: RENDER_CHUNK_RETRY_LIMIT,
    retryDelay: 1,
    expireInSeconds: RENDER_CHUNK_EXPIRE_SECONDS,
  });
}

// The web server's own instance, started on first use (it only sends jobs).
const globalForQueue = globalThis as unknown as { __tracewellBoss?: Promise<PgBoss> };

export function serverQueue(databaseUrl: string): Promise<PgBoss> {
  globalForQueue.__tracewellBoss ??= startBoss(databaseUrl, { supervise: false, max: 2 }).catch((err: unknown) => {
    globalForQueue.__tracewellBoss = undefined;
    throw err;
  });
  return globalForQueue.__tracewellBoss;
}
