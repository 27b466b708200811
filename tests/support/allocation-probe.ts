/**
 * Measures heap allocation per sample of the render loop for the given example scenes, all rendered one
 * after another in this one process (as a worker renders one scene after another), and prints JSON
 * `{ [scene]: { bytesPerSample, byFunction } }`. Run by tests/unit/tracer/allocation.test.ts in a child
 * process started with tsx: under vitest the tracer's modules are rewritten (imports become property
 * reads), which changes what V8 inlines, so only a plain process shows the loop the workers run.
 *
 * V8's sampling heap profiler (the inspector's HeapProfiler.startSampling) records the heap objects the
 * tracer's code creates, including short-lived heap numbers V8 boxes doubles into when they cross a call
 * it did not inline. Each scene is measured in rounds after a warm-up and judged by its best round: V8
 * optimises the loop's functions one by one, concurrently, and unoptimised code boxes every double, while
 * a loop that allocates per sample does so in every round.
 */
import { readFileSync } from "node:fs";
import { Session } from "node:inspector/promises";
import { compileScene } from "../../tracer/compile/compile";
import { validateScene } from "../../tracer/scene/validate";
import { loadSceneAssetsFromDisk } from "../../tracer/io/files.node.js";
import { createRenderScratch, renderUnit } from "../../tracer/render/unit";

type ProfileNode = { callFrame: { functionName: string; url: string }; selfSize: number; children: ProfileNode[] };

const session = new Session();
session.connect();

async function sampled(work: () => void, inFile = "/tracer/"): Promise<{ bytes: number; byFunction: Record<string, number> }> {
  await session.post("HeapProfiler.startSampling", { samplingInterval: 256, includeObjectsCollectedByMinorGC: true, includeObjectsCollectedByMajorGC: true } as never);
  work();
  const { profile } = (await session.post("HeapProfiler.stopSampling")) as unknown as { profile: { head: ProfileNode } };
  let bytes = 0;
  const byFunction: Record<string, number> = {};
  const walk = (n: ProfileNode): void => {
    if (n.selfSize > 0 && n.callFrame.url.includes(inFile)) {
      bytes += n.selfSize;
      const name = n.callFrame.functionName || "(anonymous)";
      byFunction[name] = (byFunction[name] ?? 0) + n.selfSize;
    }
    n.children.forEach(walk);
  };
  walk(profile.head);
  return { bytes, byFunction };
}

const results: Record<string, { bytesPerSample: number; byFunction: Record<string, number> }> = {};

// Control: a loop that allocates one small object per step, measured the same way (the instrument works).
const kept: { v: number }[] = [];
const control = await sampled(() => {
  for (let i = 0; i < 20000; i++) kept.push({ v: i * 0.5 });
}, "allocation-probe");
results["(control: one object per step)"] = { bytesPerSample: control.bytes / kept.length, byFunction: control.byFunction };
for (const file of process.argv.slice(2)) {
  const r = validateScene(readFileSync(`scenes/${file}`, "utf8"));
  if (!r.ok) throw new Error(`${file}: ${JSON.stringify(r.issues)}`);
  // A small image keeps the probe quick; the loop per sample is the same at any size.
  const scene = { ...r.scene, image: { ...r.scene.image, width: 64, height: 48 } };
  const compiled = compileScene(scene, await loadSceneAssetsFromDisk(scene, "scenes"));
  const scratch = createRenderScratch(compiled);
  const passesPerUnit = 8;
  const samplesPerUnit = 32 * 32 * passesPerUnit;
  let pass = 0;
  const renderUnits = (count: number): void => {
    for (let i = 0; i < count; i++, pass += passesPerUnit) {
      renderUnit(compiled, { x0: 16, y0: 8, x1: 48, y1: 40, passStart: pass, passEnd: pass + passesPerUnit }, scratch);
    }
  };
  renderUnits(12);
  const units = 4;
  let best = { bytesPerSample: Infinity, byFunction: {} as Record<string, number> };
  for (let round = 0; round < 8 && best.bytesPerSample >= 1; round++) {
    const { bytes, byFunction } = await sampled(() => renderUnits(units));
    const bytesPerSample = bytes / (units * samplesPerUnit);
    if (bytesPerSample < best.bytesPerSample) best = { bytesPerSample, byFunction };
  }
  results[file] = best;
}
session.disconnect();
process.stdout.write(JSON.stringify(results));
