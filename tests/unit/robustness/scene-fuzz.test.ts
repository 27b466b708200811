/**
 * Bad-input fuzz of the scene pipeline: thousands of mutated scenes (fixed seeds, replayable by case
 * number) go through validateScene, and the accepted ones through compileScene and a one-pass render of
 * a tiny image. Never a throw, never a hang, always a path-named message or a render.
 *
 * The cases run in a worker thread; the worker reports before each case, and a watchdog ends it if one
 * case does not finish, naming that case, so a hang fails this test instead of stalling the suite. The
 * watchdog's bound is a hang detector (hundreds of times a normal case), not a speed assertion.
 *
 * Replay one case: FUZZ_FROM=1234 FUZZ_CASES=1 npx vitest run tests/unit/robustness/scene-fuzz.test.ts
 */
import { Worker } from "node:worker_threads";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { formatIssue, validateScene } from "../../../tracer/index";
import { issueProblem, runCase, type Outcome } from "./fuzz/run-case";
import { handMadeScenes, type Json } from "./fuzz/scene-mutator";
import type { FuzzMessage, FuzzRange } from "./fuzz/fuzz-worker";

const ROOT = fileURLToPath(new URL("../../../", import.meta.url));
const CASES = Number(process.env.FUZZ_CASES ?? 2000);
const FROM = Number(process.env.FUZZ_FROM ?? 0);
/** No progress for this long means a hang (a normal case takes milliseconds, the slowest seen ~1 s). */
const HANG_MS = 120_000;

type Report = {
  counts: Record<Outcome["kind"], number>;
  failures: string[];
  bases: string[];
  hungAt: number | null;
  elapsedMs: number;
  slowest: { index: number; ms: number };
};

function startTsWorker(file: URL, data: FuzzRange): Worker {
  // Node 20 cannot start a worker on a .ts file; boot through tsx's API (as tracer/workers/node-pool.ts does).
  const tsxApi = import.meta.resolve("tsx/esm/api");
  const boot = `const { tsImport } = await import(${JSON.stringify(tsxApi)}); await tsImport(${JSON.stringify(file.href)}, ${JSON.stringify(file.href)});`;
  return new Worker(new URL("data:text/javascript," + encodeURIComponent(boot)), { workerData: data, resourceLimits: { maxOldGenerationSizeMb: 2048 } });
}

function runFuzz(from: number, to: number): Promise<Report> {
  return new Promise((resolve, reject) => {
    const worker = startTsWorker(new URL("./fuzz/fuzz-worker.ts", import.meta.url), { root: ROOT, from, to });
    const report: Report = {
      counts: { rejected: 0, "compile-error": 0, rendered: 0, failure: 0 },
      failures: [],
      bases: [],
      hungAt: null,
      elapsedMs: 0,
      slowest: { index: -1, ms: 0 },
    };
    const t0 = performance.now();
    let current = -1;
    let caseStart = t0;
    let watchdog: NodeJS.Timeout;
    const arm = () => {
      clearTimeout(watchdog);
      watchdog = setTimeout(() => {
        report.hungAt = current;
        void worker.terminate();
      }, HANG_MS);
    };
    arm();
    worker.on("message", (m: FuzzMessage) => {
      arm();
      if (m.type === "start") {
        current = m.index;
        caseStart = performance.now();
      } else if (m.type === "done") {
        const ms = performance.now() - caseStart;
        if (ms > report.slowest.ms) report.slowest = { index: m.index, ms };
        report.counts[m.outcome.kind]++;
        if (m.outcome.kind === "failure") {
          report.failures.push(`case ${m.index} (${m.base}, ${m.mode}; ${m.mutations.join("; ")}) → ${m.outcome.stage}: ${m.outcome.message}`);
        }
      } else {
        report.bases = m.bases;
      }
    });
    worker.on("error", (e) => {
      clearTimeout(watchdog);
      reject(new Error(`fuzz worker crashed during case ${current}: ${e.message}`));
    });
    worker.on("exit", () => {
      clearTimeout(watchdog);
      report.elapsedMs = performance.now() - t0;
      resolve(report);
    });
  });
}

describe("scene fuzz: validate → compile → tiny render", () => {
  it(`${CASES} mutated scenes: never a throw or a hang, always a path-named message or a render`, async () => {
    const report = await runFuzz(FROM, FROM + CASES);
    const total = Object.values(report.counts).reduce((a, b) => a + b, 0);
    // Figures for the test report (printed, not asserted: the machine is shared and noisy).
    console.log(
      `scene fuzz: ${total} cases from ${report.bases.length} base scenes in ${(report.elapsedMs / 1000).toFixed(1)} s; ` +
        `rejected ${report.counts.rejected}, compile errors ${report.counts["compile-error"]}, rendered ${report.counts.rendered}, ` +
        `failures ${report.counts.failure}; slowest case ${report.slowest.index} (${Math.round(report.slowest.ms)} ms)`,
    );
    expect(report.hungAt, `case ${report.hungAt} did not finish within ${HANG_MS / 1000} s`).toBeNull();
    expect(report.failures.slice(0, 20)).toEqual([]);
    expect(total).toBe(CASES);
    // The repository's example scenes are among the bases once they exist (plus the 3 hand-made ones).
    expect(report.bases.filter((b) => b.startsWith("scenes/")).length).toBeGreaterThanOrEqual(1);
    if (CASES >= 1000) {
      // Both paths are exercised: the mutations are not all fatal, nor all harmless.
      expect(report.counts.rendered).toBeGreaterThan(CASES * 0.02);
      expect(report.counts.rejected).toBeGreaterThan(CASES * 0.5);
    }
  }, 30 * 60_000);
});

describe("the fuzz oracle itself", () => {
  it("flags issues that name no place, point outside the text or have no message", () => {
    expect(issueProblem([], null)).toMatch(/no issues/);
    expect(issueProblem([{ path: "", message: "bad" }], null, {})).toMatch(/neither a path nor a line/);
    expect(issueProblem([{ path: "", message: "must be an object, got null" }], null, null)).toBeNull();
    expect(issueProblem([{ path: "", message: "bad", line: 3, column: 1 }], "{\n}")).toMatch(/outside the text/);
    expect(issueProblem([{ path: "lights[0]", message: " " }], null)).toMatch(/empty message/);
    expect(issueProblem([{ path: "lights[0].shape.radius", message: "must be > 0" }], null)).toBeNull();
    expect(issueProblem([{ path: "", message: "invalid JSON", line: 2, column: 1 }], "{\n}")).toBeNull();
  });
});

/** Edits of plain JSON by dotted path ("objects.0.shape.radius"); undefined deletes the field. */
type Edit = [path: string, value: Json | undefined];

function applyEdits(scene: Record<string, Json>, edits: readonly Edit[]): void {
  for (const [path, value] of edits) {
    const keys = path.split(".");
    let node = scene as Record<string, Json>;
    for (const k of keys.slice(0, -1)) node = node[k] as Record<string, Json>;
    const last = keys[keys.length - 1]!;
    if (value === undefined) delete node[last];
    else node[last] = value;
  }
}

function kettle(): Record<string, Json> {
  return JSON.parse(JSON.stringify(handMadeScenes()[0]!.scene)) as Record<string, Json>;
}

const ALL_GLASS: Json = { glaze: { type: "glass", ior: 4 }, steel: { type: "glass", ior: 4 }, carafe: { type: "glass", ior: 4 }, oak: { type: "glass", ior: 4 } };
const mirror = { type: "metal", reflectance: [1, 1, 1] };
const ALL_MIRROR: Json = { glaze: mirror, steel: mirror, carafe: mirror, oak: mirror };

describe("extreme but valid scenes compile and render to finite sums", () => {
  const base = handMadeScenes()[0]!;
  const assets = new Map(base.assets);
  // every vertex the same point: zero-area triangles (common practice: degenerate input a mesh exporter can write)
  assets.set("meshes/flat.obj", new TextEncoder().encode("v 0 0 0\nv 0 0 0\nv 0 0 0\nf 1 2 3\nf 1 2 3\n"));
  const cases: [string, Edit[]][] = [
    ["sphere radius 1e300", [["objects.0.shape.radius", 1e300]]],
    ["sphere 1e300 away", [["objects.0.shape.center", [1e300, 0, 0]]]],
    ["sphere radius 1e-300", [["objects.0.shape.radius", 1e-300]]],
    ["camera 1e300 away", [["camera.position", [0, 0, 1e300]], ["camera.focusDistance", 1e300]]],
    ["camera 1e-300 from its target", [["camera.position", [0, 0.5, 1e-300]], ["camera.target", [0, 0.5, 0]], ["camera.focusDistance", undefined]]],
    ["fovY 179", [["camera.fovY", 179]]],
    ["aperture 1e300", [["camera.aperture", 1e300]]],
    ["focusDistance 1e-320 (subnormal)", [["camera.focusDistance", 1e-320]]],
    ["rect light 1e200 wide", [["lights.0.shape.u", [1e200, 0, 0]], ["lights.0.shape.v", [0, 0, 1e200]]]],
    ["disk light normal 1e-320", [["lights.1.shape.normal", [1e-320, 0, 0]]]],
    ["disk light normal 1e308", [["lights.1.shape.normal", [1e308, 1e308, 0]]]],
    ["light power 1e308", [["lights.1.power", 1e308]]],
    ["light radiance 1e308", [["lights.0.radiance", [1e308, 1e308, 1e308]]]],
    ["sphere light radius 1e-200 with power", [["lights.2.shape.radius", 1e-200]]],
    ["box ±1e308", [["objects.3.shape.min", [-1e308, -1e308, -1e308]], ["objects.3.shape.max", [1e308, 1e308, 1e308]]]],
    ["box 1e-300 wide", [["objects.3.shape.min", [0, 0, 0]], ["objects.3.shape.max", [1e-300, 1e-300, 1e-300]]]],
    ["velocity 1e308", [["objects.3.motion.velocity", [1e308, 0, 0]]]],
    ["shutter ±1e308", [["camera.shutter", [-1e308, 1e308]]]],
    ["mesh scale 1e300", [["objects.4.shape.scale", 1e300]]],
    ["mesh scale 1e-300", [["objects.4.shape.scale", 1e-300]]],
    ["mesh translate 1e308", [["objects.4.shape.translate", [1e308, 0, 0]]]],
    ["mesh rotate 1e308°", [["objects.4.shape.rotate", [1e308, 1e308, 1e308]]]],
    ["degenerate mesh", [["objects.4.shape.asset", "meshes/flat.obj"]]],
    ["clamp 1e-320", [["render.clamp", 1e-320]]],
    ["clamp 1e308", [["render.clamp", 1e308]]],
    ["sky 1e308", [["environment", { type: "sky", zenith: [1e308, 1e308, 1e308], horizon: [1e308, 0, 0], ground: [1e308, 1, 1] }]]],
    ["uniform environment 0", [["environment", { type: "uniform", radiance: [0, 0, 0] }]]],
    ["map scale 1e308, rotation 1e308°", [["environment", { type: "map", asset: "maps/lightbox.hdr", scale: 1e308, rotationY: 1e308 }]]],
    ["map scale 0", [["environment", { type: "map", asset: "maps/lightbox.hdr", scale: 0 }]]],
    ["no lights, no environment", [["lights", []], ["environment", undefined]]],
    ["no objects", [["objects", []]]],
    ["seed 2^32 − 1", [["render.seed", 0xffffffff]]],
    ["depth 64, all glass ior 4", [["render.maxDepth", 64], ["materials", ALL_GLASS]]],
    ["depth 64, all perfect mirrors", [["render.maxDepth", 64], ["materials", ALL_MIRROR]]],
    ["glass absorption 1e308", [["materials.carafe.absorption", [1e308, 1e308, 1e308]]]],
    ["camera looking almost straight down", [["camera.position", [0, 10, 0.0001]], ["camera.target", [0, 0, 0]], ["camera.focusDistance", undefined]]],
    ["point light inside an object", [["lights.3.position", [0, 0.5, 0]]]],
    ["point light intensity 1e308", [["lights.3.intensity", [1e308, 1e308, 1e308]]]],
  ];
  it.each(cases)("%s", (_name, edits) => {
    const scene = kettle();
    applyEdits(scene, edits);
    expect(validateScene(scene).ok, "the edit keeps the scene valid").toBe(true);
    const outcome = runCase({ index: -1, base: "extreme", mutations: [], mode: "value", input: scene, assets });
    expect(outcome.kind === "failure" ? outcome.message : "ok").toBe("ok");
    expect(["rendered", "compile-error"]).toContain(outcome.kind);
  });
});

describe("hand-picked hostile inputs to validateScene", () => {
  const text = JSON.stringify(kettle(), null, 2);
  const inputs: [string, unknown][] = [
    ["a number", 42],
    ["null", null],
    ["an array", []],
    ["empty text", ""],
    ["whitespace text", " \n\t "],
    ["text 'null'", "null"],
    ["text of a number", "1e999"],
    ["a byte-order mark alone", "\ufeff"],
    ["text cut in a string", text.slice(0, text.indexOf('"Wren') + 3)],
    ["text with a NUL byte", text.replace('"kettle"', '"ket\u0000tle"')],
    ["text with NaN", text.replace('"radius": 0.5', '"radius": NaN')],
    ["text with a lone surrogate escape", text.replace('"kettle"', '"\\ud800"')],
    ["100 000 nested arrays", "[".repeat(100_000) + "]".repeat(100_000)],
    ["10 001 objects", { ...kettle(), objects: Array.from({ length: 10_001 }, (_, i) => ({ id: `o${i}`, shape: { type: "sphere", center: [0, 0, 0], radius: 1 }, material: "glaze" })) }],
    ["1 001 lights", { ...kettle(), lights: Array.from({ length: 1_001 }, (_, i) => ({ id: `l${i}`, type: "point", position: [0, 2, 0], intensity: [1, 1, 1] })) }],
    ["17 light groups", { ...kettle(), lights: Array.from({ length: 17 }, (_, i) => ({ id: `l${i}`, type: "point", position: [0, 2, 0], intensity: [1, 1, 1], group: `g${i}` })) }],
    ["8192 × 8192 image", { ...kettle(), image: { width: 8192, height: 8192 } }],
    ["prototype-named material", JSON.parse(text.replace('"glaze": {', '"__proto__": {'))],
    ["object with a null prototype", Object.assign(Object.create(null) as object, kettle())],
  ];
  it.each(inputs)("%s → a path-named rejection or a valid scene, never a throw", (_name, input) => {
    const r = validateScene(input);
    if (r.ok) return;
    const problem = issueProblem(r.issues, typeof input === "string" ? input : null, input);
    expect(problem, r.issues.map(formatIssue).join("\n")).toBeNull();
  });
});
