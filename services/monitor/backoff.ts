/**
 * Retry with capped exponential backoff for calls to Redis and Kafka. An outage pauses the work
 * that needs the dependency (the caller holds its place) instead of crashing or dropping data.
 */
export interface BackoffHooks {
  /** Called before each wait with the attempt number (1-based) and the error. */
  onRetry: (attempt: number, delayMs: number, err: unknown) => void;
  /** Return true to give up (e.g. the monitor is past its stop deadline). */
  giveUp?: () => boolean;
  /** Return true for an error waiting cannot fix: it is thrown at once, without a retry. */
  final?: (err: unknown) => boolean;
  /**
   * An error no wait can cure (a wrong password, a denied ACL): return it to end the retries with
   * it at once; null retries as usual.
   */
  fatal?: (err: unknown) => Error | null;
  /** Runs while waiting between attempts (e.g. a consumer heartbeat); its errors propagate. */
  whileWaiting?: () => Promise<void>;
  initialMs?: number;
  maxMs?: number;
  /** How to wait (default a timer); e.g. a wait that a stop request cuts short. */
  sleep?: (ms: number) => Promise<void>;
}

/** The wait before retry `attempt` (1-based): doubling from `initialMs`, capped at `maxMs`. */
export function backoffDelay(attempt: number, initialMs = 100, maxMs = 5_000): number {
  return Math.min(maxMs, initialMs * 2 ** Math.min(attempt - 1, 10));
}

/** Thrown when `giveUp` ended the retries; the last failure is kept. */
export class GaveUpError extends Error {
  constructor(readonly lastError: unknown) {
    super(`gave up retrying: ${(lastError as Error)?.message ?? String(lastError)}`);
  }
}

const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));

/** Call `fn` until it succeeds, waiting longer after each failure (see BackoffHooks). */
export async function withBackoff<T>(fn: () => Promise<T>, hooks: BackoffHooks): Promise<T> {
  const initial = hooks.initialMs ?? 100;
  const max = hooks.maxMs ?? 5_000;
  for (let attempt = 1; ; attempt++) {
    try {
      return await fn();
    } catch (err) {
      if (hooks.final?.(err)) throw err;
      const fatal = hooks.fatal?.(err);
      if (fatal) throw fatal;
      if (hooks.giveUp?.()) throw new GaveUpError(err);
      const delay = backoffDelay(attempt, initial, max);
      hooks.onRetry(attempt, delay, err);
      await (hooks.sleep ?? sleep)(delay);
      if (hooks.whileWaiting) await hooks.whileWaiting();
      if (hooks.giveUp?.()) throw new GaveUpError(err);
    }
  }
}
