/**
 * Tracer benchmark: `npm run bench:tracer [-- --json out.json] [--tiny] [--workers N] [--skip-big] [--scaling-only]`
 *
 * Prints, in one run: the BVH comparison with three-mesh-bvh (build ms, Mrays/s per ray set and the
 * ratios, on the Stanford bunny and midpoint subdivisions of it), the bytes per triangle of a compiled
 * ~1M-triangle scene, path-tracing samples per second for each example scene, the worker scaling table
 * and peak memory. Wall-clock figures; the machine may be shared, so every comparison is run
 * interleaved in the same process and printed as a ratio. `--tiny` runs every section on small inputs
 * (used by a vitest smoke test).
 */
import { readdirSync, readFileSync, writeFileSync } from "node:fs";
import { availableParallelism, loadavg } from "node:os";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { parseArgs } from "node:util";
import { compileScene } from "../../tracer/compile/compile";
import type { CompiledScene } from "../../tracer/compile/types";
import { createRenderScratch, renderUnit } from "../../tracer/render/unit";
import { validateScene, formatIssue } from "../../tracer/scene/validate";
import { SceneSchema } from "../../tracer/scene/schema";
import { loadSceneAssetsFromDisk } from "../../tracer/io/files.node.js";
import { createNodePool } from "../../tracer/workers/node-pool";
import { renderProgressive } from "../../tracer/workers/render-session";
import { compareMesh, cpuMs, type MeshFigures } from "./bvh-compare";
import { loadBunny, subdivideTo, type BenchMesh } from "./meshes";

const here = path.dirname(fileURLToPath(import.meta.url));
const scenesDir = path.resolve(here, "../../scenes");

export type BenchOptions = { tiny: boolean; workers: number; skipBig: boolean; scalingOnly?: boolean; log: (s: string) => void };

export type SceneFigures = { scene: string; width: number; height: number; passes: number; samplesPerSecond: number; primitives: number };
export type ScalingRow = { workers: number; samplesPerSecond: number; speedup: number; efficiency: number; coresUsed: number; samplesPerCpuSecond: number; workEfficiency: number };

export type BenchFigures = {
  node: string;
  cores: number;
  loadAverage: number;
  tiny: boolean;
  meshes: MeshFigures[];
  compiledScene: { triangles: number; bytes: number; bytesPerTriangle: number; compileMs: number } | null;
  scenes: SceneFigures[];
  scaling: { scene: string; passes: number; rows: ScalingRow[] };
  peakRssMB: number;
};

/** Wavefront OBJ text for a mesh (1-based indices). */
function toObj(mesh: BenchMesh): Uint8Array {
  const parts: string[] = [`# ${mesh.name}, generated for the tracer benchmark\n`];
  const p = mesh.positions;
  for (let i = 0; i < p.length; i += 3) parts.push(`v ${p[i]} ${p[i + 1]} ${p[i + 2]}\n`);
  const x = mesh.indices;
  for (let i = 0; i < x.length; i += 3) parts.push(`f ${x[i]! + 1} ${x[i + 1]! + 1} ${x[i + 2]! + 1}\n`);
  return new TextEncoder().encode(parts.join(""));
}

/** Bytes of every distinct buffer reachable from a compiled scene. */
function compiledBytes(c: CompiledScene): number {
  const seen = new Set<ArrayBufferLike>();
  let total = 0;
  const walk = (v: unknown): void => {
    if (ArrayBuffer.isView(v)) {
      if (!seen.has(v.buffer)) { seen.add(v.buffer); total += v.buffer.byteLength; }
    } else if (Array.isArray(v)) v.forEach(walk);
    else if (v !== null && typeof v === "object") Object.values(v).forEach(walk);
  };
  walk(c);
  return total;
}

function meshScene(mesh: BenchMesh): { compiled: CompiledScene; ms: number } {
  const scene = SceneSchema.parse({
    format: "tracewell.scene/1",
    name: "Benchmark mesh",
    image: { width: 64, height: 64 },
    camera: { position: [0, 0.1, 0.35], target: [0, 0.1, 0], fovY: 40 },
    render: { spp: 1 },
    materials: { clay: { type: "diffuse", albedo: [0.7, 0.7, 0.7] } },
    objects: [{ id: "bunny", shape: { type: "mesh", asset: "meshes/bench.obj" }, material: "clay" }],
  });
  const assets = new Map([["meshes/bench.obj", toObj(mesh)]]);
  let compiled: CompiledScene | null = null;
  const ms = cpuMs(() => { compiled = compileScene(scene, assets); });
  return { compiled: compiled!, ms };
}

async function loadExampleScene(file: string, tiny: boolean): Promise<CompiledScene> {
  const text = readFileSync(path.join(scenesDir, file), "utf8");
  const result = validateScene(text);
  if (!result.ok) throw new Error(`${file}: ${result.issues.map(formatIssue).join("; ")}`);
  let scene = result.scene;
  if (tiny) scene = { ...scene, image: { ...scene.image, width: 24, height: 16 } };
  const assets = await loadSceneAssetsFromDisk(scene, scenesDir);
  return compileScene(scene, assets);
}

/** Single-threaded samples per CPU second: whole image, `passes` passes, in 32-pixel tiles. */
function sceneSpeed(c: CompiledScene, passes: number): number {
  const scratch = createRenderScratch(c);
  const ms = cpuMs(() => {
    for (let y = 0; y < c.height; y += 32) {
      for (let x = 0; x < c.width; x += 32) {
        renderUnit(c, { x0: x, y0: y, x1: Math.min(c.width, x + 32), y1: Math.min(c.height, y + 32), passStart: 0, passEnd: passes }, scratch);
      }
    }
  });
  return (c.width * c.height * passes) / (ms / 1000);
}

export async function runBench(opts: BenchOptions): Promise<BenchFigures> {
  const { log, tiny } = opts;
  const load = loadavg()[0]!;
  log(`Tracer benchmark — Node ${process.version}, ${availableParallelism()} cores, 1-min load average ${load.toFixed(1)}${tiny ? " (tiny inputs)" : ""}`);

  // 1. BVH against three-mesh-bvh.
  log("\nBVH and closest-hit rays vs three-mesh-bvh (single thread, same mesh and rays; CPU time, best of interleaved runs)");
  const bunny = loadBunny();
  const meshes: BenchMesh[] = opts.scalingOnly ? [] : tiny ? [bunny] : [bunny, subdivideTo(bunny, 50_000), ...(opts.skipBig ? [] : [subdivideTo(bunny, 900_000)])];
  const meshFigures: MeshFigures[] = [];
  for (const m of meshes) {
    const big = m.indices.length / 3 > 500_000;
    meshFigures.push(compareMesh(m, {
      // The same 100k rays on every mesh (the 941k one measured 40k before; its lists thin out
      // sooner with fewer rays per direction octant, see tracer/README.md).
      rays: tiny ? 2000 : 100_000,
      // Small meshes build in milliseconds, where the first builds of a process still pay for background
      // compilation and GC: many interleaved runs (measured: 17 ms with 3 runs, 4 ms with 30 on the bunny).
      buildRuns: tiny ? 1 : big ? 3 : m.indices.length / 3 < 10_000 ? 40 : 10,
      warmRuns: tiny ? 1 : big ? 1 : 10,
      minMs: tiny ? 0 : 400,
      rounds: tiny ? 1 : 5,
      log,
    }));
  }

  // 2. Memory of a compiled scene holding the biggest mesh.
  let compiledScene: BenchFigures["compiledScene"] = null;
  if (meshes.length > 0) {
    const m = meshes.at(-1)!;
    const { compiled, ms } = meshScene(m);
    const bytes = compiledBytes(compiled);
    const triangles = m.indices.length / 3;
    compiledScene = { triangles, bytes, bytesPerTriangle: bytes / triangles, compileMs: ms };
    log(`\nCompiled scene with ${triangles} triangles: ${(bytes / 1048576).toFixed(1)} MB = ${(bytes / triangles).toFixed(1)} bytes/triangle (compile incl. OBJ parse and BVH: ${ms.toFixed(0)} ms)`);
  }

  // 3. Path tracing per example scene, single thread.
  log("\nPath tracing, single thread (whole image, samples = pixels × passes, per CPU second)");
  const sceneFigures: SceneFigures[] = [];
  const files = readdirSync(scenesDir).filter((f) => f.endsWith(".json") && (!opts.scalingOnly || f === "lightbox-spheres.json")).sort();
  const loaded = new Map<string, CompiledScene>();
  for (const f of files) {
    let c: CompiledScene;
    try {
      c = await loadExampleScene(f, tiny);
    } catch (e) {
      log(`  ${f}: skipped (${e instanceof Error ? e.message : String(e)})`);
      continue;
    }
    loaded.set(f, c);
    if (opts.scalingOnly) continue;
    const passes = tiny ? 1 : 2;
    sceneSpeed(c, 1); // warm-up pass
    const sps = sceneSpeed(c, passes);
    sceneFigures.push({ scene: f, width: c.width, height: c.height, passes, samplesPerSecond: sps, primitives: c.primCount });
    log(`  ${f.padEnd(34)} ${`${c.width}×${c.height}`.padStart(9)}  ${String(c.primCount).padStart(7)} prims  ${(sps / 1000).toFixed(1).padStart(7)} k samples/s`);
  }

  // 4. Worker scaling on one scene through the progressive session (the path the app and CLI use).
  const scaleFile = loaded.has("lightbox-spheres.json") ? "lightbox-spheres.json" : [...loaded.keys()][0];
  const rows: ScalingRow[] = [];
  // 16 passes in units of 4 (renderProgressive's default, as the app and the CLI use it): 540 units
  // of about 17 ms each on this scene, enough for the dynamic scheduler to balance 1..N workers.
  const scalePasses = tiny ? 2 : 16;
  const scaleUnitPasses = tiny ? 1 : 4;
  if (scaleFile) {
    const c = loaded.get(scaleFile)!;
    log(`\nWorker scaling (${scaleFile}, ${c.width}×${c.height}, ${scalePasses} passes, 32-px tiles, ${scaleUnitPasses} passes per unit; Node worker_threads; wall clock, load average now ${loadavg()[0]!.toFixed(1)})`);
    for (let k = 1; k <= opts.workers; k++) {
      const pool = createNodePool(k);
      try {
        await pool.loadScene(c);
        // Warm every worker's JIT on the same scene before timing.
        await renderProgressive(c, { pool, passes: 1, passesPerUnit: 1, tileSize: 32 }).done;
        const c0 = process.cpuUsage();
        const t0 = performance.now();
        const r = await renderProgressive(c, { pool, passes: scalePasses, passesPerUnit: scaleUnitPasses, tileSize: 32 }).done;
        const cpu = process.cpuUsage(c0);
        // Cores' worth of CPU the process actually got: on a busy machine the scheduler may give a
        // whole process one share however many threads it runs, which caps any speedup.
        const coresUsed = (cpu.user + cpu.system) / 1000 / (performance.now() - t0);
        const base = rows[0]?.samplesPerSecond ?? r.samplesPerSecond;
        // Samples per CPU-second of the whole process: if it holds steady as workers are added, the
        // pool adds no overhead and wall-clock speedup is limited only by the CPU the machine grants.
        const samplesPerCpuSecond = r.samplesPerSecond / Math.max(1e-9, coresUsed);
        const baseCpu = rows[0]?.samplesPerCpuSecond ?? samplesPerCpuSecond;
        const row = { workers: k, samplesPerSecond: r.samplesPerSecond, speedup: r.samplesPerSecond / base, efficiency: r.samplesPerSecond / base / k, coresUsed, samplesPerCpuSecond, workEfficiency: samplesPerCpuSecond / baseCpu };
        rows.push(row);
        log(`  ${String(k).padStart(2)} worker${k > 1 ? "s" : " "}  ${(row.samplesPerSecond / 1000).toFixed(1).padStart(7)} k samples/s  speedup ×${row.speedup.toFixed(2)}  efficiency ${(row.efficiency * 100).toFixed(0)}%  CPU obtained ${coresUsed.toFixed(2)} cores  ${(samplesPerCpuSecond / 1000).toFixed(1)} k samples/CPU-s (×${row.workEfficiency.toFixed(2)} of 1 worker)`);
      } finally {
        await pool.terminate();
      }
    }
  }

  const peakRssMB = process.resourceUsage().maxRSS / 1024;
  log(`\nPeak RSS of this process: ${peakRssMB.toFixed(0)} MB`);
  return {
    node: process.version,
    cores: availableParallelism(),
    loadAverage: load,
    tiny,
    meshes: meshFigures,
    compiledScene,
    scenes: sceneFigures,
    scaling: { scene: scaleFile ?? "", passes: scalePasses, rows },
    peakRssMB,
  };
}

async function main(): Promise<void> {
  const { values } = parseArgs({
    options: {
      json: { type: "string" },
      tiny: { type: "boolean", default: false },
      workers: { type: "string" },
      "skip-big": { type: "boolean", default: false },
      "scaling-only": { type: "boolean", default: false },
    },
  });
  const workers = values.workers ? Number(values.workers) : Math.max(2, availableParallelism());
  if (!(Number.isInteger(workers) && workers >= 1)) {
    console.error(`--workers must be a whole number ≥ 1 (got ${values.workers})`);
    process.exit(2);
  }
  const figures = await runBench({ tiny: values.tiny, workers, skipBig: values["skip-big"], scalingOnly: values["scaling-only"], log: (s) => console.log(s) });
  if (values.json) {
    writeFileSync(values.json, JSON.stringify(figures, null, 2) + "\n");
    console.log(`\nFigures written to ${values.json}`);
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(path.resolve(process.argv[1])).href) {
  main().catch((e: unknown) => {
    console.error(e instanceof Error ? e.stack ?? e.message : String(e));
    process.exit(1);
  });
}
