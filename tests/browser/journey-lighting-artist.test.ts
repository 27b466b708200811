// Journey: a lighting artist blocks in a scene. She opens the desk-corner scene, raises the lamp, watches the
// preview converge, balances the window against the lamp with the light groups, saves a version, and publishes
// the picture to the project's library. What she came for: a saved version with her balance in it, and its
// render in the library.
// Runs against a served build: TEST_PORT=3150 bin/serve-test &  then
//   TRACEWELL_URL=http://localhost:3150 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/journey-lighting-artist.test.ts
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { renders } from "~/db/schema";
import { createScene, getHead } from "~/models/scene.server";
import { db, dbPool } from "~/services/db.server";
import { newPerson, screenshot } from "../support/browser";
import { canvasMean, editorText } from "../support/workspace-page";
import { journeyProject, journeyUser, lampCorner, openWorkspace, signIn, sppDone, type Browser } from "./journey-support";

describe("journey: a lighting artist blocks in a scene", () => {
  let artist: Browser;
  let sceneId: string;
  let projectId: string;
  let path: string;

  beforeAll(async () => {
    const maren = await journeyUser("maren-lighting");
    projectId = await journeyProject("Osier lamp launch (journey)", [{ id: maren.id, role: "owner" }]);
    const created = await createScene({ projectId, name: "Desk corner blocking", scene: lampCorner(), authorId: maren.id, message: "Rough placement" });
    if (!created.ok) throw new Error(JSON.stringify(created.issues));
    sceneId = created.scene.id;
    path = `/projects/${projectId}/scenes/${sceneId}`;
    artist = await newPerson();
    await signIn(artist, maren.email);
  });

  afterAll(async () => {
    await artist?.close();
    await dbPool().end();
  });

  it("edits the lamp, watches the preview converge, balances the groups and saves a version", async () => {
    const { page } = artist;
    await openWorkspace(page, path);

    // Edit a light: the lamp from 40 W to 60 W, in its form.
    const power = page.getByLabel("Light bulb: Power (W)");
    await power.fill("60");
    await expect.poll(() => editorText(page)).toContain('"power": 60');

    // Watch the preview converge to the scene's 16 spp.
    await page.waitForTimeout(800); // the edit restarts the preview after a short debounce
    await expect.poll(() => sppDone(page), { timeout: 120_000, interval: 250 }).toBeGreaterThanOrEqual(4);
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 180_000 }).toMatch(/Reached the target[\s\S]*16\s*\/\s*16\s*spp/);
    await screenshot(page, "journey-lighting-artist-converged");

    // Balance the light groups: the window one stop down against the lamp, seen at once, then written back.
    await page.getByRole("tab", { name: "Light balance" }).click();
    const before = await canvasMean(page);
    await page.getByLabel("Group window: gain in stops").fill("-1");
    await expect.poll(() => canvasMean(page)).toBeLessThan(before);
    await page.getByRole("button", { name: "Write balance into the scene" }).click();
    await expect.poll(() => editorText(page)).toMatch(/"radiance": \[\s*0\.75,\s*0\.8,\s*0\.9\s*\]/);
    await screenshot(page, "journey-lighting-artist-balanced");

    // Save a version.
    await page.getByRole("button", { name: "Save version…" }).click();
    await page.getByLabel("What changed?").fill("Lamp to 60 W, window a stop down");
    await page.getByRole("button", { name: "Save", exact: true }).click();
    await expect.poll(() => page.getByTestId("base-version").innerText(), { timeout: 30_000 }).toBe("from version 2");

    // What she came for: the saved scene carries her lamp and her balance.
    const head = await getHead(sceneId);
    const saved = head!.scene as ReturnType<typeof lampCorner>;
    expect(head!.message).toBe("Lamp to 60 W, window a stop down");
    expect(saved.lights.find((l) => l.id === "bulb")!.power).toBe(60);
    expect((saved.lights.find((l) => l.id === "window") as { radiance: number[] }).radiance).toEqual([0.75, 0.8, 0.9]);
  });

  it("publishes the converged picture of the saved version to the project's library", async () => {
    const { page } = artist;
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 180_000 }).toMatch(/Reached the target/);
    await page.getByTestId("publish-open").click();
    await page.getByLabel(/^Title/).fill("Desk corner, lamp and window balanced");
    await page.getByTestId("publish-render").click();
    const result = page.getByTestId("publish-result");
    await result.waitFor({ timeout: 60_000 });
    const hash = await result.getAttribute("data-accumulation-hash");
    await screenshot(page, "journey-lighting-artist-published");
    // What she came for: the library holds the picture of exactly the version she saved, at the spp she watched.
    const rows = await db().select().from(renders).where(eq(renders.sceneId, sceneId));
    expect(rows).toHaveLength(1);
    const head = await getHead(sceneId);
    expect(rows[0]!.versionId).toBe(head!.id);
    expect(rows[0]!.status).toBe("done");
    expect(rows[0]!.spp).toBe(16);
    expect(rows[0]!.title).toBe("Desk corner, lamp and window balanced");
    expect(rows[0]!.accumulationHash).toBe(hash);
    await page.goto(new URL(`/projects/${projectId}/renders`, page.url()).toString());
    await expect.poll(() => page.getByTestId("render-row").count()).toBe(1);
    await screenshot(page, "journey-lighting-artist-library");
  });
});
