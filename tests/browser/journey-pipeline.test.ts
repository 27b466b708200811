// Journey: a pipeline. Jonah, the studio's pipeline person, creates an API token on his account page, and his
// nightly script (this test process, plain HTTP) starts a pool render of a version through the API, waits for
// it, and downloads the PNG. What he came for: a PNG of the version, at its size, rendered by the pool.
// Runs against a served build with a render worker (bin/serve-test starts one):
//   TEST_PORT=3150 bin/serve-test &  then
//   TRACEWELL_URL=http://localhost:3150 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/journey-pipeline.test.ts
import { PNG } from "pngjs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createScene } from "~/models/scene.server";
import { dbPool } from "~/services/db.server";
import { BASE_URL, gotoHydrated, newPerson, screenshot } from "../support/browser";
import { journeyProject, journeyUser, lampCorner, signIn, type Browser } from "./journey-support";

type RenderJson = { id: string; status: string; sppDone: number; spp: number; accumulationHash?: string | null; error?: string | null };

describe("journey: a pipeline renders through the API", () => {
  let person: Browser;
  let versionId: string;
  let token = "";

  beforeAll(async () => {
    const jonah = await journeyUser("jonah-pipeline");
    const projectId = await journeyProject("Nightly turntables (journey)", [{ id: jonah.id, role: "owner" }]);
    const created = await createScene({ projectId, name: "Desk corner nightly", scene: lampCorner({ width: 40, height: 24, spp: 8 }), authorId: jonah.id, message: "Nightly setup" });
    if (!created.ok) throw new Error(JSON.stringify(created.issues));
    versionId = created.version.id;
    person = await newPerson();
    await signIn(person, jonah.email);
  });

  afterAll(async () => {
    await person?.close();
    await dbPool().end();
  });

  it("creates a render-scoped token on the account page", async () => {
    const { page } = person;
    await gotoHydrated(page, "/account");
    await page.locator('input[name="tokenName"]').fill("nightly turntables");
    await page.locator('select[name="scope"]').selectOption("render");
    await page.getByRole("button", { name: "Create token" }).click();
    const shown = page.getByTestId("new-token");
    await shown.waitFor({ timeout: 30_000 });
    token = await shown.inputValue();
    expect(token).toMatch(/^tw_[A-Za-z0-9_-]{43}$/);
    await screenshot(page, "journey-pipeline-token");
  });

  it("starts a pool render through the API, waits for it and downloads the PNG", async () => {
    expect(token).not.toBe("");
    const headers = { authorization: `Bearer ${token}`, "content-type": "application/json" };
    const start = await fetch(new URL("/api/v1/renders", BASE_URL), { method: "POST", headers, body: JSON.stringify({ versionId, spp: 8, chunkPasses: 2 }) });
    expect(start.status).toBe(202);
    const queued = (await start.json()) as RenderJson;

    const until = Date.now() + 300_000;
    let r: RenderJson = queued;
    while (r.status !== "done") {
      if (r.status === "failed" || r.status === "cancelled") throw new Error(`render ${r.status}: ${r.error}`);
      if (Date.now() > until) throw new Error(`render still ${r.status} at ${r.sppDone}/${r.spp}: is a render worker running?`);
      await new Promise((res) => setTimeout(res, 500));
      r = (await (await fetch(new URL(`/api/v1/renders/${queued.id}`, BASE_URL), { headers })).json()) as RenderJson;
    }
    expect(r.sppDone).toBe(8);
    expect(r.accumulationHash).toBeTruthy();

    const png = await fetch(new URL(`/api/v1/renders/${queued.id}/image.png`, BASE_URL), { headers });
    expect(png.status).toBe(200);
    expect(png.headers.get("content-type")).toMatch(/image\/png/);
    const image = PNG.sync.read(Buffer.from(await png.arrayBuffer()));
    // What the pipeline came for: a PNG of the version at its size, with a lit picture in it.
    expect([image.width, image.height]).toEqual([40, 24]);
    let sum = 0;
    for (let i = 0; i < image.data.length; i += 4) sum += image.data[i]! + image.data[i + 1]! + image.data[i + 2]!;
    expect(sum / (image.width * image.height * 3)).toBeGreaterThan(5);

    // The render is visible to the person too, on the project's pool page.
    await gotoHydrated(person.page, "/projects");
    await screenshot(person.page, "journey-pipeline-projects");
  });
});
