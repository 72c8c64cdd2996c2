/** Waiting in tests: poll a condition until it holds (never a fixed sleep that guesses how long something takes). */

export interface WaitOptions {
  /** give up after this long (default 30 s) */
  timeoutMs?: number;
  /** time between checks (default 200 ms) */
  intervalMs?: number;
}

type Falsy = null | undefined | false | 0 | '';

/**
 * Polls `check` until it gives a truthy value and returns that value. A check that throws counts as "not yet" (a
 * service restarting, a row not written); the last error is named when `what` did not happen in time.
 */
export async function waitUntil<T>(what: string, check: () => Promise<T | Falsy> | T | Falsy, options: WaitOptions | number = {}): Promise<T> {
  const { timeoutMs = 30_000, intervalMs = 200 } = typeof options === 'number' ? { timeoutMs: options } : options;
  const until = Date.now() + timeoutMs;
  let lastError: unknown;
  for (;;) {
    try {
      const value = await check();
      if (value) return value;
    } catch (err) {
      lastError = err;
    }
    if (Date.now() > until) {
      const why = lastError ? ` (last error: ${(lastError as Error)?.message ?? String(lastError)})` : '';
      throw new Error(`${what} did not happen within ${timeoutMs / 1000} s${why}`);
    }
    await new Promise((r) => setTimeout(r, intervalMs));
  }
}

/** waitUntil, also telling how long the wait took (for tests that report a recovery time). */
export async function waitTimed<T>(what: string, check: () => Promise<T | Falsy> | T | Falsy, options: WaitOptions | number = {}): Promise<{ value: T; ms: number }> {
  const started = Date.now();
  const value = await waitUntil(what, check, options);
  return { value, ms: Date.now() - started };
}
