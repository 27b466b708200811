/**
 * The render loop's heap allocation per sample (the tracer speed issue asks for none per ray or per sample
 * in the hot loops). Measured, not timed, by tests/support/allocation-probe.ts in a child process started
 * with tsx, the way the workers load the tracer: under vitest the tracer's imports become property reads,
 * which changes what V8 inlines and so what it boxes.
 *
 * Bound: before doubles went to non-inlined calls through typed arrays, the same probe measured 366–791
 * bytes per sample on these scenes; after, 0.05–0.98 (what remains is per unit, and rarely called code
 * that V8 has not optimised yet). One double boxed per sample would be 16 bytes (a heap number), so 4 bytes
 * per sample fails on any per-sample boxing in a quarter of the samples or more.
 */
import { spawnSync } from "node:child_process";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { describe, expect, it } from "vitest";

const repo = fileURLToPath(new URL("../../../", import.meta.url));

// Every example scene: meshes, glass, metal, area/sphere/point lights, sky and map environments, depth of
// field and motion blur between them cover every branch of the path loop. One process renders them one
// after another, as a worker renders one scene after another.
const SCENES = [
  "focus-and-motion-study.json",
  "glass-carafe-sky.json",
  "lightbox-spheres.json",
  "mirror-corridor.json",
  "osier-lamp-study.json",
  "wren-kettle-turntable.json",
];

type Probe = Record<string, { bytesPerSample: number; byFunction: Record<string, number> }>;

describe("render loop allocation", () => {
  it("stays under 4 bytes per sample on every example scene once warm (it was 366–791)", () => {
    const tsx = pathToFileURL(path.join(repo, "node_modules/tsx/dist/loader.mjs")).href;
    const r = spawnSync(process.execPath, ["--import", tsx, path.join(repo, "tests/support/allocation-probe.ts"), ...SCENES], {
      cwd: repo,
      encoding: "utf8",
      timeout: 240_000,
    });
    expect(r.status, r.stderr).toBe(0);
    const probe = JSON.parse(r.stdout) as Probe;
    // the instrument sees allocation: each { v } is at least 16 bytes (common practice for V8's object layout)
    expect(probe["(control: one object per step)"]!.bytesPerSample).toBeGreaterThan(16);
    for (const scene of SCENES) {
      const m = probe[scene]!;
      expect(m.bytesPerSample, `${scene}: bytes by function ${JSON.stringify(m.byFunction)}`).toBeLessThan(4);
    }
  }, 300_000);
});
