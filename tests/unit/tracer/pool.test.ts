import { afterAll, describe, expect, it } from "vitest";
import { accumulationHash, addUnit, createAccumulation, type UnitResult } from "../../../tracer/film/accumulate";
import { createNodePool } from "../../../tracer/workers/node-pool";
import { createInlinePool, listSource, shareBuffers, tileUnits, WorkerPool, type PoolWorker } from "../../../tracer/workers/pool";
import { probeUnit } from "../../../tracer/workers/worker-api";
import { deskCorner } from "./pool-scene";

const W = 45, H = 31;
const probeUnits = () => [...tileUnits(W, H, 8, 0, 3), ...tileUnits(W, H, 8, 3, 5)];

function sequentialProbeHash(): string {
  const acc = createAccumulation(W, H, 2);
  for (const u of probeUnits()) addUnit(acc, probeUnit(u, 2));
  return accumulationHash(acc);
}

describe("WorkerPool on Node worker_threads", () => {
  const pool = createNodePool(2);
  afterAll(() => pool.terminate());

  it("runs every unit exactly once on both workers and merges to the sequential result", async () => {
    const acc = createAccumulation(W, H, 2);
    const seen = new Set<string>();
    const perWorker = [0, 0];
    await pool.run(listSource(probeUnits()), {
      kernel: "probe",
      probeGroups: 2,
      onResult: (r: UnitResult, w: number) => {
        seen.add(JSON.stringify(r.unit));
        perWorker[w]!++;
        addUnit(acc, r);
      },
    });
    expect(seen.size).toBe(probeUnits().length);
    expect(perWorker[0]! + perWorker[1]!).toBe(probeUnits().length);
    expect(perWorker[0]).toBeGreaterThan(0);
    expect(perWorker[1]).toBeGreaterThan(0);
    expect(accumulationHash(acc)).toBe(sequentialProbeHash());
  });

  it("reports a worker's error with its message and stops", async () => {
    const scene = deskCorner(2);
    await pool.loadScene(scene);
    const bad = [{ x0: 0, y0: 0, x1: scene.width + 5, y1: 4, passStart: 0, passEnd: 1 }];
    await expect(pool.run(listSource(bad), { onResult: () => {} })).rejects.toThrow(/outside the 37×23 image/);
  });

  it("refuses to render before a scene is loaded", async () => {
    const fresh = createInlinePool(1);
    await expect(fresh.run(listSource(probeUnits()), { onResult: () => {} })).rejects.toThrow(/no scene loaded/);
  });
});

describe("scene loading", () => {
  it("sends the compiled scene to each worker once, however many units run", async () => {
    const inner = createInlinePool(3);
    const loads: number[] = [0, 0, 0];
    const counting: PoolWorker[] = [0, 1, 2].map((i) => {
      const w = (inner as unknown as { workers: PoolWorker[] }).workers[i]!;
      return {
        api: { ...w.api, loadScene: (k, c) => { loads[i]!++; return w.api.loadScene(k, c); } },
        terminate: w.terminate,
      };
    });
    const pool = new WorkerPool(counting);
    const scene = deskCorner(2);
    await pool.ensureScene(scene);
    for (let r = 0; r < 2; r++) {
      await pool.ensureScene(scene);
      await pool.run(listSource(tileUnits(scene.width, scene.height, 8, r, r + 1)), { onResult: () => {} });
    }
    expect(loads).toEqual([1, 1, 1]);
  });

  it("puts typed arrays on shared memory, keeping views of one buffer together", () => {
    const buf = new ArrayBuffer(64);
    const data = { a: new Float32Array(buf, 0, 8), b: new Uint32Array(buf, 32, 8), c: [new Float64Array([1, 2])], n: 3, s: "x" };
    data.a[1] = 2.5;
    const shared = shareBuffers(data);
    expect(shared.a.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(shared.a.buffer).toBe(shared.b.buffer);
    expect(shared.b.byteOffset).toBe(32);
    expect(shared.a[1]).toBe(2.5);
    expect(Array.from(shared.c[0]!)).toEqual([1, 2]);
    expect(shared.n).toBe(3);
    expect(shared.s).toBe("x");
  });
});
