// Resource route: are the database, the object store and the mail transport reachable?
import { sql } from "drizzle-orm";
import { db } from "~/services/db.server";
import { mailReachable } from "~/services/mail.server";
import { storageReachable } from "~/services/storage.server";

async function databaseReachable(): Promise<boolean> {
  try {
    await db().execute(sql`select 1`);
    return true;
  } catch {
    return false;
  }
}

function within<T>(ms: number, work: Promise<T>, fallback: T): Promise<T> {
  return Promise.race([work, new Promise<T>((resolve) => setTimeout(() => resolve(fallback), ms))]);
}

export async function loader() {
  const [database, objectStore, mail] = await Promise.all([
    within(3000, databaseReachable(), false),
    within(3000, storageReachable(), false),
    within(3000, mailReachable(), false),
  ]);
  const ok = database && objectStore && mail;
  const state = (up: boolean) => (up ? "reachable" : "unreachable");
  return Response.json(
    { status: ok ? "ok" : "degraded", database: state(database), objectStore: state(objectStore), mail: state(mail) },
    { status: ok ? 200 : 503, headers: { "Cache-Control": "no-store" } },
  );
}
