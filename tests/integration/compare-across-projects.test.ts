// Comparing a fork's render with its origin's in another project: each render is authorised on its own, so a
// render of a project the person can see compares (with the metrics and the version diff), one of a project
// they cannot see is the same 404 as a made-up id, and the page offers the origin's renders when A is a fork's.
// Run: bin/with-test-env npx vitest run tests/integration/compare-across-projects.test.ts
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { encodePfm } from "@tracer/io/pfm";
import { encodePng } from "@tracer/io/png";
import { memberships, users } from "~/db/schema";
import { publishRender } from "~/models/render.server";
import { createScene } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { ensureBucket } from "~/services/storage.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";
import { startApp, type AppServer } from "../support/app-server";
import { pageText, Person, uniqueEmail } from "../support/person";

let app: AppServer;
beforeAll(async () => {
  await ensureBucket();
  app = await startApp();
}, 120_000);
afterAll(async () => {
  await app?.close();
  await dbPool().end();
});

async function render(projectId: string, sceneId: string, versionId: string, userId: string, title: string, level: number) {
  const w = 16, h = 12;
  return publishRender({
    projectId,
    sceneId,
    meta: { versionId, title, spp: 4, seed: 7, width: w, height: h, integrator: "path", tracerVersion: "test", accumulationHash: "0123456789abcdef", renderMs: 1, samplesPerSecond: 1, groups: [] },
    files: { pfm: encodePfm({ width: w, height: h, data: new Float32Array(w * h * 3).fill(level) }), png: encodePng(w, h, new Uint8Array(w * h * 4).fill(Math.round(level * 255))) },
    createdBy: userId,
  });
}

describe("comparing renders across projects", () => {
  it("compares a fork's render with its origin's when the origin's project is visible, and refuses one that is not", async () => {
    const me = new Person(app);
    const email = uniqueEmail("cmp-me");
    expect((await me.signUp({ name: "Compare tester", email, password: "kettle-glaze-amber" })).status).toBe(302);
    const meId = (await db().query.users.findFirst({ where: eq(users.email, email) }))!.id;

    const originOwner = await makeUser("cmp-origin");
    const originProject = await makeProject(originOwner.id, "Catalogue");
    await db().insert(memberships).values({ projectId: originProject.id, userId: meId, role: "viewer" });
    const origin = await createScene({ projectId: originProject.id, name: "Carafe origin", scene: kettleScene(), authorId: originOwner.id });
    if (!origin.ok) throw new Error("origin");
    const originRender = await render(originProject.id, origin.scene.id, origin.version.id, originOwner.id, `origin ${randomUUID().slice(0, 6)}`, 0.5);

    const myProject = await makeProject(meId, "My studies");
    const fork = await createScene({ projectId: myProject.id, name: "Carafe fork", scene: kettleScene({ roughness: 0.4 }), authorId: meId, forkedFromVersionId: origin.version.id, kind: "fork" });
    if (!fork.ok) throw new Error("fork");
    const forkRender = await render(myProject.id, fork.scene.id, fork.version.id, meId, "warmer", 0.25);

    const hidden = await makeProject(originOwner.id, "Not mine");
    const hiddenScene = await createScene({ projectId: hidden.id, name: "Hidden", scene: kettleScene(), authorId: originOwner.id });
    if (!hiddenScene.ok) throw new Error("hidden");
    const marker = `secret-${randomUUID().slice(0, 8)}`;
    const hiddenRender = await render(hidden.id, hiddenScene.scene.id, hiddenScene.version.id, originOwner.id, marker, 0.5);

    // Without b, the page offers the origin's renders; with the origin's render as b it compares.
    const page = await me.get(`/projects/${myProject.id}/renders/compare?a=${forkRender.id}&b=${forkRender.id}`);
    expect(page.status).toBe(200);
    expect(page.text).toContain('data-testid="origin-renders"');
    expect(page.text).toContain(`b=${originRender.id}`);
    const cmp = await me.get(`/projects/${myProject.id}/renders/compare?a=${forkRender.id}&b=${originRender.id}&mode=linear`);
    expect(cmp.status).toBe(200);
    const text = pageText(cmp.text);
    expect(text).toContain("Carafe origin v1");
    expect(text).toContain("(another project)");
    expect(text).toContain(`/projects/${originProject.id}/renders/${originRender.id}/files/png`);
    // 0.25 against 0.5 everywhere: RMSE 0.25 on linear values (RMSE = root of the mean squared difference; common practice).
    expect(text).toMatch(/0\.2500/);
    // The versions' diff shows the roughness the fork changed.
    expect(text).toMatch(/roughness/);

    // A must be this project's; a render of a project I cannot see is a 404 like a made-up id.
    expect((await me.get(`/projects/${myProject.id}/renders/compare?a=${originRender.id}&b=${forkRender.id}`)).status).toBe(404);
    const refused = await me.get(`/projects/${myProject.id}/renders/compare?a=${forkRender.id}&b=${hiddenRender.id}`);
    const madeUp = await me.get(`/projects/${myProject.id}/renders/compare?a=${forkRender.id}&b=${randomUUID()}`);
    expect(refused.status).toBe(404);
    expect(madeUp.status).toBe(404);
    expect(refused.text).not.toContain(marker);
  });
});
