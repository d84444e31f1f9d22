/**
 * A follower that outlives its failures, for the long-running viewers (`board`, following
 * `alerts`): once started, a follower that fails (an ACL taken away, a topic deleted, a consumer the
 * Kafka client gave up on) is replaced after a growing wait, and the replacement goes on from the
 * offsets the failed one had reached, so nothing is read twice and nothing is skipped. Each attempt
 * is reported to the caller, which logs its one line (and counts it); the caller also hears when the
 * viewer follows again, to flip its readiness back.
 */
import { StreamfenceError } from '../../libs/errors/index.js';
import { kafkaOutage, type Outage } from '../connect/outage.js';
import type { KafkaSettings } from '../connect/options.js';
import { backoffDelay } from '../monitor/backoff.js';
import { onStopSignal } from '../setup/signals.js';
import { follow, type FollowMessage, type FollowOptions, type Follower } from './follow.js';

/** A follower that ran this long before failing counts as having recovered (the wait starts short). */
const HEALTHY_MS = 60_000;

/** What a resuming follower follows and whom it tells: follow()'s options, without the resume hooks. */
export interface ResumingFollowOptions extends Omit<
  FollowOptions,
  'resumeAt' | 'onRestart' | 'onFetched' | 'untilEnd'
> {
  /**
   * Called once per attempt after the follower failed, before waiting `delayMs`. A failure the
   * Kafka client retries on its own (a broker gone) comes here too, with a null delay and attempt 0.
   */
  onRetry: (err: unknown, delayMs: number | null, attempt: number) => void;
  /** Called when the viewer reads its topics again after a retry (its first fetch answered). */
  onFollowing?: () => void;
}

/** Follows topics like follow(), replacing a failed follower until stop() (see the module comment). */
export class ResumingFollower {
  /** The next offset to read per topic and partition, so a replacement follower goes on from there. */
  private readonly positions = new Map<string, bigint>();
  private follower: Follower | null = null;
  private stopping = false;
  /** Attempts to follow again since the follower last ran for HEALTHY_MS. */
  private attempts = 0;
  /** A retry (ours or the Kafka client's) was reported and the viewer has not followed since. */
  private retrying = false;
  private wakeRetry: (() => void) | null = null;
  /** Resolves when the recovery loop after a follower failure has ended (stop waits for it). */
  private recovery: Promise<void> = Promise.resolve();
  private resolveDone!: () => void;
  /** Resolves once stopped (a resuming follower never fails: its failures are retried). */
  readonly done = new Promise<void>((resolve) => (this.resolveDone = resolve));

  constructor(private readonly o: ResumingFollowOptions) {}

  /**
   * Starts following; rejects (as follow() does) when the first follower cannot start, so a
   * command still starting can refuse with its one line.
   */
  async start(): Promise<void> {
    this.watch(await this.followTopics());
  }

  /** Offsets reached, per `topic|partition` (the next one to read). */
  position(topic: string, partition: number): bigint | undefined {
    return this.positions.get(`${topic}|${partition}`);
  }

  private followTopics(): Promise<Follower> {
    return follow({
      ...this.o,
      resumeAt: (topic, partition) => this.position(topic, partition),
      onRestart: (err) => {
        this.retrying = true;
        this.o.onRetry(err, null, 0);
      },
      onFetched: () => {
        if (!this.retrying || this.stopping) return;
        this.retrying = false;
        this.o.onFollowing?.();
      },
      onMessage: (m: FollowMessage) => {
        this.positions.set(`${m.topic}|${m.partition}`, BigInt(m.offset) + 1n);
        return this.o.onMessage(m);
      },
    });
  }

  /** Once started, a follower that fails is replaced after a reported, growing wait. */
  private watch(follower: Follower): void {
    this.follower = follower;
    const since = Date.now();
    follower.done.catch((err: unknown) => {
      if (this.stopping) return;
      // A follower that joins and then fails at its first fetch (a topic ACL taken away) keeps the
      // wait growing; one that ran a while starts again from the shortest wait.
      if (Date.now() - since > HEALTHY_MS) this.attempts = 0;
      this.retrying = true;
      this.recovery = this.followAgain(err);
    });
  }

  private async followAgain(firstErr: unknown): Promise<void> {
    let err = firstErr;
    while (!this.stopping) {
      const attempt = ++this.attempts;
      const delayMs = backoffDelay(attempt, 1_000);
      this.o.onRetry(err, delayMs, attempt);
      await new Promise<void>((resolve) => {
        const timer = setTimeout(resolve, delayMs);
        this.wakeRetry = () => {
          clearTimeout(timer);
          resolve();
        };
      });
      this.wakeRetry = null;
      if (this.stopping) return;
      try {
        const follower = await this.followTopics();
        if (this.stopping) {
          await follower.stop();
          return;
        }
        // Following again is reported at its first answered fetch (see onFetched above).
        this.watch(follower);
        return;
      } catch (e) {
        err = e;
      }
    }
  }

  /** Stops following (waits for a retry in progress to end); `done` resolves. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.wakeRetry?.();
    await this.recovery;
    await this.follower?.stop();
    this.resolveDone();
  }
}

/** How a long-running viewer starts while its dependencies may not answer yet (see startWaitingOutOutages). */
export interface OutageStartOptions {
  /** One attempt to start; rejects when a dependency failed. */
  attempt: () => Promise<void>;
  /** The failure in words: an outage to wait out (unless its `refusal` is set), or an error to end with. */
  classify: (err: unknown) => Outage | Error;
  /** Told once per failed attempt, before waiting `delayMs`: the caller writes its one line. */
  onRetry: (outage: Outage, delayMs: number, attempt: number) => void;
  /** Closes what a failed attempt opened, so a refused command exits at once. */
  cleanUp?: () => Promise<void>;
}

/**
 * Starts a long-running viewer (`board`, following `alerts`) whose Kafka or Redis may not answer
 * yet: an unreachable dependency is an outage that may end, retried with a growing wait and one
 * line per attempt until it answers or a stop signal comes. A refusal waiting cannot fix (auth,
 * certificate, ACL, a missing topic) is thrown, so the command ends with its one line (exit 2).
 * Resolves 'stopped' when a stop signal came before the viewer started (the caller stops whatever
 * the last attempt started).
 */
export async function startWaitingOutOutages(o: OutageStartOptions): Promise<'started' | 'stopped'> {
  let stopRequested = false;
  let wake: (() => void) | null = null;
  const releaseSignals = onStopSignal(() => {
    stopRequested = true;
    wake?.();
  });
  try {
    for (let attempt = 1; ; attempt++) {
      try {
        await o.attempt();
        return stopRequested ? 'stopped' : 'started';
      } catch (err) {
        await o.cleanUp?.().catch(() => {});
        const failure = o.classify(err);
        if (failure instanceof Error) throw failure;
        if (failure.refusal !== null) throw failure.refusal;
        if (stopRequested) return 'stopped';
        const delayMs = backoffDelay(attempt, 1_000);
        o.onRetry(failure, delayMs, attempt);
        await new Promise<void>((resolve) => {
          const timer = setTimeout(resolve, delayMs);
          wake = () => {
            clearTimeout(timer);
            resolve();
          };
        });
        wake = null;
        if (stopRequested) return 'stopped';
      }
    }
  } finally {
    releaseSignals();
  }
}

/**
 * A follower's failed start, for startWaitingOutOutages: a typed refusal (a missing topic, an ACL)
 * ends the command; an unreachable Kafka (follow() wraps it as SERVICE_UNAVAILABLE) or a raw client
 * error is an outage, worded by its address and cause. `what`: the operation, for ACL wording.
 */
export function followStartFailure(err: unknown, s: KafkaSettings, what: string): Outage | Error {
  if (err instanceof StreamfenceError && err.code !== 'SERVICE_UNAVAILABLE') return err;
  const cause = err instanceof StreamfenceError ? (err.cause ?? err) : err;
  return kafkaOutage(cause, s, what);
}
