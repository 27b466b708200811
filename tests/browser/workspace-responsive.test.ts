// The scene workspace stays responsive while it renders: typing in the JSON editor and dragging a light-
// balance slider during a render run no tracer code on the page's main thread. Checked without any clock
// threshold (a loaded 2-core machine would make one flaky):
// - every script the page's main thread parsed (Chromium's debugger reports them; workers are separate
//   targets) is searched for fingerprints of scene validation, accumulation, the display transform and the
//   per-pixel picture work; the same fingerprints must be found in the workspace's worker bundles, so a
//   missing fingerprint cannot make the check pass by itself;
// - every long task and long animation frame seen during the interaction is listed with the scripts
//   Chromium attributes it to, and none of those scripts may be a worker bundle or hold a fingerprint
//   (their durations are printed, not asserted);
// - functionally: the editor still flags an invalid edit at its path and keeps the picture, and the image
//   answers a gain and an exposure change (drawn from pictures the coordinator worker sends).
// Run against a served build with the test database: TEST_PORT=3111 bin/serve-test & then
// TRACEWELL_URL=http://localhost:3111 bin/with-test-env npx vitest run --config vitest.browser.config.ts tests/browser/workspace-responsive.test.ts
import type { CDPSession, Page } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { BASE_URL, screenshot } from "../support/browser";
import { dropProject, makeUser, openWorkspace, projectWithScene, shownMean, signedIn, sppDone, waitForSpp, type Person } from "../support/workspace-page";

const PASSWORD = "carafe-glass-rim-93";

// Our own scenario: the glass carafe stand-in on a shelf with a window key and a warm lamp, large and long
// enough (4096 spp) to keep the workers busy through the whole interaction.
const scene = {
  format: "tracewell.scene/1",
  name: "Carafe on the shelf, responsiveness test",
  image: { width: 160, height: 120 },
  camera: { position: [0, 1, 4], target: [0, 0.5, 0], fovY: 40 },
  render: { spp: 4096, seed: 5, maxDepth: 4 },
  display: { exposure: 0, toneMap: "none" },
  materials: {
    clay: { type: "diffuse", albedo: [0.7, 0.65, 0.6] },
    shelf: { type: "diffuse", albedo: [0.45, 0.4, 0.35] },
  },
  objects: [
    { id: "carafe", shape: { type: "sphere", center: [0, 0.5, 0], radius: 0.5 }, material: "clay" },
    { id: "shelf", shape: { type: "box", min: [-2, -0.1, -2], max: [2, 0, 2] }, material: "shelf" },
  ],
  lights: [
    { id: "window", type: "area", shape: { type: "rect", center: [1, 2.5, 1], u: [0.6, 0, 0], v: [0, 0, 0.6] }, power: 40, group: "window" },
    { id: "lamp", type: "area", shape: { type: "disk", center: [-2, 1.5, 1], normal: [1, -0.5, -0.5], radius: 0.3 }, radiance: [2.4, 2, 1.6], group: "lamp" },
  ],
};

/** Text that only the named tracer/workspace code puts into a bundle (error messages survive minification; the filmic curve's constants do too). */
const FINGERPRINTS: { label: string; test: (src: string) => boolean }[] = [
  { label: "scene validation", test: (s) => s.includes("duplicate field (it appears more than once") },
  { label: "accumulation", test: (s) => s.includes("addUnit: unit result size") },
  { label: "display transform", test: (s) => /2\.51\*[\w$]+\+\.03/.test(s) },
  { label: "per-pixel picture work", test: (s) => s.includes("combineGroups: no groups") },
];
const WORKER_CHUNK = /workspace-(session|check)\.worker/;

type Script = { id: string; url: string };
type SlowFrame = { kind: string; duration: number; scripts: { url: string; fn: string; ms: number }[] };

/** Which render run the progress strip shows (a restart starts a new run). */
const runId = async (page: Page): Promise<number> => Number(await page.getByTestId("progress-status").getAttribute("data-run-id"));

describe("the workspace stays responsive while it renders", () => {
  let projectId: string;
  let path: string;
  let p: Person;

  beforeAll(async () => {
    const artist = await makeUser("anouk-resp", PASSWORD);
    ({ projectId, path } = await projectWithScene({
      name: "Harrow Lane responsiveness",
      members: [{ account: artist, role: "owner" }],
      sceneName: "Carafe responsiveness test",
      scene,
      message: "Window and lamp",
    }));
    p = await signedIn(artist);
  });

  afterAll(async () => {
    await p?.close();
    await dropProject(projectId);
  });

  it("typing in the editor and dragging a slider during a render run no tracer code on the main thread", async () => {
    const { page } = p;
    await openWorkspace(page, path);
    await waitForSpp(page, 2);

    // The page target's debugger sees the main thread's scripts only (workers are targets of their own).
    const cdp: CDPSession = await page.context().newCDPSession(page);
    const scripts: Script[] = [];
    cdp.on("Debugger.scriptParsed", (e) => scripts.push({ id: e.scriptId, url: e.url }));
    await cdp.send("Debugger.enable");
    await cdp.send("Profiler.enable");
    await cdp.send("Profiler.setSamplingInterval", { interval: 500 });
    await cdp.send("Profiler.start");
    await page.evaluate(() => {
      const w = window as unknown as { slowFrames: SlowFrame[] };
      w.slowFrames = [];
      const watch = (type: string) => {
        try {
          new PerformanceObserver((list) => {
            for (const e of list.getEntries()) {
              const scripts = ((e as PerformanceEntry & { scripts?: { sourceURL: string; sourceFunctionName: string; duration: number }[] }).scripts ?? []).map((s) => ({
                url: s.sourceURL,
                fn: s.sourceFunctionName,
                ms: Math.round(s.duration),
              }));
              w.slowFrames.push({ kind: type, duration: Math.round(e.duration), scripts });
            }
          }).observe({ type, buffered: false });
        } catch {
          /* an entry type this Chromium does not know */
        }
      };
      watch("longtask");
      watch("long-animation-frame");
    });

    // Type into the JSON editor while the render runs: field of view 40 → 4 → 400 (out of range) → nothing (broken JSON) → 35.
    await page.locator("[data-testid=scene-editor] .view-lines span", { hasText: /^"fovY"$/ }).first().click();
    await page.keyboard.press("End");
    await page.keyboard.press("Backspace");
    await page.keyboard.type("00", { delay: 40 });
    await expect.poll(() => page.getByTestId("scene-issues").innerText(), { timeout: 30_000 }).toContain("camera.fovY");
    await expect.poll(() => page.locator("[data-testid=scene-editor] .squiggly-error").count()).toBeGreaterThan(0);
    expect(await page.locator("[data-testid=preview] canvas").count()).toBe(1); // the last good picture stays
    const runBefore = await runId(page);
    for (let i = 0; i < 3; i++) await page.keyboard.press("Backspace");
    await page.keyboard.type("35", { delay: 40 });
    await expect.poll(() => page.getByTestId("scene-valid").isVisible(), { timeout: 30_000 }).toBe(true);
    await expect.poll(() => page.getByLabel("camera: Vertical view (°)").inputValue()).toBe("35");
    // The valid edit restarts the render after its debounce: wait for the new run, not the old one's samples.
    await expect.poll(() => runId(page), { timeout: 60_000 }).toBeGreaterThan(runBefore);
    await waitForSpp(page, 2); // restarted with the new view

    // Drag the window group's gain up by mouse during the render: the picture brightens, nothing restarts.
    await page.getByRole("tab", { name: "Light balance" }).click();
    await page.getByRole("button", { name: "Pause" }).click(); // hold the accumulation so pictures differ only by the look
    await expect.poll(() => page.getByTestId("progress-status").innerText()).toBe("Paused");
    await page.waitForTimeout(800); // units in flight land
    const before = await shownMean(page);
    const held = await sppDone(page);
    const slider = page.getByLabel("Group window: gain in stops");
    const box = (await slider.boundingBox())!;
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    await page.mouse.down();
    for (let i = 1; i <= 24; i++) await page.mouse.move(box.x + box.width / 2 + (box.width * 0.1 * i) / 24, box.y + box.height / 2);
    await page.mouse.up();
    expect(Number(await slider.inputValue())).toBeGreaterThan(0.5); // stops (×2^stops)
    const brighter = await shownMean(page);
    expect(brighter).toBeGreaterThan(before * 1.1);
    expect(await sppDone(page)).toBe(held);

    // Exposure down two stops in the Look panel: a display-only edit, shown from the same buffers.
    await page.getByRole("tab", { name: "Look" }).click();
    await page.getByLabel("Display: Exposure (stops)").fill("-2");
    await expect.poll(() => shownMean(page), { timeout: 30_000 }).toBeLessThan(brighter * 0.8);
    expect(await sppDone(page)).toBe(held);
    expect(await page.getByTestId("histogram").isVisible()).toBe(true);
    await page.getByRole("button", { name: "Resume" }).click();
    await expect.poll(() => sppDone(page), { timeout: 60_000 }).toBeGreaterThan(held);
    await screenshot(page, "workspace-responsive");

    const profile = (await cdp.send("Profiler.stop")).profile;
    const slowFrames = await page.evaluate(() => (window as unknown as { slowFrames: SlowFrame[] }).slowFrames);

    // Every script the main thread parsed, searched for the tracer's fingerprints.
    const pageScripts = scripts.filter((s) => s.url.startsWith(BASE_URL) || s.url.startsWith("http://127.0.0.1") || s.url.startsWith("http://localhost"));
    expect(pageScripts.length).toBeGreaterThan(3);
    const offending: string[] = [];
    for (const s of pageScripts) {
      const { scriptSource } = await cdp.send("Debugger.getScriptSource", { scriptId: s.id });
      for (const f of FINGERPRINTS) if (f.test(scriptSource)) offending.push(`${f.label} in ${s.url}`);
    }
    expect(offending).toEqual([]);
    expect(pageScripts.filter((s) => WORKER_CHUNK.test(s.url))).toEqual([]);

    // The fingerprints are real: the worker bundles the page started do hold every one of them.
    const workerUrls = [...new Set(p.requests.filter((u) => WORKER_CHUNK.test(u)))];
    expect(workerUrls.length).toBeGreaterThanOrEqual(2);
    const workerSources = await Promise.all(workerUrls.map(async (u) => (await fetch(u)).text()));
    for (const f of FINGERPRINTS) expect(workerSources.some((src) => f.test(src)), f.label).toBe(true);

    // The CPU the main thread spent, by script: none of it in a worker bundle.
    const selfMs = new Map<string, number>();
    const dt = profile.timeDeltas ?? [];
    const byId = new Map(profile.nodes.map((n) => [n.id, n]));
    (profile.samples ?? []).forEach((id, i) => {
      const url = byId.get(id)?.callFrame.url || "(idle, GC, browser work)";
      selfMs.set(url, (selfMs.get(url) ?? 0) + (dt[i] ?? 0) / 1000);
    });
    expect([...selfMs.keys()].filter((u) => WORKER_CHUNK.test(u))).toEqual([]);

    // Long tasks and long frames: listed with their scripts; none attributed to tracer code.
    const attributed = slowFrames.flatMap((f) => f.scripts.map((s) => s.url)).filter((u) => u);
    const checked = new Set(pageScripts.map((s) => s.url));
    expect(attributed.filter((u) => WORKER_CHUNK.test(u) || (!checked.has(u) && !u.startsWith("blob:")))).toEqual([]);
    const top = [...selfMs.entries()].sort((a, b) => b[1] - a[1]).slice(0, 6);
    console.info(
      [
        `main thread during the interaction: ${slowFrames.filter((f) => f.kind === "longtask").length} long tasks (${slowFrames
          .filter((f) => f.kind === "longtask")
          .map((f) => f.duration)
          .join(", ")} ms), ${slowFrames.filter((f) => f.kind === "long-animation-frame").length} long animation frames`,
        `scripts attributed to long frames: ${[...new Set(attributed.map((u) => u.replace(/^.*\//, "")))].join(", ") || "none"}`,
        `sampled main-thread time by script: ${top.map(([u, ms]) => `${u.replace(/^.*\//, "")} ${ms.toFixed(0)} ms`).join("; ")}`,
        `main-thread scripts searched: ${pageScripts.length}; worker bundles holding the fingerprints: ${workerUrls.map((u) => u.replace(/^.*\//, "")).join(", ")}`,
      ].join("\n"),
    );
    await cdp.detach();
  });
});
