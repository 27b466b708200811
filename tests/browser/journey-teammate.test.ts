// Journey: a teammate forks, changes and compares. Tobias forks the desk-corner scene from its history page,
// changes the lamp in the fork's workspace, saves, and compares his version with the original. What he came for:
// the comparison shows exactly his change, and the original is untouched.
// Runs against a served build: TEST_PORT=3150 bin/serve-test &  then
//   TRACEWELL_URL=http://localhost:3150 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/journey-teammate.test.ts
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createScene, getHead, listVersions } from "~/models/scene.server";
import { dbPool } from "~/services/db.server";
import { gotoHydrated, newPerson, screenshot } from "../support/browser";
import { journeyProject, journeyUser, lampCorner, openWorkspace, signIn, type Browser } from "./journey-support";

describe("journey: a teammate forks, changes and compares", () => {
  let teammate: Browser;
  let projectId: string;
  let original: { sceneId: string; versionId: string };

  beforeAll(async () => {
    const ines = await journeyUser("ines-owner");
    const tobias = await journeyUser("tobias-teammate");
    projectId = await journeyProject("Osier lamp launch (teammate journey)", [
      { id: ines.id, role: "owner" },
      { id: tobias.id, role: "editor" },
    ]);
    const created = await createScene({ projectId, name: "Desk corner", scene: lampCorner({ spp: 4 }), authorId: ines.id, message: "Ines's placement" });
    if (!created.ok) throw new Error(JSON.stringify(created.issues));
    original = { sceneId: created.scene.id, versionId: created.version.id };
    teammate = await newPerson();
    await signIn(teammate, tobias.email);
  });

  afterAll(async () => {
    await teammate?.close();
    await dbPool().end();
  });

  it("forks from the history page, changes the lamp, saves, and the comparison shows his change", async () => {
    const { page } = teammate;
    await gotoHydrated(page, `/projects/${projectId}/scenes/${original.sceneId}/history`);
    await page.getByRole("button", { name: "Fork…" }).first().click();
    const forkForm = page.getByTestId("fork-form");
    await forkForm.locator('input[name="name"]').fill("Desk corner, brighter lamp");
    await Promise.all([
      page.waitForURL((u) => /\/scenes\/[0-9a-f-]{36}\/history$/.test(u.pathname) && !u.pathname.includes(original.sceneId), { timeout: 60_000 }),
      forkForm.getByRole("button", { name: /Fork version 1/ }).click(),
    ]);
    const forkId = /\/scenes\/([0-9a-f-]{36})\/history$/.exec(page.url())![1]!;

    // Change it in the fork's workspace and save.
    await openWorkspace(page, `/projects/${projectId}/scenes/${forkId}`);
    await page.getByLabel("Light bulb: Power (W)").fill("90");
    await page.getByRole("button", { name: "Save version…" }).click();
    await page.getByLabel("What changed?").fill("Brighter lamp for the close-up");
    await page.getByRole("button", { name: "Save", exact: true }).click();
    await expect.poll(() => page.getByTestId("base-version").innerText(), { timeout: 30_000 }).toBe("from version 2");
    const forkHead = await getHead(forkId);

    // Compare his version with the original's.
    await gotoHydrated(page, `/projects/${projectId}/scenes/${forkId}/compare?a=${original.versionId}&b=${forkHead!.id}`);
    const body = await page.locator("main").innerText();
    await screenshot(page, "journey-teammate-compare");
    // What he came for: the comparison names his change (the bulb's power, 40 → 90) and only that light.
    expect(body).toMatch(/bulb[\s\S]*40[\s\S]*90/);
    expect(body).not.toMatch(/window[\s\S]{0,40}radiance/);
    // …and Ines's original is untouched.
    const originalVersions = await listVersions(original.sceneId);
    expect(originalVersions).toHaveLength(1);
    expect((originalVersions[0]!.scene as ReturnType<typeof lampCorner>).lights[0]!.power).toBe(40);
  });
});
