import { spawnSync } from "node:child_process";
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { main } from "../../../tracer/cli";
import { PNG } from "pngjs";
import { decodePfm } from "../../../tracer/io/pfm";
import { decodeHdr } from "../../../tracer/io/rgbe";
import { TRACER_VERSION } from "../../../tracer/version";

const repo = fileURLToPath(new URL("../../../", import.meta.url));
let dir = "";

/** Runs the real command line in a child process, as `npm run render --` does. */
function render(args: string[]) {
  // tsx's loader by absolute URL: the child runs in a temporary folder where "tsx" does not resolve
  const tsx = pathToFileURL(path.join(repo, "node_modules/tsx/dist/loader.mjs")).href;
  const r = spawnSync(process.execPath, ["--import", tsx, path.join(repo, "tracer/cli.ts"), ...args], {
    cwd: dir,
    encoding: "utf8",
    timeout: 120_000,
  });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** Runs the CLI's main() in this process (cheaper than a child process) capturing stdout and stderr. */
async function renderInProcess(args: string[]) {
  let stdout = "";
  let stderr = "";
  const out = vi.spyOn(process.stdout, "write").mockImplementation((c: string | Uint8Array) => ((stdout += String(c)), true));
  const err = vi.spyOn(process.stderr, "write").mockImplementation((c: string | Uint8Array) => ((stderr += String(c)), true));
  const cwd = process.cwd();
  process.chdir(dir);
  try {
    const code = await main(args);
    return { code, stdout, stderr };
  } finally {
    process.chdir(cwd);
    out.mockRestore();
    err.mockRestore();
  }
}

function summaryOf(stdout: string): Record<string, unknown> {
  const lines = stdout.trim().split("\n");
  return JSON.parse(lines[lines.length - 1]!) as Record<string, unknown>;
}

const TRIANGLE_OBJ = "# a small tile\nv -0.3 0 -0.3\nv 0.3 0 -0.3\nv 0.3 0 0.3\nv -0.3 0 0.3\nf 1 2 3 4\n";

function tinyScene(overrides: Record<string, unknown> = {}) {
  return {
    format: "tracewell.scene/1",
    name: "CLI check: glaze sample on a tile",
    image: { width: 12, height: 8 },
    camera: { position: [0, 0.6, 1.2], target: [0, 0.1, 0], fovY: 45 },
    render: { spp: 2, seed: 4 },
    environment: { type: "uniform", radiance: [0.2, 0.2, 0.2] },
    materials: { glaze: { type: "diffuse", albedo: [0.6, 0.5, 0.4] } },
    objects: [
      { id: "sample", shape: { type: "sphere", center: [0, 0.15, 0], radius: 0.15 }, material: "glaze" },
      { id: "tile", shape: { type: "mesh", asset: "meshes/tile.obj" }, material: "glaze" },
    ],
    lights: [{ id: "bulb", type: "point", position: [0.5, 1, 0.5], intensity: [0.5, 0.5, 0.5], group: "bulb" }],
    ...overrides,
  };
}

beforeAll(() => {
  dir = mkdtempSync(path.join(tmpdir(), "tracewell-cli-"));
  mkdirSync(path.join(dir, "meshes"));
  mkdirSync(path.join(dir, "out"));
  writeFileSync(path.join(dir, "meshes/tile.obj"), TRIANGLE_OBJ);
  writeFileSync(path.join(dir, "meshes/broken.obj"), "v 0 0 0\nv 1 0 0\nf 1 2 9\n");
  writeFileSync(path.join(dir, "tile.json"), JSON.stringify(tinyScene(), null, 2));
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe("command-line renderer", () => {
  it("renders a PFM plus one file per light group, and ends stdout with the JSON summary", () => {
    const r = render(["tile.json", "--out", "out/tile.pfm", "--spp", "3", "--seed", "9", "--workers", "1", "--groups", "--quiet"]);
    expect(r.stderr).toBe("");
    expect(r.code).toBe(0);
    const s = summaryOf(r.stdout);
    expect(s).toMatchObject({ spp: 3, seed: 9, tracerVersion: TRACER_VERSION, width: 12, height: 8, groups: ["bulb", "environment"], workers: 1 });
    expect(typeof s.seconds).toBe("number");
    expect(s.samplesPerSecond).toBeGreaterThan(0);
    expect(s.accumulationHash).toMatch(/\S{8,}/);
    const beauty = decodePfm(readFileSync(path.join(dir, "out/tile.pfm")));
    const bulb = decodePfm(readFileSync(path.join(dir, "out/tile.bulb.pfm")));
    const env = decodePfm(readFileSync(path.join(dir, "out/tile.environment.pfm")));
    expect([beauty.width, beauty.height]).toEqual([12, 8]);
    let total = 0;
    for (let i = 0; i < beauty.data.length; i++) {
      expect(Math.abs(bulb.data[i]! + env.data[i]! - beauty.data[i]!)).toBeLessThanOrEqual(1e-5 * Math.max(1, beauty.data[i]!));
      total += beauty.data[i]!;
    }
    expect(total).toBeGreaterThan(0);
    expect(readdirSync(path.join(dir, "out")).filter((f) => f.includes("partial"))).toEqual([]);
  });

  it("gives the same accumulation hash with 2 workers as with 1, and writes .hdr and .png", () => {
    const one = summaryOf(render(["tile.json", "--out", "out/a.hdr", "--workers", "1", "--quiet"]).stdout);
    const two = render(["tile.json", "--out", "out/b.png", "--workers", "2", "--quiet"]);
    expect(two.code).toBe(0);
    expect(summaryOf(two.stdout).accumulationHash).toBe(one.accumulationHash);
    const hdr = decodeHdr(readFileSync(path.join(dir, "out/a.hdr")));
    expect([hdr.width, hdr.height]).toEqual([12, 8]);
    const png = PNG.sync.read(readFileSync(path.join(dir, "out/b.png")));
    expect([png.width, png.height]).toEqual([12, 8]);
    expect(png.data[3]).toBe(255);
  });

  it("rejects an invalid scene with path-named errors on stderr and writes nothing", () => {
    const bad = tinyScene({ lights: [{ id: "bulb", type: "area", shape: { type: "sphere", center: [0, 1, 0], radius: 0 }, radiance: [1, 1, 1] }] });
    writeFileSync(path.join(dir, "bad.json"), JSON.stringify(bad, null, 2));
    const r = render(["bad.json", "--out", "out/bad.png"]);
    expect(r.code).toBe(1);
    expect(r.stdout).toBe("");
    expect(r.stderr).toMatch(/^bad\.json: lights\[0\]\.shape\.radius: must be > 0 \(line \d+, column \d+\)$/m);
    expect(existsSync(path.join(dir, "out/bad.png"))).toBe(false);
  });

  it("rejects a malformed OBJ asset naming the scene path and the file's line", () => {
    writeFileSync(path.join(dir, "broken.json"), JSON.stringify(tinyScene({ objects: [{ id: "tile", shape: { type: "mesh", asset: "meshes/broken.obj" }, material: "glaze" }] })));
    const r = render(["broken.json", "--out", "out/broken.pfm"]);
    expect(r.code).toBe(1);
    expect(r.stderr.trim()).toBe('broken.json: objects[0].shape.asset: mesh "meshes/broken.obj": line 3: face index 9 out of range (valid: 1..2 or -2..-1)');
    expect(existsSync(path.join(dir, "out/broken.pfm"))).toBe(false);
  });

  it("rejects missing and escaping asset paths", async () => {
    writeFileSync(path.join(dir, "missing.json"), JSON.stringify(tinyScene({ environment: { type: "map", asset: "maps/nowhere.hdr" } })));
    const r = await renderInProcess(["missing.json", "--out", "out/missing.pfm"]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^missing\.json: environment\.asset: environment map "maps\/nowhere\.hdr" was not found/);
    writeFileSync(path.join(dir, "escape.json"), JSON.stringify(tinyScene({ environment: { type: "map", asset: "../etc/passwd" } })));
    const e = await renderInProcess(["escape.json", "--out", "out/escape.pfm"]);
    expect(e.code).toBe(1);
    expect(e.stderr).toMatch(/environment\.asset: must be a relative path without empty, "\." or "\.\." segments/);
  });

  it("rejects bad usage with exit code 2", async () => {
    const noOut = await renderInProcess(["tile.json"]);
    expect(noOut.code).toBe(2);
    expect(noOut.stderr).toMatch(/^error: --out: required/);
    expect((await renderInProcess(["tile.json", "--out", "out/x.jpg"])).stderr).toMatch(/--out: the file name must end in \.pfm, \.hdr or \.png/);
    expect((await renderInProcess(["tile.json", "--out", "out/x.pfm", "--spp", "0"])).stderr).toMatch(/--spp: must be between 1 and 65536, got 0/);
    expect((await renderInProcess(["tile.json", "--out", "out/x.pfm", "--seed", "-3"])).code).toBe(2);
    expect((await renderInProcess(["tile.json", "--out", "out/x.pfm", "--frames", "3"])).stderr).toMatch(/Unknown option '--frames'/);
    expect((await renderInProcess(["tile.json", "--out", "nowhere/x.pfm"])).stderr).toMatch(/--out: folder .*nowhere does not exist/);
    expect(readdirSync(path.join(dir, "out")).filter((f) => f.startsWith("x."))).toEqual([]);
  });

  it("reports an unreadable scene file", async () => {
    const r = await renderInProcess(["no-such-scene.json", "--out", "out/y.pfm"]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe("no-such-scene.json: cannot read the scene file (ENOENT)\n");
  });
});
