import { describe, expect, it } from "vitest";
import { accumulationHash, deserializeAccumulation, serializeAccumulation } from "../../../tracer/film/accumulate";
import { createNodePool } from "../../../tracer/workers/node-pool";
import { createInlinePool } from "../../../tracer/workers/pool";
import { renderProgressive } from "../../../tracer/workers/render-session";
import { deskCorner } from "./pool-scene";
import { renderAll } from "./render-helpers";

// The claim under test: integer accumulation makes the result independent of how the work is split
// (tiles, pass ranges, workers, order, separate runs). Reference: one sequential in-thread render.
const scene = deskCorner(8);
const reference = accumulationHash(renderAll(scene, 0, scene.spp, 16));

/** Deterministic shuffle (Fisher–Yates with a small LCG; common practice). */
function shuffled(seed: number) {
  return (n: number): number[] => {
    const a = Array.from({ length: n }, (_, i) => i);
    let s = seed >>> 0;
    for (let i = n - 1; i > 0; i--) {
      s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
      const j = s % (i + 1);
      [a[i], a[j]] = [a[j]!, a[i]!];
    }
    return a;
  };
}

describe("accumulationHash is independent of the work split", () => {
  it("the reference render is not trivially empty", () => {
    const acc = renderAll(scene, 0, scene.spp, 16);
    expect(acc.sums.some((v) => v > 0)).toBe(true);
    // A different seed must change the hash, or the comparison below would prove nothing.
    const other = deskCorner(8);
    other.seed = 8;
    expect(accumulationHash(renderAll(other, 0, other.spp, 16))).not.toBe(reference);
  });

  for (const workers of [1, 2, 3, 4]) {
    it(`matches with ${workers} Node worker(s), shuffled tiles, odd tile and pass sizes`, async () => {
      const pool = createNodePool(workers);
      try {
        const session = renderProgressive(scene, { pool, tileSize: 5 + workers * 3, passesPerUnit: workers === 3 ? 3 : 2, tileOrder: shuffled(workers) });
        const result = await session.done;
        expect(result.passesDone).toBe(scene.spp);
        expect(accumulationHash(result.accumulation)).toBe(reference);
      } finally {
        await pool.terminate();
      }
    });
  }

  it("matches when split into separate runs through a saved state: passes [0, 3) then [3, 8)", async () => {
    const pool = createInlinePool(2);
    const first = await renderProgressive(scene, { pool, passes: 3, passesPerUnit: 2, tileSize: 11 }).done;
    expect(first.passesDone).toBe(3);
    const saved = serializeAccumulation(first.accumulation);
    const second = await renderProgressive(scene, { pool, from: deserializeAccumulation(saved), passesPerUnit: 4, tileSize: 7, tileOrder: shuffled(99) }).done;
    expect(second.passesDone).toBe(8);
    expect(accumulationHash(second.accumulation)).toBe(reference);
  });
});
