import { drizzle } from "drizzle-orm/node-postgres";
import pg from "pg";
import * as schema from "~/db/schema";
import { getEnv } from "./env.server";

export type Database = ReturnType<typeof createDatabase>["db"];

export function createDatabase(connectionString: string) {
  const pool = new pg.Pool({ connectionString, max: 10, connectionTimeoutMillis: 5_000 });
  // An idle client losing its connection (database restart) must not crash the server.
  pool.on("error", (err) => console.error("postgres pool error:", err.message));
  // A checked-out client whose connection drops between queries emits "error" with no pool listener attached;
  // unhandled, that would end the process. The failing query still rejects, and the pool replaces the client.
  pool.on("connect", (client) => {
    client.on("error", (err) => console.error("postgres client error:", err.message));
  });
  return { pool, db: drizzle(pool, { schema }) };
}

const globalForDb = globalThis as unknown as { __tracewellDb?: ReturnType<typeof createDatabase> };

function instance() {
  globalForDb.__tracewellDb ??= createDatabase(getEnv().DATABASE_URL);
  return globalForDb.__tracewellDb;
}

export function db(): Database {
  return instance().db;
}

export function dbPool(): pg.Pool {
  return instance().pool;
}
