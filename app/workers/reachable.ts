/**
 * Retrying a small database step while the database cannot be reached.
 *
 * A render chunk that fails because the database went away must be released and reported after it is
 * back: if the report were attempted while it is still down, pg-boss could not record the failure and
 * the job would sit "active" until its expiry (RENDER_CHUNK_EXPIRE_SECONDS) instead of being retried a
 * second later.
 */

/** Errors that mean "the database is not reachable right now" rather than "this request is wrong". */
export function isConnectionError(err: unknown): boolean {
  const code = typeof err === "object" && err !== null && "code" in err ? String((err as { code: unknown }).code) : "";
  // ECONNREFUSED/ECONNRESET/EPIPE: no server; PostgreSQL 57P01 admin shutdown, 57P02 crash shutdown,
  // 57P03 cannot connect now (PostgreSQL documentation, Appendix A, error codes).
  if (["ECONNREFUSED", "ECONNRESET", "EPIPE", "57P01", "57P02", "57P03"].includes(code)) return true;
  const message = err instanceof Error ? err.message : String(err);
  if (/Connection terminated|connect ECONNREFUSED|terminating connection/i.test(message)) return true;
  const cause = typeof err === "object" && err !== null && "cause" in err ? (err as { cause: unknown }).cause : undefined;
  return cause !== undefined && cause !== err && isConnectionError(cause);
}

export type RetryOptions = {
  /** Give up (rethrow) once this much time has passed. Default 2 minutes. */
  giveUpMs?: number;
  /** Wait between attempts. Default 1 s. */
  delayMs?: number;
  /** Rethrow at once when this says the process is stopping. */
  stopping?: () => boolean;
};

/** Runs `step`; while it fails with a connection error, waits and runs it again. Other errors are rethrown at once. */
export async function retryWhileUnreachable<T>(step: () => Promise<T>, options: RetryOptions = {}): Promise<T> {
  const { giveUpMs = 120_000, delayMs = 1000, stopping = () => false } = options;
  const giveUp = Date.now() + giveUpMs;
  for (;;) {
    try {
      return await step();
    } catch (err) {
      if (!isConnectionError(err) || Date.now() >= giveUp || stopping()) throw err;
      await new Promise((res) => setTimeout(res, delayMs));
    }
  }
}
