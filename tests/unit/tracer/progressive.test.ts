import { describe, expect, it } from "vitest";
import { accumulationHash, addUnit, createAccumulation, relativeStdError, type Accumulation } from "../../../tracer/film/accumulate";
import { createInlinePool } from "../../../tracer/workers/pool";
import { passesOf, renderProgressive, type ProgressEvent } from "../../../tracer/workers/render-session";
import { renderUnit } from "../../../tracer/render/unit";
import { deskCorner } from "./pool-scene";
import { renderAll } from "./render-helpers";

const scene = deskCorner(8);
const reference = accumulationHash(renderAll(scene, 0, scene.spp, 16));
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

describe("renderProgressive", () => {
  it("reports progress per committed round with a falling noise estimate", async () => {
    const events: ProgressEvent[] = [];
    const result = await renderProgressive(scene, { pool: createInlinePool(2), passesPerUnit: 2, onProgress: (e) => events.push(e) }).done;
    expect(events.map((e) => e.passesDone)).toEqual([2, 4, 6, 8, 8]);
    expect(events.every((e) => e.spp === 8 && e.samplesPerSecond > 0 && e.elapsedMs > 0)).toBe(true);
    // The noise estimate is the film's own relativeStdError of the committed state; a standard
    // error falls with more samples (common practice), so it must drop from the first round to the last.
    const first = events[0]!.relStdError, last = events.at(-1)!.relStdError;
    expect(Number.isFinite(first)).toBe(true);
    expect(last).toBe(relativeStdError(result.accumulation));
    expect(last).toBeLessThan(first);
    expect(accumulationHash(result.accumulation)).toBe(reference);
  });

  it("pauses between units, holds still while paused, and resumes to the same result", async () => {
    let session: ReturnType<typeof renderProgressive> | undefined;
    let unitsWhilePaused = 0;
    let paused = false;
    session = renderProgressive(scene, {
      pool: createInlinePool(2),
      passesPerUnit: 2,
      onUnit: () => { if (paused) unitsWhilePaused++; },
      onProgress: (e) => {
        if (e.passesDone === 2 && !paused) { session!.pause(); paused = true; }
      },
    });
    await sleep(50);
    expect(session.status).toBe("paused");
    const held = session.passesDone;
    await sleep(100);
    expect(session.passesDone).toBe(held);
    // Only units already in flight when pause() was called may land (2 lanes × 2 workers).
    expect(unitsWhilePaused).toBeLessThanOrEqual(4);
    session.resume();
    const result = await session.done;
    expect(session.status).toBe("finished");
    expect(accumulationHash(result.accumulation)).toBe(reference);
  });

  it("cancels to a pass-aligned state that continues to the from-scratch result", async () => {
    const pool = createInlinePool(2);
    const session = renderProgressive(scene, {
      pool,
      passesPerUnit: 1,
      onProgress: (e) => { if (e.passesDone === 3) session.cancel(); },
    });
    const partial = await session.done;
    expect(partial.cancelled).toBe(true);
    expect(session.status).toBe("cancelled");
    expect(partial.passesDone).toBeGreaterThanOrEqual(3);
    expect(partial.passesDone).toBeLessThan(8);
    expect(passesOf(partial.accumulation)).toBe(partial.passesDone);
    const rest = await renderProgressive(scene, { pool, from: partial.accumulation }).done;
    expect(accumulationHash(rest.accumulation)).toBe(reference);
  });

  it("cancel while paused ends the session without more work", async () => {
    const session = renderProgressive(scene, { pool: createInlinePool(1), passesPerUnit: 1, onProgress: (e) => { if (e.passesDone === 1) session.pause(); } });
    await sleep(30);
    session.cancel();
    const r = await session.done;
    expect(r.cancelled).toBe(true);
    expect(r.passesDone).toBeLessThan(8);
  });

  it("live() includes results of unfinished rounds; snapshot() stays pass-aligned", async () => {
    let live: Accumulation | null = null, snap = 0;
    const session = renderProgressive(scene, {
      pool: createInlinePool(1),
      passesPerUnit: 2,
      onUnit: (r) => {
        if (!live && r.unit.passStart === 2) {
          live = session.live();
          snap = passesOf(session.snapshot());
        }
      },
    });
    await session.done;
    expect(snap).toBe(2);
    const counts = Array.from(live!.counts);
    expect(Math.max(...counts)).toBe(4);
    expect(Math.min(...counts)).toBe(2);
  });

  it("starting from a finished state does no work", async () => {
    const full = renderAll(scene, 0, 8, 16);
    const r = await renderProgressive(scene, { pool: createInlinePool(1), from: full }).done;
    expect(r.passesDone).toBe(8);
    expect(accumulationHash(r.accumulation)).toBe(reference);
  });

  it("rejects a saved state of another size or not at a pass boundary, naming the problem", () => {
    const pool = createInlinePool(1);
    expect(() => renderProgressive(scene, { pool, from: createAccumulation(10, 10, 1) })).toThrow(/from: the saved state is 10×10 with 1 groups, the scene renders 37×23/);
    const ragged = createAccumulation(scene.width, scene.height, scene.groupNames.length);
    addUnit(ragged, renderUnit(scene, { x0: 0, y0: 0, x1: 4, y1: 4, passStart: 0, passEnd: 1 }));
    expect(() => renderProgressive(scene, { pool, from: ragged })).toThrow(/not at a pass boundary/);
    expect(() => renderProgressive(scene, { pool, passesPerUnit: 0 })).toThrow(/passesPerUnit/);
    expect(() => renderProgressive(scene, { pool, tileOrder: () => [0, 0] })).toThrow(/permutation/);
  });
});
