import { describe, expect, it } from "vitest";
import { runBench } from "../../bench/tracer.bench";

// Smoke test of the benchmark on tiny inputs: every section runs and reports sane, consistent
// figures. No assertion on speed: the machine is shared and wall-clock time is not reproducible.
describe("npm run bench:tracer --tiny", () => {
  it("runs every section and reports consistent figures", async () => {
    const lines: string[] = [];
    const f = await runBench({ tiny: true, workers: 2, skipBig: true, log: (s) => lines.push(s) });
    expect(f.meshes).toHaveLength(1);
    const bunny = f.meshes[0]!;
    expect(bunny.triangles).toBe(3674); // the Stanford bunny of the `bunny` npm package (README: 3.7k faces)
    for (const set of bunny.raySets) {
      // Same rays, same mesh: both libraries must find the same closest hits.
      expect(set.disagreements).toBe(0);
      expect(set.hits).toBeGreaterThan(0);
      expect(set.oursMraysPerSec).toBeGreaterThan(0);
      expect(set.ratioToThreeSah).toBeCloseTo(set.oursMraysPerSec / set.threeSahMraysPerSec, 10);
      // One round on tiny inputs: its ratio is the median and equals best ÷ best.
      expect(set.medianRatioToThreeCenter).toBeCloseTo(set.ratioToThreeCenter, 10);
    }
    expect(bunny.raySets.map((s) => s.name)).toEqual(["sphere", "bounce"]);
    expect(f.compiledScene!.triangles).toBe(3674);
    expect(f.compiledScene!.bytesPerTriangle).toBeGreaterThan(36); // at least the 9 float32 of a triangle
    expect(f.scenes.length).toBeGreaterThanOrEqual(1);
    expect(f.scenes.every((s) => s.samplesPerSecond > 0)).toBe(true);
    expect(f.scaling.rows.map((r) => r.workers)).toEqual([1, 2]);
    expect(f.scaling.rows[0]!.speedup).toBe(1);
    expect(f.peakRssMB).toBeGreaterThan(0);
    expect(lines.join("\n")).toMatch(/three-mesh-bvh SAH/);
    expect(lines.join("\n")).toMatch(/Worker scaling/);
  }, 300_000);
});
