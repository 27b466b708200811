// The small pure pieces of API v1: paths in the product's notation, opaque cursors, the token bucket, and
// chunk planning. No server needed.
import { describe, expect, it } from "vitest";
import { z } from "zod";
import { ApiError, decodeCursor, encodeCursor, formatPath, takeRateToken, TimeIdCursor } from "~/services/api.server";
import { defaultChunkPasses, planChunks } from "~/models/render-job.server";

describe("formatPath", () => {
  it("writes zod paths the way scene issues are written", () => {
    expect(formatPath(["scene", "lights", 2, "shape", "radius"])).toBe("scene.lights[2].shape.radius");
    expect(formatPath([0, "x"])).toBe("[0].x");
    expect(formatPath([])).toBe("");
  });
});

describe("cursors", () => {
  it("round-trip and refuse anything forged", () => {
    const c = encodeCursor(["2026-12-01 23:40:01.123456+00", "5b0c2f7e-2a51-4a9e-8d0b-0c7c3f0e9a11"]);
    expect(decodeCursor(c, TimeIdCursor)).toEqual(["2026-12-01 23:40:01.123456+00", "5b0c2f7e-2a51-4a9e-8d0b-0c7c3f0e9a11"]);
    expect(decodeCursor(undefined, TimeIdCursor)).toBeUndefined();
    for (const forged of ["%%%", encodeCursor(["yesterday", "x"]), encodeCursor([1])]) {
      let err: unknown;
      try {
        decodeCursor(forged, TimeIdCursor);
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(ApiError);
      expect((err as ApiError).path).toBe("cursor");
    }
    expect(decodeCursor(encodeCursor([7]), z.tuple([z.number()]))).toEqual([7]);
  });
});

describe("token bucket (common practice: burst capacity, steady refill)", () => {
  it("allows the burst, refuses the next with Retry-After, refills with time", () => {
    // Defaults: burst 120, 10 per second.
    const key = `unit-${Math.random()}`;
    const t0 = 1_000_000;
    for (let i = 0; i < 120; i++) expect(takeRateToken(key, t0).allowed).toBe(true);
    const refused = takeRateToken(key, t0);
    expect(refused.allowed).toBe(false);
    expect(refused.retryAfterSeconds).toBe(1); // one token refills in 1/10 s; Retry-After is whole seconds, rounded up
    expect(takeRateToken(key, t0 + 100).allowed).toBe(true); // 0.1 s later: one token back
    expect(takeRateToken(key, t0 + 100).allowed).toBe(false);
    expect(takeRateToken(`other-${key}`, t0).allowed).toBe(true); // buckets are per token
  });
});

describe("chunk planning", () => {
  it("covers every pass exactly once", () => {
    expect(planChunks(0, 10, 4)).toEqual([
      { passStart: 0, passEnd: 4 },
      { passStart: 4, passEnd: 8 },
      { passStart: 8, passEnd: 10 },
    ]);
    expect(planChunks(5, 6, 3)).toEqual([{ passStart: 5, passEnd: 6 }]);
    for (const [from, to, n] of [[0, 1000, 7], [64, 1024, 64], [3, 4, 1]]) {
      const chunks = planChunks(from, to, n);
      expect(chunks[0].passStart).toBe(from);
      expect(chunks[chunks.length - 1].passEnd).toBe(to);
      chunks.slice(1).forEach((c, i) => expect(c.passStart).toBe(chunks[i].passEnd));
    }
    expect(defaultChunkPasses(1024)).toBe(128);
    expect(defaultChunkPasses(3)).toBe(1);
    expect(() => planChunks(4, 4, 1)).toThrow(/from < to/);
    expect(() => planChunks(0, 4, 0)).toThrow(/chunkPasses/);
  });
});
