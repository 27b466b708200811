// A lighting review in the browser: fork a scene from its history page, edit the fork, publish a render of
// the original and of the fork, compare them (metrics, wipe, scene diff), and reproduce one render in the
// browser's own worker pool with a bit-for-bit hash check.
//
// The workspace (A2) has no publish button yet, so renders are made by the tracer in this test process and
// published through the same multipart route the workspace uses (app/lib/publish-render.client.ts).
// Runs against a served build with the test database: bin/test, or
//   TEST_PORT=3111 bin/serve-test &  then  TRACEWELL_URL=http://localhost:3111 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/fork-compare.test.ts
import { randomUUID } from "node:crypto";
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { users } from "~/db/schema";
import { createScene, getScene, listScenes, listVersions } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { kettleScene, renderInNode, publishMetaOf } from "../support/a3-fixtures";
import { BASE_URL, gotoHydrated, isLocal, newPerson, screenshot } from "../support/browser";

type PersonCtx = Awaited<ReturnType<typeof newPerson>>;


async function publishVia(person: PersonCtx, projectId: string, sceneId: string, versionId: string, sceneJson: unknown, title: string) {
  const rendered = renderInNode(sceneJson);
  const { outputs } = rendered;
  const file = (name: string, mimeType: string, bytes: Uint8Array) => ({ name, mimeType, buffer: Buffer.from(bytes) });
  const res = await person.page.request.post(new URL(`/projects/${projectId}/renders/publish`, BASE_URL).toString(), {
    multipart: {
      sceneId,
      meta: JSON.stringify({ ...publishMetaOf(versionId, rendered, { title, renderMs: 100, samplesPerSecond: 10_000 }), groups: [] }),
      pfm: file("beauty.pfm", "application/x-portable-floatmap", outputs.pfm),
      hdr: file("beauty.hdr", "image/vnd.radiance", outputs.hdr),
      png: file("display.png", "image/png", outputs.png),
      state: file("accumulation.bin", "application/octet-stream", outputs.state),
    },
  });
  expect(res.status()).toBe(200);
  const body = (await res.json()) as { ok: boolean; render: { id: string } };
  expect(body.ok).toBe(true);
  return { id: body.render.id, hash: outputs.accumulationHash };
}

describe("fork, edit, publish and compare", () => {
  let person: PersonCtx;
  beforeAll(async () => {
    person = await newPerson();
  });
  afterAll(async () => {
    await person?.close();
    await dbPool().end();
  });

  it("forks a scene, edits it, publishes a render of each, compares them and reproduces one bit for bit", async () => {
    const { page, requests } = person;
    const email = `reviewer-${randomUUID().slice(0, 8)}@example.test`;

    await gotoHydrated(page, "/signup");
    await page.fill('input[name="name"]', "Ilse Reviewer");
    await page.fill('input[name="email"]', email);
    await page.fill('input[name="password"]', "kettle-glaze-amber");
    await Promise.all([page.waitForURL(/\/projects$/), page.getByRole("button", { name: /sign up|create account/i }).click()]);

    await page.getByRole("button", { name: "Create project" }).waitFor();
    await page.fill('input[name="name"]', "Wren kettle looks");
    await Promise.all([page.waitForURL(/\/projects\/[0-9a-f-]{36}$/), page.getByRole("button", { name: "Create project" }).click()]);
    const projectId = /\/projects\/([0-9a-f-]{36})$/.exec(page.url())![1]!;

    const [user] = await db().select().from(users).where(eq(users.email, email));
    const original = { ...kettleScene({ spp: 4 }), image: { width: 24, height: 18 } };
    const created = await createScene({ projectId, name: "Wren kettle", scene: original, authorId: user!.id, message: "First look" });
    if (!created.ok) throw new Error("scene");

    // Fork version 1 from the history page (into the same project, so both renders share one library).
    page.on("console", (m) => m.type() === "error" && console.error("console:", m.text()));
    await gotoHydrated(page, `/projects/${projectId}/scenes/${created.scene.id}/history`).catch(async (e: unknown) => {
      console.error((await page.content()).slice(0, 3000));
      throw e;
    });
    await page.getByRole("button", { name: "Fork…" }).first().click();
    const forkForm = page.getByTestId("fork-form");
    await forkForm.locator('input[name="name"]').fill("Wren kettle, warm key");
    await Promise.all([
      page.waitForURL((u) => /\/scenes\/[0-9a-f-]{36}\/history$/.test(u.pathname) && !u.pathname.includes(created.scene.id)),
      forkForm.getByRole("button", { name: /Fork version 1/ }).click(),
    ]);
    const forkId = /\/scenes\/([0-9a-f-]{36})\/history$/.exec(page.url())![1]!;
    expect(forkId).not.toBe(created.scene.id);
    await expect(page.getByTestId("fork-origin").textContent()).resolves.toContain("Wren kettle v1");

    // Edit the fork through the workspace's save action: a warmer, stronger key light.
    const fork = await getScene(forkId);
    const edited = { ...original, lights: [{ ...original.lights[0]!, radiance: [7, 5.5, 4] }] };
    const saved = await page.request.post(new URL(`/projects/${projectId}/scenes/${forkId}`, BASE_URL).toString(), {
      form: { intent: "save", message: "Warmer key light", parentVersionId: fork!.headVersionId!, sceneText: JSON.stringify(edited) },
    });
    expect(saved.status()).toBeLessThan(400);
    const forkVersions = await listVersions(forkId);
    expect(forkVersions.map((v) => v.message)).toEqual(["Warmer key light", expect.stringContaining("Forked")]);

    // The history shows the edit and the version graph.
    await gotoHydrated(page, `/projects/${projectId}/scenes/${forkId}/history`);
    await expect(page.getByTestId("version-row").count()).resolves.toBe(2);
    await expect(page.getByTestId("version-graph").isVisible()).resolves.toBe(true);

    // Publish a render of each.
    const a = await publishVia(person, projectId, created.scene.id, created.version.id, original, "original");
    const b = await publishVia(person, projectId, forkId, forkVersions[0]!.id, edited, "warm key");
    expect(a.hash).not.toBe(b.hash);

    // Library → pick both → compare.
    await gotoHydrated(page, `/projects/${projectId}/renders`);
    await expect(page.getByTestId("render-row").count()).resolves.toBe(2);
    const boxes = page.getByTestId("render-row").locator('input[type="checkbox"]');
    await boxes.nth(0).check();
    await boxes.nth(1).check();
    await Promise.all([page.waitForURL(/\/renders\/compare\?/), page.getByTestId("compare-renders").click()]);
    await page.waitForSelector("html[data-hydrated=true]");

    const ssim = Number(await page.getByTestId("metric-ssim").textContent());
    expect(ssim).toBeGreaterThan(0);
    expect(ssim).toBeLessThan(1);
    await expect(page.getByTestId("difference-image").isVisible()).resolves.toBe(true);
    const diffText = (await page.getByTestId("scene-diff").textContent()) ?? "";
    expect(diffText).toMatch(/light "key"/);
    expect(diffText).toMatch(/radiance \[(5, 5, 5|7, 5\.5, 4)\] → \[(7, 5\.5, 4|5, 5, 5)\]/);

    // Switch to displayed values: the metrics are recomputed on the 8-bit pictures.
    await Promise.all([page.waitForURL(/mode=display/), page.getByRole("link", { name: "Displayed 8-bit" }).click()]);
    await page.getByTestId("metric-psnr").waitFor();
    await expect(page.getByTestId("metric-psnr").textContent()).resolves.toMatch(/dB/);

    // Wipe slider moves the boundary.
    await page.getByRole("slider", { name: /Wipe position/ }).fill("20");

    // Reproduce render A in this browser's worker pool: the hash must match bit for bit.
    await page.getByTestId(`reproduce-${a.id}`).click();
    const result = page.locator('[data-testid="reproduce-result"][data-matches]').first();
    await result.waitFor({ timeout: 120_000 });
    await expect(result.getAttribute("data-matches")).resolves.toBe("true");
    await expect(result.textContent()).resolves.toContain(a.hash);
    await screenshot(page, "fork-compare");

    expect(requests.filter((r) => !isLocal(r))).toEqual([]);
    expect((await listScenes(projectId)).length).toBe(2);
  });
});
