// The render library end to end through the request handler: publish a real render (rendered here with the
// tracer) as a signed-in editor, find it in the library, download its files, compare two renders; viewers
// cannot publish and bad metadata is refused naming the field.
import { eq } from "drizzle-orm";
import { decode as decodePng } from "fast-png";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { memberships, users } from "~/db/schema";
import { publishForm, type PublishMeta } from "~/lib/publish-render.client";
import { createScene, saveVersion } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket } from "~/services/storage.server";
import { kettleScene, renderInNode, publishMetaOf } from "../support/a3-fixtures";
import { startApp, type AppServer } from "../support/app-server";
import { pageText, Person, uniqueEmail } from "../support/person";

let app: AppServer;
beforeAll(async () => {
  await ensureBucket();
  app = await startApp();
});
afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

async function account(label: string) {
  const person = new Person(app);
  const email = uniqueEmail(label);
  expect((await person.signUp({ name: `${label} tester`, email, password: "kettle-glaze-amber" })).status).toBe(302);
  const row = await db().query.users.findFirst({ where: eq(users.email, email) });
  return { person, id: row!.id };
}


async function publish(person: Person, projectId: string, sceneId: string, versionId: string, sceneJson: unknown, overrides: Partial<PublishMeta> = {}) {
  const rendered = renderInNode(sceneJson);
  const { outputs } = rendered;
  const meta: PublishMeta = { ...publishMetaOf(versionId, rendered, { title: "review", renderMs: 1000, samplesPerSecond: 5000 }), ...overrides };
  const form = publishForm({ sceneId, meta, files: outputs });
  const res = await person.send(`/projects/${projectId}/renders/publish`, { method: "POST", body: form });
  return { status: res.status, body: JSON.parse(res.text) as { ok: boolean; error?: string; field?: string; render?: { id: string; accumulationHash: string } }, outputs };
}

describe("render library over HTTP", () => {
  it("publishes, lists, downloads and compares renders; refuses viewers and bad metadata", async () => {
    const owner = await account("lib-owner");
    const viewer = await account("lib-viewer");
    const res = await owner.person.post("/projects?index", { name: "Library test", description: "" });
    const projectId = /\/projects\/([0-9a-f-]{36})$/.exec(res.location ?? "")![1]!;
    await db().insert(memberships).values({ projectId, userId: viewer.id, role: "viewer" });

    const base = { ...kettleScene({ spp: 2 }), image: { width: 16, height: 12 } };
    const created = await createScene({ projectId, name: "Kettle", scene: base, authorId: owner.id });
    if (!created.ok) throw new Error("scene");
    const brighter = { ...base, lights: [{ ...base.lights[0]!, radiance: [9, 9, 9] }] };
    const v2 = await saveVersion({ sceneId: created.scene.id, parentVersionId: created.version.id, scene: brighter, message: "brighter key", authorId: owner.id });
    if (!v2.ok) throw new Error("save");

    const a = await publish(owner.person, projectId, created.scene.id, created.version.id, base);
    expect(a.status).toBe(200);
    expect(a.body.render?.accumulationHash).toBe(a.outputs.accumulationHash);
    const b = await publish(owner.person, projectId, created.scene.id, v2.version.id, brighter);
    expect(b.status).toBe(200);

    // Viewers may look but not publish (the refusal reveals nothing: 404).
    expect((await publish(viewer.person, projectId, created.scene.id, created.version.id, base)).status).toBe(404);
    // Metadata that disagrees with the version is refused, naming the field.
    const wrong = await publish(owner.person, projectId, created.scene.id, created.version.id, base, { width: 99 });
    expect(wrong.status).toBe(400);
    expect(wrong.body.field).toBe("meta.width");
    const badHash = await publish(owner.person, projectId, created.scene.id, created.version.id, base, { accumulationHash: "not a hash" });
    expect(badHash.body.error).toMatch(/^meta\.accumulationHash:/);

    // Library: both renders, sortable by spp, filterable by scene (server-side, via the route's data).
    const page = await viewer.person.get(`/projects/${projectId}/renders?sort=date&dir=asc`);
    expect(page.status).toBe(200);
    expect(pageText(page.text)).toContain("Kettle");
    expect(pageText(page.text)).toMatch(/2 renders/);

    // Downloads: the PNG decodes to the render's size; the PFM is byte-identical to what was sent.
    const png = await app.fetch(`/projects/${projectId}/renders/${a.body.render!.id}/files/png`, { headers: { cookie: viewer.person.cookie } });
    expect(png.status).toBe(200);
    expect(decodePng(new Uint8Array(await png.arrayBuffer())).width).toBe(16);
    const pfm = await app.fetch(`/projects/${projectId}/renders/${a.body.render!.id}/files/beauty.pfm`, { headers: { cookie: viewer.person.cookie } });
    expect(Buffer.from(await pfm.arrayBuffer()).equals(Buffer.from(a.outputs.pfm))).toBe(true);

    // Compare: metrics and the scene diff of the two versions.
    const cmp = await viewer.person.get(`/projects/${projectId}/renders/compare?a=${a.body.render!.id}&b=${b.body.render!.id}&mode=display`);
    expect(cmp.status).toBe(200);
    const text = pageText(cmp.text);
    expect(text).toContain("SSIM");
    expect(text).toContain('radiance [5, 5, 5] → [9, 9, 9]');

    // A stranger sees nothing.
    const stranger = await account("lib-stranger");
    expect((await stranger.person.get(`/projects/${projectId}/renders/${a.body.render!.id}/files/png`)).status).toBe(404);
  });
});
