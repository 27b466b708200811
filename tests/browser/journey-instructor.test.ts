// Journey: an instructor shares a scene and a viewer re-renders it. Ines (owner of the demo studio's lamp
// project, seeded by bin/serve-test) opens the Sharing tab, creates a link to the desk study version that has a
// published render; a student with no account opens the link, renders it in their own browser, and sees the
// reproducibility check pass. What each came for: a working link (instructor) and a bit-identical re-render
// (viewer).
// Runs against a served build seeded with the demo studio: TEST_PORT=3150 bin/serve-test &  then
//   TRACEWELL_URL=http://localhost:3150 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/journey-instructor.test.ts
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { renders, shareLinks } from "~/db/schema";
import { DEMO_PASSWORD, DEMO_PEOPLE, DEMO_PROJECTS } from "~/db/seed-accounts";
import { db, dbPool } from "~/services/db.server";
import { gotoHydrated, isLocal, newPerson, screenshot } from "../support/browser";
import { signIn, type Browser } from "./journey-support";

describe("journey: an instructor shares a scene, a viewer re-renders it", () => {
  let instructor: Browser;
  let student: Browser;
  let shareUrl = "";
  let render: typeof renders.$inferSelect;

  beforeAll(async () => {
    // The demo seed's published desk-study preview (2 spp, so a browser reproduces it in seconds).
    const [r] = await db().select().from(renders).where(and(eq(renders.title, "Desk study preview"), eq(renders.status, "done"))).limit(1);
    if (!r) throw new Error("the demo seed has not run: start the server with bin/serve-test");
    render = r;
    instructor = await newPerson();
    student = await newPerson();
  });

  afterAll(async () => {
    await instructor?.close();
    await student?.close();
    await dbPool().end();
  });

  it("the instructor creates a share link to the version with a published render", async () => {
    const { page } = instructor;
    await signIn(instructor, DEMO_PEOPLE.ines.email, DEMO_PASSWORD);
    await gotoHydrated(page, `/projects/${render.projectId}/sharing`);
    await page.getByTestId("share-version").selectOption(render.versionId);
    await page.locator('input[name="label"]').fill(`Lighting class, week 3 (${Date.now()})`);
    await page.getByRole("button", { name: "Create link" }).click();
    const link = page.getByTestId("new-share-link");
    await link.waitFor({ timeout: 30_000 });
    shareUrl = new URL((await link.getAttribute("href"))!, page.url()).toString();
    await screenshot(page, "journey-instructor-link");
    const token = shareUrl.split("/s/")[1]!;
    const [row] = await db().select().from(shareLinks).where(eq(shareLinks.token, token));
    expect(row!.versionId).toBe(render.versionId);
    expect(row!.projectId).toBe(render.projectId);
    expect(DEMO_PROJECTS.lamp.members.ines).toBe("owner");
  });

  it("a viewer without an account opens the link, re-renders in the browser and sees the check pass", async () => {
    const { page, requests } = student;
    expect(shareUrl).not.toBe("");
    await gotoHydrated(page, new URL(shareUrl).pathname);
    expect(await page.getByTestId("shared-scene-name").innerText()).toContain("Osier lamp desk study");
    await page.getByTestId("share-render").click();
    const result = page.getByTestId("reproduce-result");
    await expect.poll(() => result.getAttribute("data-matches").catch(() => null), { timeout: 240_000, interval: 500 }).not.toBeNull();
    await screenshot(page, "journey-instructor-reproduced");
    // What the viewer came for: the same picture, bit for bit, as the published render.
    expect(await result.getAttribute("data-matches")).toBe("true");
    expect(await result.innerText()).toContain(render.accumulationHash!);
    expect(requests.filter((r) => !isLocal(r))).toEqual([]);
  });
});
