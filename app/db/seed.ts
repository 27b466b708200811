// Seeds the demo studio idempotently (bin/start and bin/serve-test run it on every start): people, projects,
// scenes with histories and a fork, uploaded assets and published renders. See app/db/seed-demo.ts.
import { createDatabase } from "~/services/db.server";
import { DEMO_PASSWORD, DEMO_PEOPLE } from "./seed-accounts";
import { seedDemo } from "./seed-demo";

const url = process.env.DATABASE_URL;
if (!url) {
  console.error("DATABASE_URL is not set");
  process.exit(1);
}
const { db, pool } = createDatabase(url);
try {
  const r = await seedDemo(db);
  console.log(
    `seed: ${Object.keys(r.accounts.people).length} demo people, ${Object.keys(r.accounts.projects).length} projects; ` +
      `scenes +${r.scenes.created + r.lampStudies.created} (${r.scenes.skipped + r.lampStudies.skipped} already there), forks +${r.scenes.forks}, ` +
      `assets +${r.scenes.assets}, renders +${r.renders.published} (${r.renders.skipped} already there)`,
  );
  if (r.scenes.created + r.lampStudies.created > 0) {
    console.log(`seed: sign in as any of ${Object.values(DEMO_PEOPLE).map((p) => p.email).join(", ")} with the password "${DEMO_PASSWORD}"`);
  }
} finally {
  await pool.end();
}
