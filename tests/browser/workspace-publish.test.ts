// Publishing a render from the scene workspace in Chromium: the preview reaches its target in web workers,
// an editor publishes it (unsaved edits and a failed upload publish nothing), the render shows in the
// library, and its accumulation hash — on the preview, in the database and recomputed from the stored
// state file — equals a render of the same version, seed and spp in Node's worker pool (browser/Node
// parity: the tracer's sums are exact integers, so any two conforming runs agree bit for bit).
// Run against a served build with the test database: TEST_PORT=3160 bin/serve-test & then
// TRACEWELL_URL=http://localhost:3160 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/workspace-publish.test.ts
import { eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { accumulationHash, deserializeAccumulation } from "@tracer/film/accumulate";
import { compileScene } from "@tracer/compile/compile";
import { validateScene } from "@tracer/scene/validate";
import { TRACER_VERSION } from "@tracer/version";
import { createNodePool } from "@tracer/workers/node-pool";
import { passesOf, renderProgressive } from "@tracer/workers/render-session";
import { renders, uploads } from "~/db/schema";
import { getRender } from "~/models/render.server";
import { createScene, getHead } from "~/models/scene.server";
import { db } from "~/services/db.server";
import { listKeys } from "~/services/storage.server";
import { newPerson, screenshot } from "../support/browser";
import { dropProject, makeUser, openWorkspace, projectWithScene, signedIn, signIn, waitForSpp, type Account, type Person } from "../support/workspace-page";

const PASSWORD = "osier-lamp-shade-17";

// Our own scenario: the Osier lamp's shade stand-in over a desk, lit by the lamp and a window fill, two light
// groups so the per-group buffers are published too. Small so 8 spp finish in seconds on one worker.
const scene = {
  format: "tracewell.scene/1",
  name: "Osier lamp, publish test",
  image: { width: 40, height: 30 },
  camera: { position: [0, 1.2, 3.5], target: [0, 0.5, 0], fovY: 42 },
  render: { spp: 8, seed: 11, maxDepth: 4 },
  display: { exposure: 0, toneMap: "none" },
  materials: {
    shade: { type: "diffuse", albedo: [0.85, 0.8, 0.65] },
    desk: { type: "diffuse", albedo: [0.45, 0.35, 0.25] },
  },
  objects: [
    { id: "shade", shape: { type: "sphere", center: [0, 0.6, 0], radius: 0.4 }, material: "shade" },
    { id: "desk", shape: { type: "box", min: [-2, -0.1, -2], max: [2, 0, 2] }, material: "desk" },
  ],
  lights: [
    { id: "lamp", type: "area", shape: { type: "rect", center: [0.8, 2.2, 0.8], u: [0.5, 0, 0], v: [0, 0, 0.5] }, power: 30, group: "lamp" },
    { id: "window", type: "area", shape: { type: "disk", center: [-2, 1.4, 1], normal: [1, -0.4, -0.5], radius: 0.35 }, radiance: [1.5, 1.6, 2], group: "window" },
  ],
};

const rendersOf = async (projectId: string) => db().select({ id: renders.id }).from(renders).where(eq(renders.projectId, projectId));

/** The same version rendered in Node's worker pool: hash of exactly `spp` passes of every pixel. */
async function nodeHash(spp: number, json: unknown = scene): Promise<string> {
  const checked = validateScene(json);
  if (!checked.ok) throw new Error(JSON.stringify(checked.issues));
  const pool = createNodePool(2);
  try {
    const result = await renderProgressive(compileScene(checked.scene), { pool, passes: spp, passesPerUnit: 3, tileSize: 16 }).done;
    expect(result.passesDone).toBe(spp);
    return accumulationHash(result.accumulation);
  } finally {
    await pool.terminate();
  }
}

describe("publishing a render from the workspace", () => {
  let editor: Account;
  let viewer: Account;
  let projectId: string;
  let sceneId: string;
  let path: string;
  let e: Person;
  let expectedHash: Promise<string>;

  beforeAll(async () => {
    editor = await makeUser("ines-pub", PASSWORD);
    viewer = await makeUser("olu-pub", PASSWORD);
    ({ projectId, sceneId, path } = await projectWithScene({
      name: "Harrow Lane publish",
      members: [
        { account: editor, role: "editor" },
        { account: viewer, role: "viewer" },
      ],
      sceneName: "Osier lamp publish test",
      scene,
      message: "Lamp and window",
    }));
    expectedHash = nodeHash(scene.render.spp);
    e = await signedIn(editor);
  });

  afterAll(async () => {
    await e?.close();
    await dropProject(projectId);
  });

  it("the finished preview carries the same accumulation hash as a Node render of the version", async () => {
    const { page } = e;
    await openWorkspace(page, path);
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 120_000 }).toMatch(/Reached the target[\s\S]*8\s*\/\s*8\s*spp/);
    const browserHash = await page.getByTestId("preview").getAttribute("data-accumulation-hash");
    expect(browserHash).toMatch(/^fnv1a64:[0-9a-f]{16}$/);
    // Issue 4 item 8: the browser's workers and Node's workers give bit-identical sums.
    expect(browserHash).toBe(await expectedHash);
  });

  it("unsaved edits block publishing with a reason; a failed upload publishes nothing", async () => {
    const { page } = e;
    await page.getByLabel("Light lamp: Power (W)").fill("45");
    await expect.poll(() => page.getByTestId("unsaved").isVisible()).toBe(true);
    await page.getByTestId("publish-open").click();
    await expect.poll(() => page.getByTestId("publish-blocker").innerText()).toMatch(/save a version first/);
    await expect(page.getByTestId("publish-render").isDisabled()).resolves.toBe(true);
    await page.locator("body").click({ position: { x: 5, y: 5 } });
    await page.keyboard.press("Control+z");
    await expect.poll(() => page.getByTestId("unsaved").count()).toBe(0);
    // The undo restores the version's scene, so the preview starts again; publishing waits for a full pass of it.
    // (On a busy machine the first pass may already be done when this looks: then there is no blocker at all.)
    const blocker = page.getByTestId("publish-blocker");
    await expect
      .poll(async () => ((await blocker.count()) === 0 ? "none" : await blocker.innerText({ timeout: 1000 }).catch(() => "none")))
      .toMatch(/restart|full pass|^none$/);
    await expect.poll(() => page.getByTestId("preview").getAttribute("data-accumulation-hash"), { timeout: 120_000 }).toBe(await expectedHash);

    // The connection drops while a file is on its way (the staged upload's PUTs), after the upload started.
    const filePuts = "**/uploads/*/files/**";
    let attempts = 0;
    await page.route(filePuts, (route) => (++attempts >= 2 ? route.abort("connectionreset") : route.continue()));
    await expect.poll(() => page.getByTestId("publish-render").isDisabled()).toBe(false);
    expect(await page.getByTestId("publish-blocker").count()).toBe(0);
    await page.getByTestId("publish-render").click();
    await expect.poll(() => page.getByTestId("publish-error").innerText(), { timeout: 30_000 }).toMatch(/connection failed during the upload; nothing was published/);
    await page.unroute(filePuts);
    expect(attempts).toBe(2);
    expect(await rendersOf(projectId)).toEqual([]);
    // The page gave the upload up: it is marked failed and the file that did arrive is no longer staged. The
    // page shows the error first and sends the cancel after, so the row may still be pending for a moment.
    const uploadsOfProject = () => db().select().from(uploads).where(eq(uploads.projectId, projectId));
    await expect.poll(async () => (await uploadsOfProject()).map((u) => u.status), { timeout: 15_000 }).toEqual(["failed"]);
    const abandoned = await uploadsOfProject();
    await expect.poll(() => listKeys(`staging/${abandoned[0]!.id}/`)).toEqual([]);
  });

  it("an editor publishes the render with progress; the library lists it and the stored state hashes like Node's", async () => {
    const { page } = e;
    // Record whether the upload's progress bar was ever on screen (a small upload can finish between polls).
    // …and every upload progress event the browser fires for the file PUTs.
    await page.evaluate(() => {
      const w = window as unknown as { sawProgress: boolean; progressEvents: { url: string; loaded: number; total: number }[] };
      w.sawProgress = false;
      w.progressEvents = [];
      new MutationObserver(() => {
        if (document.querySelector("[data-testid=publish-progress]")) w.sawProgress = true;
      }).observe(document.body, { childList: true, subtree: true });
      const open = XMLHttpRequest.prototype.open;
      XMLHttpRequest.prototype.open = function (this: XMLHttpRequest, method: string, url: string | URL, ...rest: unknown[]) {
        this.upload.addEventListener("progress", (e) => w.progressEvents.push({ url: String(url), loaded: e.loaded, total: e.total }));
        return (open as (...a: unknown[]) => void).call(this, method, url, ...rest);
      } as typeof XMLHttpRequest.prototype.open;
    });
    await page.getByLabel("Title").fill("Lamp and window, first look");
    await page.getByTestId("publish-render").click();
    const result = page.getByTestId("publish-result");
    await result.waitFor({ timeout: 60_000 });
    expect(await page.evaluate(() => (window as unknown as { sawProgress: boolean }).sawProgress)).toBe(true);
    // Each file's progress events reach its full size: pfm, png, thumb, hdr, state and one per light group.
    const events = await page.evaluate(() => (window as unknown as { progressEvents: { url: string; loaded: number; total: number }[] }).progressEvents);
    const byFile = new Map<string, { loaded: number; total: number }>();
    for (const ev of events) {
      const file = ev.url.split("/files/")[1]!;
      byFile.set(file, { loaded: Math.max(ev.loaded, byFile.get(file)?.loaded ?? 0), total: ev.total });
    }
    expect([...byFile.keys()].sort()).toEqual(["group-lamp", "group-window", "hdr", "pfm", "png", "state", "thumb"]);
    for (const [file, p] of byFile) expect(p.loaded, file).toBe(p.total);
    expect(await result.innerText()).toMatch(/Published at 8 spp/);
    await expect.poll(() => page.getByRole("status").filter({ hasText: "published to the library" }).count()).toBeGreaterThan(0);
    await screenshot(page, "workspace-published");

    const href = await result.getByRole("link").getAttribute("href");
    const renderId = new URL(href!, "http://x").searchParams.get("render")!;
    const stored = await getRender(renderId);
    const head = await getHead(sceneId);
    const expected = await expectedHash;
    expect(stored).not.toBeNull();
    expect(stored!.versionId).toBe(head!.id);
    expect(stored!.spp).toBe(8);
    expect(stored!.seed).toBe(11);
    expect(stored!.integrator).toBe("path");
    expect(stored!.tracerVersion).toBe(TRACER_VERSION);
    expect(stored!.title).toBe("Lamp and window, first look");
    const finished = await db().select().from(uploads).where(eq(uploads.resultId, renderId));
    expect(finished.map((u) => u.status)).toEqual(["finished"]);
    expect(await listKeys(`staging/${finished[0]!.id}/`)).toEqual([]);
    expect(stored!.createdBy).toBe(editor.id);
    expect(stored!.accumulationHash).toBe(expected);
    expect(await result.getAttribute("data-accumulation-hash")).toBe(expected);

    // The stored accumulation itself, not only the hash the page claimed.
    const bytes = await page.evaluate(async (url) => {
      const r = await fetch(url);
      return r.ok ? Array.from(new Uint8Array(await r.arrayBuffer())) : r.status;
    }, `/projects/${projectId}/renders/${renderId}/files/state`);
    expect(Array.isArray(bytes)).toBe(true);
    const acc = deserializeAccumulation(new Uint8Array(bytes as number[]));
    expect(passesOf(acc)).toBe(8);
    expect(acc.groupCount).toBe(2);
    expect(accumulationHash(acc)).toBe(expected);
    for (const g of ["lamp", "window"]) {
      const status = await page.evaluate(async (url) => (await fetch(url)).status, `/projects/${projectId}/renders/${renderId}/files/group-${g}`);
      expect(status, `group ${g}`).toBe(200);
    }

    await result.getByRole("link").click();
    await page.waitForURL((u) => u.pathname === `/projects/${projectId}/renders`, { timeout: 30_000 });
    const rows = page.getByTestId("render-row");
    await expect.poll(() => rows.count()).toBe(1);
    expect(await rows.first().innerText()).toContain("Lamp and window, first look");
  });

  it("viewers get no publish action, and the server refuses their upload", async () => {
    const c = await newPerson();
    try {
      await signIn(c, viewer);
      await openWorkspace(c.page, path);
      expect(await c.page.getByTestId("read-only").isVisible()).toBe(true);
      expect(await c.page.getByTestId("publish-open").count()).toBe(0);
      const status = await c.page.evaluate(async (url) => {
        const form = new FormData();
        form.set("sceneId", "x");
        return (await fetch(url, { method: "POST", body: form })).status;
      }, `/projects/${projectId}/renders/publish`);
      expect(status).toBe(404);
      const staged = await c.page.evaluate(async (url) => {
        const r = await fetch(url, { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ kind: "render", sceneId: "x", meta: {}, files: [] }) });
        return r.status;
      }, `/projects/${projectId}/uploads`);
      expect(staged).toBe(404);
      expect((await rendersOf(projectId)).length).toBe(1);
    } finally {
      await c.close();
    }
  });

  it("a paused render publishes exactly the passes every pixel holds, equal to Node's render of that many", async () => {
    const { page } = e;
    const long = { ...scene, name: "Osier lamp, long run", render: { ...scene.render, spp: 2048 } };
    const created = await createScene({ projectId, name: "Osier lamp long run", scene: long, authorId: editor.id, message: "Long run" });
    if (!created.ok) throw new Error(JSON.stringify(created.issues));
    await openWorkspace(page, `/projects/${projectId}/scenes/${created.scene.id}`);
    await waitForSpp(page, 6);
    await page.getByRole("button", { name: "Pause" }).click();
    await expect.poll(() => page.getByTestId("progress-status").innerText()).toBe("Paused");
    await page.getByTestId("publish-open").click();
    await expect.poll(() => page.getByTestId("publish-render").isDisabled()).toBe(false);
    await page.getByTestId("publish-render").click();
    const result = page.getByTestId("publish-result");
    await result.waitFor({ timeout: 60_000 });
    const spp = Number(/Published at (\d+) spp/.exec(await result.innerText())![1]);
    expect(spp).toBeGreaterThanOrEqual(1);
    expect(spp).toBeLessThan(2048);
    console.info(`paused publish: ${spp} spp held by every pixel (preview showed ≥ 6 when paused)`);
    const renderId = new URL((await result.getByRole("link").getAttribute("href"))!, "http://x").searchParams.get("render")!;
    const stored = await getRender(renderId);
    expect(stored!.spp).toBe(spp);
    const bytes = await page.evaluate(async (url) => Array.from(new Uint8Array(await (await fetch(url)).arrayBuffer())), `/projects/${projectId}/renders/${renderId}/files/state`);
    const acc = deserializeAccumulation(new Uint8Array(bytes));
    expect(passesOf(acc)).toBe(spp); // every pixel holds the same passes, though tiles were mid-round when paused
    const expected = await nodeHash(spp, long);
    expect(accumulationHash(acc)).toBe(expected);
    expect(stored!.accumulationHash).toBe(expected);
    expect((await rendersOf(projectId)).length).toBe(2);
  });
});
