// Seeds the demo studio idempotently. Grown by the features that own each kind of data.
import { createDatabase } from "~/services/db.server";
import { seedAccounts } from "./seed-accounts";

const url = process.env.DATABASE_URL;
if (!url) {
  console.error("DATABASE_URL is not set");
  process.exit(1);
}
const { db, pool } = createDatabase(url);
try {
  const accounts = await seedAccounts(db);
  console.log(`seed: ${Object.keys(accounts.people).length} demo people, ${Object.keys(accounts.projects).length} demo projects`);
} finally {
  await pool.end();
}
