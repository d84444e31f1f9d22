/**
 * Retry with capped exponential backoff for calls to Redis and Kafka. An outage pauses the work
 * that needs the dependency (the caller holds its place) instead of crashing or dropping data.
 */
export interface BackoffHooks {
  /** Called before each wait with the attempt number (1-based) and the error. */
  onRetry: (attempt: number, delayMs: number, err: unknown) => void;
  /** Return true to give up (e.g. the monitor is past its stop deadline). */
  giveUp?: () => boolean;
  /**
   * An error no wait can cure (a wrong password, a denied ACL): return it to end the retries with
   * it at once; null retries as usual.
   */
  fatal?: (err: unknown) => Error | null;
  /** Runs while waiting between attempts (e.g. a consumer heartbeat); its errors propagate. */
  whileWaiting?: () => Promise<void>;
  initialMs?: number;
  maxMs?: number;
}

export class GaveUpError extends Error {
  constructor(readonly lastError: unknown) {
    super(`gave up retrying: ${(lastError as Error)?.message ?? String(lastError)}`);
  }
}

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

export async function withBackoff<T>(fn: () => Promise<T>, hooks: BackoffHooks): Promise<T> {
  const initial = hooks.initialMs ?? 100;
  const max = hooks.maxMs ?? 5_000;
  for (let attempt = 1; ; attempt++) {
    try {
      return await fn();
    } catch (err) {
      const fatal = hooks.fatal?.(err);
      if (fatal) throw fatal;
      if (hooks.giveUp?.()) throw new GaveUpError(err);
      const delay = Math.min(max, initial * 2 ** Math.min(attempt - 1, 10));
      hooks.onRetry(attempt, delay, err);
      await sleep(delay);
      if (hooks.whileWaiting) await hooks.whileWaiting();
      if (hooks.giveUp?.()) throw new GaveUpError(err);
    }
  }
}
