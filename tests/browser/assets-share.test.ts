// Assets and sharing in the browser: upload an environment map through the drop zone (and see a broken mesh
// refused with its line), publish a render that uses it, share the version, open the link signed out and
// reproduce the render bit for bit, then fork it into another person's project.
// Run like fork-compare.test.ts (a served build plus the test database).
import { randomUUID } from "node:crypto";
import { readFileSync } from "node:fs";
import { eq } from "drizzle-orm";
import { afterAll, describe, expect, it } from "vitest";
import { compileScene } from "@tracer/compile/compile";
import { addUnit, createAccumulation } from "@tracer/film/accumulate";
import { renderUnit } from "@tracer/render/unit";
import { validateScene } from "@tracer/scene/validate";
import { TRACER_VERSION } from "@tracer/version";
import { tileUnits } from "@tracer/workers/pool";
import { users } from "~/db/schema";
import { renderOutputs } from "~/lib/render-outputs";
import { listAssets, loadAssetsForScene } from "~/models/asset.server";
import { createScene, listScenes } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { kettleScene } from "../support/a3-fixtures";
import { BASE_URL, gotoHydrated, newPerson } from "../support/browser";

type PersonCtx = Awaited<ReturnType<typeof newPerson>>;
const people: PersonCtx[] = [];

afterAll(async () => {
  await Promise.all(people.map((p) => p.close()));
  await dbPool().end();
});

async function signUpWithProject(name: string, projectName: string) {
  const person = await newPerson();
  people.push(person);
  const { page } = person;
  const email = `${name.toLowerCase()}-${randomUUID().slice(0, 8)}@example.test`;
  await gotoHydrated(page, "/signup");
  await page.fill('input[name="name"]', name);
  await page.fill('input[name="email"]', email);
  await page.fill('input[name="password"]', "kettle-glaze-amber");
  await Promise.all([page.waitForURL(/\/projects$/), page.getByRole("button", { name: /create account/i }).click()]);
  await page.getByRole("button", { name: "Create project" }).waitFor();
  await page.fill('input[name="name"]', projectName);
  await Promise.all([page.waitForURL(/\/projects\/[0-9a-f-]{36}$/), page.getByRole("button", { name: "Create project" }).click()]);
  const projectId = /\/projects\/([0-9a-f-]{36})$/.exec(page.url())![1]!;
  const [user] = await db().select().from(users).where(eq(users.email, email));
  return { person, projectId, userId: user!.id };
}

describe("assets and share links", () => {
  it("uploads a map, shares a version, reproduces it signed out and forks it signed in", async () => {
    const owner = await signUpWithProject("Tamsin", "Carafe lookdev");
    const { page } = owner.person;

    // Upload through the drop zone's file input: a broken mesh is refused naming its line; the map is stored.
    await gotoHydrated(page, `/projects/${owner.projectId}/assets`);
    // Record the upload progress events the browser fires for the staged file PUT.
    await page.evaluate(() => {
      const w = window as unknown as { progressEvents: { url: string; loaded: number; total: number }[] };
      w.progressEvents = [];
      const open = XMLHttpRequest.prototype.open;
      XMLHttpRequest.prototype.open = function (this: XMLHttpRequest, method: string, url: string | URL, ...rest: unknown[]) {
        this.upload.addEventListener("progress", (e) => w.progressEvents.push({ url: String(url), loaded: e.loaded, total: e.total }));
        return (open as (...a: unknown[]) => void).call(this, method, url, ...rest);
      } as typeof XMLHttpRequest.prototype.open;
    });
    await page.getByTestId("asset-input").setInputFiles([
      { name: "broken.obj", mimeType: "text/plain", buffer: Buffer.from("v 0 0 0\nv 1 0 0\nf 1 2 7\n") },
      { name: "lightbox.hdr", mimeType: "application/octet-stream", buffer: readFileSync("scenes/maps/lightbox.hdr") },
    ]);
    await page.locator('[data-testid="upload-item"][data-status="error"]').waitFor();
    await expect(page.locator('[data-testid="upload-item"][data-status="error"]').textContent()).resolves.toMatch(/broken\.obj: line 3/);
    const done = page.locator('[data-testid="upload-item"][data-status="done"]');
    await done.waitFor({ timeout: 60_000 });
    // The staged upload's progress reached every byte of the map, in the browser's own events and on screen.
    const mapBytes = readFileSync("scenes/maps/lightbox.hdr").length;
    const events = await page.evaluate(() => (window as unknown as { progressEvents: { url: string; loaded: number; total: number }[] }).progressEvents);
    expect(events.length).toBeGreaterThan(0);
    expect(events.every((e) => /\/uploads\/[0-9a-f-]{36}\/files\/file$/.test(e.url))).toBe(true);
    expect(Math.max(...events.map((e) => e.loaded))).toBe(mapBytes);
    expect(events.at(-1)!.total).toBe(mapBytes);
    expect(await done.getAttribute("data-sent")).toBe(String(mapBytes));
    expect(await done.getByTestId("upload-progress").getAttribute("value")).toBe("1");
    await page.getByTestId("asset-row").first().waitFor();
    await expect(page.getByTestId("asset-row").first().textContent()).resolves.toMatch(/128×64 px/);
    const [map] = await listAssets(owner.projectId);
    expect(map?.kind).toBe("envmap");

    // A version that uses the map, and a render of it published through the route.
    const sceneJson = { ...kettleScene({ spp: 3 }), image: { width: 20, height: 14 }, environment: { type: "map", asset: `sha256:${map!.sha256}` } };
    const created = await createScene({ projectId: owner.projectId, name: "Carafe in the lightbox", scene: sceneJson, authorId: owner.userId });
    if (!created.ok) throw new Error("scene");
    const checked = validateScene(sceneJson);
    if (!checked.ok) throw new Error("invalid");
    const compiled = compileScene(checked.scene, await loadAssetsForScene(owner.projectId, sceneJson));
    const acc = createAccumulation(compiled.width, compiled.height, compiled.groupNames.length);
    for (const unit of tileUnits(compiled.width, compiled.height, 8, 0, compiled.spp)) addUnit(acc, renderUnit(compiled, unit));
    const out = renderOutputs(acc, checked.scene.display, compiled.groupNames);
    const published = await page.request.post(new URL(`/projects/${owner.projectId}/renders/publish`, BASE_URL).toString(), {
      multipart: {
        sceneId: created.scene.id,
        meta: JSON.stringify({
          versionId: created.version.id,
          title: "for the class",
          spp: 3,
          seed: 7,
          width: 20,
          height: 14,
          integrator: "path",
          tracerVersion: TRACER_VERSION,
          accumulationHash: out.accumulationHash,
          renderMs: 50,
          samplesPerSecond: 1000,
          groups: Object.keys(out.groups),
        }),
        pfm: { name: "beauty.pfm", mimeType: "application/x-portable-floatmap", buffer: Buffer.from(out.pfm) },
        png: { name: "display.png", mimeType: "image/png", buffer: Buffer.from(out.png) },
        ...Object.fromEntries(Object.entries(out.groups).map(([g, b]) => [`group:${g}`, { name: `${g}.pfm`, mimeType: "application/x-portable-floatmap", buffer: Buffer.from(b) }])),
      },
    });
    expect(published.status()).toBe(200);

    // The map can no longer be deleted: a saved version uses it.
    await gotoHydrated(page, `/projects/${owner.projectId}/assets`);
    await expect(page.getByTestId("asset-row").first().getByRole("button", { name: "Delete" }).isDisabled()).resolves.toBe(true);

    // Share the version from the Sharing tab.
    await gotoHydrated(page, `/projects/${owner.projectId}/sharing`);
    await page.getByTestId("share-version").selectOption(created.version.id);
    await page.getByRole("button", { name: "Create link" }).click();
    const openLink = page.getByTestId("new-share-link");
    await openLink.waitFor();
    const href = (await openLink.getAttribute("href"))!;
    expect(href).toMatch(/^\/s\/[A-Za-z0-9_-]{43}$/);

    // Signed out: open the link, render in this browser, the hash matches the published render.
    const visitor = await newPerson();
    people.push(visitor);
    await gotoHydrated(visitor.page, href);
    await expect(visitor.page.getByTestId("shared-scene-name").textContent()).resolves.toContain("Carafe in the lightbox");
    await visitor.page.getByTestId("share-render").click();
    const result = visitor.page.locator('[data-testid="reproduce-result"][data-matches]');
    await result.waitFor({ timeout: 120_000 });
    await expect(result.getAttribute("data-matches")).resolves.toBe("true");
    await expect(result.textContent()).resolves.toContain(out.accumulationHash);

    // Signed in elsewhere: fork it into one's own project; the origin is not revealed beyond the link.
    const student = await signUpWithProject("Rowan", "Rowan's exercises");
    await gotoHydrated(student.person.page, href);
    await Promise.all([student.person.page.waitForURL(/\/scenes\/[0-9a-f-]{36}\/history$/), student.person.page.getByTestId("share-fork").click()]);
    const [fork] = await listScenes(student.projectId);
    expect(fork?.forkedFromVersionId).toBe(created.version.id);
    // The fork's project got the map too, so it renders there.
    await expect(loadAssetsForScene(student.projectId, sceneJson)).resolves.toBeInstanceOf(Map);

    // Revoked: the link stops working for everyone.
    await gotoHydrated(page, `/projects/${owner.projectId}/sharing`);
    await page.getByTestId("share-row").first().getByRole("button", { name: "Revoke" }).click();
    await page.getByText("Link revoked").waitFor();
    const gone = await visitor.page.goto(new URL(href, BASE_URL).toString());
    expect(gone?.status()).toBe(404);
  });
});
