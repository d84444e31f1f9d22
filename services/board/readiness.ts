/**
 * Whether a live board follows its topics yet. `streamfence board` serves its page and /healthz at
 * once, before Kafka and Redis answer; until its feed has started it is not ready (/readyz 503) and
 * the page says what it waits for, in the retry line the terminal shows. The demo needs neither
 * service and has no readiness of its own (always ready).
 */

/** What /readyz, the page snapshot and the event stream report. */
export interface BoardReadinessState {
  ready: boolean;
  /** While not ready: what the board waits for, in words (the last retry line); null when ready. */
  waiting: string | null;
}

/** The board's readiness, changed by the command as its feed starts; listeners hear every change. */
export class BoardReadiness {
  private current: BoardReadinessState;
  private readonly listeners = new Set<(state: BoardReadinessState) => void>();

  constructor(waiting = 'connecting to Kafka and Redis') {
    this.current = { ready: false, waiting };
  }

  get state(): BoardReadinessState {
    return this.current;
  }

  /** Not ready: `line` says what the board waits for (e.g. "redis 127.0.0.1:6399: connection refused; retrying in 5 s"). */
  wait(line: string): void {
    this.set({ ready: false, waiting: line });
  }

  /** The feed follows its topics. */
  markReady(): void {
    this.set({ ready: true, waiting: null });
  }

  /** Calls `listener` on every change; returns the function that stops it. */
  subscribe(listener: (state: BoardReadinessState) => void): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  private set(next: BoardReadinessState): void {
    if (next.ready === this.current.ready && next.waiting === this.current.waiting) return;
    this.current = next;
    for (const listener of this.listeners) listener(next);
  }
}
