// The setup is only worth something if these three services really work end to end.
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, describe, expect, it } from "vitest";
import { projects } from "~/db/schema";
import { db, dbPool } from "~/services/db.server";
import { sendMail } from "~/services/mail.server";
import { deleteObject, ensureBucket, getObjectBytes, putObject } from "~/services/storage.server";
import { waitForMail } from "../support/outbox";

afterAll(async () => {
  await dbPool().end();
});

describe("foundation services", () => {
  it("round-trips a row through Drizzle on the real PostgreSQL", async () => {
    const name = `round trip ${randomUUID()}`;
    const [row] = await db().insert(projects).values({ name, description: "created by a test" }).returning();
    const found = await db().query.projects.findFirst({ where: eq(projects.id, row.id) });
    expect(found?.name).toBe(name);
    await db().delete(projects).where(eq(projects.id, row.id));
    expect(await db().query.projects.findFirst({ where: eq(projects.id, row.id) })).toBeUndefined();
  });

  it("puts and gets bytes through @aws-sdk/client-s3 on the object store", async () => {
    await ensureBucket();
    const key = `tests/${randomUUID()}.bin`;
    const bytes = new Uint8Array(70_000).map((_, i) => (i * 31) & 255);
    await putObject(key, bytes);
    expect(Buffer.from(await getObjectBytes(key)).equals(Buffer.from(bytes))).toBe(true);
    await deleteObject(key);
  });

  it("sends an e-mail with nodemailer and reads it back from the SMTP fake", async () => {
    const to = `mail-${randomUUID()}@example.test`;
    await sendMail({ to, subject: "Foundation check", text: "Open http://localhost:3000/projects to continue." });
    const mail = await waitForMail(to, /Foundation check/);
    expect(mail.text).toContain("http://localhost:3000/projects");
  });
});
