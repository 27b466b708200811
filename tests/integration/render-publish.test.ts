// Publishing is all-or-nothing: either every object and the row exist, or neither does.
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, afterEach, describe, expect, it } from "vitest";
import { renders } from "~/db/schema";
import { listRenders, publishRender, type PublishMetadata } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { readRenderFile, renderKey, setRenderFileWriterForTests } from "~/services/render-files.server";
import { ensureBucket, objectExists, putObject } from "~/services/storage.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";

afterEach(() => setRenderFileWriterForTests(null));
afterAll(async () => {
  await dbPool().end();
});

async function setup() {
  await ensureBucket();
  const user = await makeUser("publisher");
  const project = await makeProject(user.id);
  const created = await createScene({ projectId: project.id, name: "Kettle", scene: kettleScene(), authorId: user.id });
  if (!created.ok) throw new Error("scene");
  const meta: PublishMetadata = {
    versionId: created.version.id,
    title: "first look",
    spp: 4,
    seed: 7,
    width: 16,
    height: 12,
    integrator: "path",
    tracerVersion: "test",
    accumulationHash: "0123456789abcdef",
    renderMs: 1234,
    samplesPerSecond: 622.5,
    groups: ["default"],
  };
  const files = {
    pfm: new Uint8Array([1, 2, 3]),
    hdr: new Uint8Array([4, 5]),
    png: new Uint8Array([6]),
    state: new Uint8Array([7, 8, 9, 10]),
    groups: { default: new Uint8Array([11, 12]) },
  };
  return { user, project, scene: created.scene, meta, files };
}

describe("publishing a render", () => {
  it("stores every file under renders/<id>/ and one done row pointing at them", async () => {
    const s = await setup();
    const row = await publishRender({ projectId: s.project.id, sceneId: s.scene.id, meta: s.meta, files: s.files, createdBy: s.user.id });
    expect(row.status).toBe("done");
    expect(row.files.pfm).toBe(renderKey(row.id, "beauty.pfm"));
    expect(row.files.groups?.default).toBe(renderKey(row.id, "group-default.pfm"));
    expect(Array.from((await readRenderFile(row.files, "state"))!)).toEqual([7, 8, 9, 10]);
    expect(Array.from((await readRenderFile(row.files, { group: "default" }))!)).toEqual([11, 12]);
    const listed = await listRenders(s.project.id, {}, { page: 1, pageSize: 10 });
    expect(listed.total).toBe(1);
    expect(listed.rows[0]!.sceneName).toBe("Kettle");
  });

  it("leaves no objects and no row when an upload fails half-way", async () => {
    const s = await setup();
    const attempted: string[] = [];
    let n = 0;
    setRenderFileWriterForTests(async (key, body, type) => {
      attempted.push(key);
      if (++n === 3) throw new Error("connection reset by the store");
      await putObject(key, body, type);
    });
    await expect(publishRender({ projectId: s.project.id, sceneId: s.scene.id, meta: s.meta, files: s.files, createdBy: s.user.id })).rejects.toThrow(/connection reset/);
    expect(attempted.length).toBe(3);
    for (const key of attempted) expect(await objectExists(key)).toBe(false);
    expect((await db().select().from(renders).where(eq(renders.projectId, s.project.id))).length).toBe(0);
  });

  it("removes the uploaded objects again when the row cannot be written", async () => {
    const s = await setup();
    const attempted: string[] = [];
    setRenderFileWriterForTests(async (key, body, type) => {
      attempted.push(key);
      await putObject(key, body, type);
    });
    // A version id that does not exist violates the foreign key after every object is already stored.
    const meta = { ...s.meta, versionId: randomUUID() };
    await expect(publishRender({ projectId: s.project.id, sceneId: s.scene.id, meta, files: s.files, createdBy: s.user.id })).rejects.toThrow();
    expect(attempted.length).toBe(5);
    for (const key of attempted) expect(await objectExists(key)).toBe(false);
    expect((await db().select().from(renders).where(eq(renders.projectId, s.project.id))).length).toBe(0);
  });
});
