// A failed chunk's bookkeeping waits out a database outage, but a real error is not retried.
import { describe, expect, it } from "vitest";
import { isConnectionError, retryWhileUnreachable } from "~/workers/reachable";

const refused = () => Object.assign(new Error("connect ECONNREFUSED 127.0.0.1:54329"), { code: "ECONNREFUSED" });

describe("retryWhileUnreachable", () => {
  it("retries while the database refuses connections, then returns the step's result", async () => {
    let calls = 0;
    const result = await retryWhileUnreachable(async () => {
      calls++;
      if (calls < 3) throw refused();
      return "released";
    }, { delayMs: 1 });
    expect(result).toBe("released");
    expect(calls).toBe(3);
  });

  it("rethrows other errors at once", async () => {
    let calls = 0;
    await expect(retryWhileUnreachable(async () => {
      calls++;
      throw Object.assign(new Error('duplicate key value violates unique constraint "renders_pkey"'), { code: "23505" });
    }, { delayMs: 1 })).rejects.toThrow(/duplicate key/);
    expect(calls).toBe(1);
  });

  it("gives up after its time limit and when the worker is stopping", async () => {
    let calls = 0;
    await expect(retryWhileUnreachable(async () => { calls++; throw refused(); }, { delayMs: 1, giveUpMs: 0 })).rejects.toThrow(/ECONNREFUSED/);
    expect(calls).toBe(1);
    await expect(retryWhileUnreachable(async () => { throw refused(); }, { delayMs: 1, stopping: () => true })).rejects.toThrow(/ECONNREFUSED/);
  });

  it("recognises PostgreSQL shutdown codes and wrapped causes (PostgreSQL error codes appendix: class 57)", () => {
    expect(isConnectionError(Object.assign(new Error("terminating connection due to administrator command"), { code: "57P01" }))).toBe(true);
    expect(isConnectionError(new Error("query failed", { cause: refused() }))).toBe(true);
    expect(isConnectionError(Object.assign(new Error("syntax error"), { code: "42601" }))).toBe(false);
  });
});
