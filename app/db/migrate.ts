// Applies the committed SQL migrations in drizzle/ (idempotent: applied ones are recorded).
import { drizzle } from "drizzle-orm/node-postgres";
import { migrate } from "drizzle-orm/node-postgres/migrator";
import pg from "pg";

const url = process.env.DATABASE_URL;
if (!url) {
  console.error("DATABASE_URL is not set");
  process.exit(1);
}
const pool = new pg.Pool({ connectionString: url });
try {
  await migrate(drizzle(pool), { migrationsFolder: new URL("../../drizzle", import.meta.url).pathname });
  console.log("migrations applied");
} finally {
  await pool.end();
}
