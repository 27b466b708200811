// The scene workspace end to end in Chromium: a form edit shows in the JSON, the preview accumulates a set
// number of samples in web workers, the light balance changes the picture without re-rendering and writes
// back as an undoable edit, saving makes a version, and a save conflict from a second person is shown and
// resolved without losing anything typed. Runs against a served build with the test database (bin/test).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { getHead, getVersion, listVersions } from "~/models/scene.server";
import { isLocal, newPerson, screenshot } from "../support/browser";
import { canvasMean, dropProject, editorText, makeUser, openWorkspace, projectWithScene, signedIn, signIn, sppDone, type Account, type Person } from "../support/workspace-page";

const PASSWORD = "wren-kettle-glaze-42";

// Our own scenario: the Wren kettle stand-in on a bench with a key and a fill light, small enough to finish
// in a few seconds on one worker.
const scene = {
  format: "tracewell.scene/1",
  name: "Wren kettle, workspace test",
  image: { width: 48, height: 36 },
  camera: { position: [0, 1, 4], target: [0, 0.5, 0], fovY: 40 },
  render: { spp: 16, seed: 3, maxDepth: 4 },
  display: { exposure: 0, toneMap: "none" },
  materials: {
    glaze: { type: "diffuse", albedo: [0.8, 0.75, 0.7] },
    bench: { type: "diffuse", albedo: [0.5, 0.5, 0.5] },
  },
  objects: [
    { id: "kettle", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "glaze" },
    { id: "bench", shape: { type: "box", min: [-2, -0.1, -2], max: [2, 0, 2] }, material: "bench" },
  ],
  lights: [
    { id: "key", type: "area", shape: { type: "rect", center: [1, 2.5, 1], u: [0.6, 0, 0], v: [0, 0, 0.6] }, power: 40, group: "key" },
    { id: "fill", type: "area", shape: { type: "disk", center: [-2, 1.5, 1], normal: [1, -0.5, -0.5], radius: 0.3 }, radiance: [2, 2, 2.4], group: "fill" },
  ],
};

describe("scene workspace", () => {
  let owner: Account;
  let editor: Account;
  let viewer: Account;
  let projectId: string;
  let sceneId: string;
  let path: string;
  let a: Person;
  let b: Person;

  beforeAll(async () => {
    owner = await makeUser("maren-ws", PASSWORD);
    editor = await makeUser("tobias-ws", PASSWORD);
    viewer = await makeUser("priya-ws", PASSWORD);
    ({ projectId, sceneId, path } = await projectWithScene({
      name: "Harrow Lane workspace",
      members: [
        { account: owner, role: "owner" },
        { account: editor, role: "editor" },
        { account: viewer, role: "viewer" },
      ],
      sceneName: "Wren kettle workspace test",
      scene,
      message: "First setup",
    }));
    a = await signedIn(owner);
    b = await signedIn(editor);
  });

  afterAll(async () => {
    await a?.close();
    await b?.close();
    await dropProject(projectId);
  });

  it("a light's power edited in its form appears in the JSON, and undo takes it back", async () => {
    const { page } = a;
    await page.setViewportSize({ width: 1280, height: 800 }); // the smallest size the workspace is made for
    await openWorkspace(page, path);
    for (const id of ["scene-editor", "preview", "progress"]) {
      const box = await page.getByTestId(id).boundingBox();
      expect(box, id).not.toBeNull();
      expect(box!.x + box!.width, id).toBeLessThanOrEqual(1280);
      expect(box!.y + box!.height, id).toBeLessThanOrEqual(800);
      expect(box!.width, id).toBeGreaterThan(250);
    }
    const power = page.getByLabel("Light key: Power (W)");
    await expect(power.inputValue()).resolves.toBe("40");
    await power.fill("80");
    await expect.poll(() => editorText(page)).toContain('"power": 80');
    await page.locator("body").click({ position: { x: 5, y: 5 } });
    await page.keyboard.press("Control+z");
    await expect.poll(() => power.inputValue()).toBe("40");
    await expect.poll(() => editorText(page)).toContain('"power": 40');
    await page.keyboard.press("Control+Shift+z");
    await expect.poll(() => power.inputValue()).toBe("80");
  });

  it("the preview accumulates the scene's 16 samples per pixel in workers", async () => {
    const { page } = a;
    await page.waitForTimeout(1000); // let the restart after the last edit (350 ms debounce) begin
    await expect.poll(() => sppDone(page), { timeout: 120_000, interval: 250 }).toBeGreaterThanOrEqual(4);
    // One read of the whole strip, so a frame arriving between reads cannot mix two states.
    await expect
      .poll(() => page.getByTestId("progress").innerText(), { timeout: 120_000 })
      .toMatch(/Reached the target[\s\S]*16\s*\/\s*16\s*spp[\s\S]*Noise\s*\d+(\.\d)?%/);
    // The coordinator worker came from our server; it drives navigator.hardwareConcurrency − 1 tracer workers (≥ 1).
    expect(a.requests.some((r) => /workspace-session/.test(r))).toBe(true);
    const cores = await page.evaluate(() => navigator.hardwareConcurrency);
    const n = Math.max(1, cores - 1);
    expect(await page.getByTestId("progress").innerText()).toContain(`${n} worker${n === 1 ? "" : "s"}`);
    await screenshot(page, "workspace-rendered");
  });

  it("stops by itself at a noise target, and a quarter resolution renders a quarter-size image", async () => {
    const { page } = a;
    await page.getByLabel("Stop when the noise falls to").selectOption({ label: "10%" });
    await page.locator("[data-testid=render-form] summary").click();
    await page.getByLabel("Render: Samples per pixel").fill("4096");
    await expect
      .poll(() => page.getByTestId("progress").innerText(), { timeout: 120_000 })
      .toMatch(/Reached the noise target[\s\S]*\/\s*4096\s*spp/);
    const done = await sppDone(page);
    expect(done).toBeGreaterThan(16);
    expect(done).toBeLessThan(4096);
    const noise = Number((await page.getByTestId("noise").innerText()).replace("%", ""));
    expect(noise).toBeLessThanOrEqual(10);

    await page.getByRole("radio", { name: "¼" }).click();
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 60_000 }).toMatch(/12×9 px/);
    await page.getByRole("radio", { name: "Full" }).click();
    await page.getByLabel("Stop when the noise falls to").selectOption({ label: "Off" });
    await page.locator("body").click({ position: { x: 5, y: 5 } });
    await page.keyboard.press("Control+z"); // back to 16 spp
    await expect.poll(() => page.getByLabel("Render: Samples per pixel").inputValue()).toBe("16");
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 120_000 }).toMatch(/Reached the target[\s\S]*16\s*\/\s*16\s*spp/);
  });

  it("pauses and resumes the accumulation", async () => {
    const { page } = a;
    await page.getByLabel("Render: Samples per pixel").fill("4096");
    await expect.poll(() => sppDone(page), { timeout: 60_000 }).toBeGreaterThanOrEqual(8);
    await page.getByRole("button", { name: "Pause" }).click();
    await expect.poll(() => page.getByTestId("progress-status").innerText()).toBe("Paused");
    await page.waitForTimeout(1500); // units already in flight may still land
    const held = await sppDone(page);
    await page.waitForTimeout(1500);
    expect(await sppDone(page)).toBe(held);
    await page.getByRole("button", { name: "Resume" }).click();
    await expect.poll(() => sppDone(page), { timeout: 60_000 }).toBeGreaterThan(held);
    await page.locator("body").click({ position: { x: 5, y: 5 } });
    await page.keyboard.press("Control+z"); // back to 16 spp
    await expect.poll(() => page.getByLabel("Render: Samples per pixel").inputValue()).toBe("16");
    await expect.poll(() => page.getByTestId("progress").innerText(), { timeout: 120_000 }).toMatch(/Reached the target[\s\S]*16\s*\/\s*16\s*spp/);
  });

  it("false colour, histogram, pixel probe and light meter read the preview", async () => {
    const { page } = a;
    await page.getByRole("tab", { name: "Look" }).click();
    expect(await page.getByTestId("histogram").isVisible()).toBe(true);
    const pictureMean = await canvasMean(page);
    await page.getByRole("radio", { name: "Exposure map" }).click();
    expect(await page.getByTestId("false-colour-legend").innerText()).toContain("middle grey");
    await expect.poll(() => canvasMean(page)).not.toBeCloseTo(pictureMean, 0);
    await page.getByRole("radio", { name: "Picture" }).click();

    await page.getByRole("tab", { name: "Measure" }).click();
    const canvas = page.locator("[data-testid=preview] canvas");
    const box = (await canvas.boundingBox())!;
    // The kettle sits in the middle of the frame; its lit top is a little above the centre.
    await page.mouse.move(box.x + box.width * 0.5, box.y + box.height * 0.42);
    await expect.poll(() => page.getByTestId("probe").innerText()).toMatch(/Linear RGB[\s\S]*Luminance/);
    await page.mouse.click(box.x + box.width * 0.5, box.y + box.height * 0.42);
    await expect.poll(() => page.getByTestId("meter-lux").innerText(), { timeout: 30_000 }).toMatch(/≈ [\d.e+-]+ ± [\d.e+-]+ lux/);
    expect(await page.getByTestId("meter-reading").innerText()).toMatch(/W\/m²/);
    expect(await page.getByTestId("light-meter").innerText()).toMatch(/not a lighting-design calculation[\s\S]*local codes[\s\S]*licensed/);
  });

  it("light balance changes the picture without re-rendering and writes back as one undoable edit", async () => {
    const { page } = a;
    await page.getByRole("tab", { name: "Light balance" }).click();
    const before = await canvasMean(page);
    const spp = await sppDone(page);
    await page.getByLabel("Group key: gain in stops").fill("1");
    await expect.poll(() => canvasMean(page)).toBeGreaterThan(before * 1.1);
    expect(await sppDone(page)).toBe(spp); // same accumulation: nothing restarted
    expect(await page.getByTestId("progress-status").innerText()).toBe("Reached the target");
    await page.getByRole("button", { name: "Write balance into the scene" }).click();
    // +1 stop = ×2 on the key's 80 W.
    await expect.poll(() => editorText(page)).toContain('"power": 160');
    await expect.poll(() => page.getByLabel("Group key: gain in stops").inputValue()).toBe("0");
    await page.getByRole("button", { name: "Undo" }).click();
    await expect.poll(() => editorText(page)).toContain('"power": 80');
    await page.getByRole("button", { name: "Redo" }).click();
    await expect.poll(() => editorText(page)).toContain('"power": 160');
  });

  it("saves a version with a required message; the parent is the version the edit started from", async () => {
    const { page } = a;
    await page.getByRole("button", { name: "Save version…" }).click();
    await page.getByRole("button", { name: "Save", exact: true }).click();
    await expect(page.getByText("the message is required").first().isVisible()).resolves.toBe(true);
    await page.getByLabel("What changed?").fill("Key up a stop via the light balance");
    await page.getByRole("button", { name: "Save", exact: true }).click();
    await expect.poll(() => page.getByTestId("base-version").innerText()).toBe("from version 2");
    expect(await page.getByRole("button", { name: "Undo" }).isDisabled()).toBe(false); // the history survives a save
    const head = await getHead(sceneId);
    expect(head?.number).toBe(2);
    expect(head?.message).toBe("Key up a stop via the light balance");
    const parent = await getVersion(head!.parentId!);
    expect(parent?.number).toBe(1);
    expect((head!.scene as typeof scene).lights[0]!.power).toBe(160);
  });

  it("a conflicting save from a second person is refused, explained, and resolved without losing edits", async () => {
    // Tobias opens version 2 and saves a camera change first.
    await openWorkspace(b.page, path);
    await b.page.locator("[data-testid=camera-form] summary").click();
    await b.page.getByLabel("camera: Vertical view (°)").fill("32");
    await b.page.getByRole("button", { name: "Save version…" }).click();
    await b.page.getByLabel("What changed?").fill("Tighter framing");
    await b.page.getByRole("button", { name: "Save", exact: true }).click();
    await expect.poll(() => b.page.getByTestId("base-version").innerText()).toBe("from version 3");

    // Maren, still on version 2, changes the key and tries to save.
    const { page } = a;
    await page.getByRole("tab", { name: "Scene" }).click();
    await page.getByLabel("Light key: Power (W)").fill("120");
    await page.getByRole("button", { name: "Save version…" }).click();
    await page.getByLabel("What changed?").fill("Key to 120 W");
    await page.getByRole("button", { name: "Save", exact: true }).click();
    const dialog = page.getByTestId("save-conflict");
    await dialog.waitFor({ timeout: 30_000 });
    expect(await dialog.getByRole("heading", { level: 2 }).innerText()).toMatch(/version 3 was saved while you were editing/);
    expect(await page.getByTestId("conflict-theirs").innerText()).toMatch(/fovY 40 → 32/);
    expect(await page.getByTestId("conflict-mine").innerText()).toMatch(/power 160 → 120/);
    expect((await getHead(sceneId))?.number).toBe(3); // refused: nothing written
    expect(await page.getByLabel("Light key: Power (W)").inputValue()).toBe("120"); // nothing typed is lost
    await screenshot(page, "workspace-conflict");

    expect(await dialog.getByRole("button", { name: "Keep my edits on top of version 3" }).isVisible()).toBe(true);
    await dialog.getByRole("button", { name: "Combine: version 3 plus my changes" }).click();
    expect(await page.getByLabel("What changed?").inputValue()).toBe("Key to 120 W");
    await expect.poll(() => page.getByLabel("Light key: Power (W)").inputValue()).toBe("120");
    await expect.poll(() => page.getByLabel("camera: Vertical view (°)").inputValue()).toBe("32");
    await page.getByRole("button", { name: "Save", exact: true }).click();
    await expect.poll(() => page.getByTestId("base-version").innerText()).toBe("from version 4");
    const head = await getHead(sceneId);
    expect(head?.number).toBe(4);
    expect((await getVersion(head!.parentId!))?.number).toBe(3);
    const saved = head!.scene as typeof scene;
    expect(saved.lights.find((l) => l.id === "key")!.power).toBe(120); // mine
    expect(saved.camera.fovY).toBe(32); // theirs, kept
  });

  it("keeps unsaved edits in a local draft across a reload", async () => {
    const { page } = a;
    await page.getByLabel("Light key: Power (W)").fill("150");
    await expect.poll(() => page.getByTestId("unsaved").isVisible()).toBe(true);
    await page.waitForTimeout(600); // the draft is written 300 ms after the last edit
    await openWorkspace(page, path);
    await expect.poll(() => page.getByText("Restored your unsaved edits").isVisible()).toBe(true);
    expect(await page.getByLabel("Light key: Power (W)").inputValue()).toBe("150");
    expect(a.requests.filter((r) => !isLocal(r))).toEqual([]); // Monaco and workers come from our own server
  });

  it("shows invalid edits in place and keeps the last good picture", async () => {
    const { page } = a;
    await page.getByText("Lights (2)").isVisible();
    await page.getByLabel("Light fill: Radius (m)").fill("-0.3");
    await expect.poll(() => page.getByTestId("scene-issues").innerText()).toContain("lights[1].shape.radius");
    await expect.poll(() => page.locator("[data-testid=scene-editor] .squiggly-error").count()).toBeGreaterThan(0);
    expect(await page.locator("[data-testid=preview] canvas").count()).toBe(1);
    await expect(page.getByRole("button", { name: "Save version…" }).isDisabled()).resolves.toBe(true);
    await page.keyboard.press("Control+z");
    await expect.poll(() => page.getByTestId("scene-valid").isVisible()).toBe(true);
  });

  it("the JSON editor completes the scene format's fields and explains them on hover", async () => {
    const { page } = a;
    await page.locator("[data-testid=scene-editor] .view-lines").click();
    await page.keyboard.press("Control+Home");
    const fov = page.locator("[data-testid=scene-editor] .view-lines span", { hasText: /^"fovY"$/ }).first();
    await fov.hover();
    await expect.poll(() => page.locator(".monaco-hover").first().innerText(), { timeout: 15_000 }).toContain("Full vertical field of view");
    // A new member at the top of the scene: the suggestions come from the schema.
    await page.locator("[data-testid=scene-editor] .view-lines").click();
    await page.keyboard.press("Control+Home");
    await page.keyboard.press("End");
    await page.keyboard.press("Enter");
    await page.keyboard.type('"');
    await page.keyboard.press("Control+Space");
    await expect.poll(() => page.locator(".suggest-widget").first().innerText(), { timeout: 15_000 }).toContain("environment");
    await page.keyboard.press("Escape");
    await page.keyboard.press("Control+z");
    await expect.poll(() => page.getByTestId("scene-valid").isVisible()).toBe(true);
  });

  it("opens an older version read-only", async () => {
    const { page } = a;
    const first = (await listVersions(sceneId)).find((v) => v.number === 1)!;
    await openWorkspace(page, `${path}?version=${first.id}`);
    expect(await page.getByTestId("base-version").innerText()).toBe("viewing version 1 (not the latest, read-only)");
    expect(await page.getByLabel("Light key: Power (W)").inputValue()).toBe("40");
    await expect(page.getByLabel("Light key: Power (W)").isDisabled()).resolves.toBe(true);
    expect(await page.getByRole("button", { name: "Save version…" }).count()).toBe(0);
  });

  it("viewers see the scene but cannot save", async () => {
    const c = await newPerson();
    try {
      await signIn(c, viewer);
      await openWorkspace(c.page, path);
      expect(await c.page.getByTestId("read-only").innerText()).toMatch(/cannot|not edit or save/);
      expect(await c.page.getByRole("button", { name: "Save version…" }).count()).toBe(0);
      await expect(c.page.getByLabel("Light key: Power (W)").isDisabled()).resolves.toBe(true);
      // The server refuses a hand-made save too.
      const res = await c.page.evaluate(async (url) => {
        const body = new URLSearchParams({ intent: "save", message: "sneaky", parentVersionId: "00000000-0000-0000-0000-000000000000", sceneText: "{}" });
        const r = await fetch(url, { method: "POST", body });
        return r.status;
      }, `${path}.data`);
      expect(res).toBe(404);
    } finally {
      await c.close();
    }
  });
});
