/**
 * Live board feed: alert events from the alert topic, operator actions shared through Redis (the
 * durable record, read at start) and an action topic (so every open board and terminal view hears
 * of an action at once). Each board applies actions to its own store; applying the same action
 * twice changes nothing, so a board hearing its own action again is harmless.
 *
 * Redis layout: one hash `<prefix>:board:actions` with fields `<alertId>|ack` and `<alertId>|shelf`
 * holding the latest acknowledge and the latest shelve/unshelve as JSON. Fields of an alert are
 * removed when it clears, so the hash holds open alerts only.
 */
import { randomBytes } from 'node:crypto';
import type { Kafka, Producer } from 'kafkajs';
import type { RedisClient } from '../connect/index.js';
import type { OperatorAction } from '../../libs/board/store.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';
import { ALERT_STATES, isSeverity, type AlertState } from '../../libs/schema/vocabulary.js';
import type { FollowMessage } from './follow.js';
import { ResumingFollower } from './resume.js';
import type { BoardHub } from './hub.js';

export const actionsKey = (prefix: string): string => `${prefix}:board:actions`;

/** The message on the action topic. */
export interface ActionMessage {
  kind: 'streamfence.operator-action';
  origin: string;
  action: OperatorAction;
  /** The alert's sensor, so viewers that never saw the alert event can still name it. */
  sensor?: string;
}

const MAX_PENDING = 10_000;

/** Sharing an operator action failed: which dependency refused it, and the client's error. */
export class ShareFailure extends Error {
  constructor(
    readonly dependency: 'kafka' | 'redis',
    readonly error: unknown,
  ) {
    super(`${dependency} refused the operator action`);
    this.name = 'ShareFailure';
  }
}

/** Minimal shape check of an alert event from the topic; anything else is skipped. */
export function asAlertEvent(v: unknown): AlertEvent | null {
  if (typeof v !== 'object' || v === null) return null;
  const e = v as Record<string, unknown>;
  const ok =
    typeof e.id === 'string' &&
    typeof e.sensor === 'string' &&
    ALERT_STATES.includes(e.state as AlertState) &&
    isSeverity(e.severity) &&
    typeof e.ts === 'string' &&
    typeof e.since === 'string' &&
    typeof e.value === 'number' &&
    typeof e.message === 'string' &&
    typeof e.baseline === 'object' &&
    e.baseline !== null;
  return ok ? (e as unknown as AlertEvent) : null;
}

export function asAction(v: unknown): OperatorAction | null {
  if (typeof v !== 'object' || v === null) return null;
  const a = v as Record<string, unknown>;
  if (a.kind !== 'acknowledge' && a.kind !== 'shelve' && a.kind !== 'unshelve') return null;
  if (typeof a.id !== 'string' || typeof a.by !== 'string' || typeof a.at !== 'string') return null;
  if (a.kind === 'shelve' && (typeof a.reason !== 'string' || typeof a.until !== 'string')) return null;
  return a as unknown as OperatorAction;
}

function parse(buf: Buffer | null): unknown {
  if (buf === null) return null;
  try {
    return JSON.parse(buf.toString('utf8'));
  } catch {
    return null;
  }
}

export interface LiveFeedOptions {
  kafka: Kafka;
  redis: RedisClient;
  prefix: string;
  alertTopic: string;
  actionTopic: string;
  sinceMs?: number | null;
  onSkip?: (why: string) => void;
  /**
   * Called once per attempt to follow the topics again after the follower failed while running
   * (an ACL removed, the group denied, a topic deleted), before waiting `delayMs`: the caller logs
   * the one line and counts it. Without it the board would silently stop hearing alerts. A failure
   * the Kafka client retries on its own (a broker gone) comes here too, with a null delay.
   */
  onRetry?: (err: unknown, delayMs: number | null, attempt: number) => void;
  /** Called when the follower follows its topics again after a retry (the board is ready again). */
  onFollowing?: () => void;
}

export class LiveFeed {
  readonly origin = randomBytes(8).toString('hex');
  private producer: Producer | null = null;
  private follower: ResumingFollower | null = null;
  /** Actions whose alert this board has not seen yet (from Redis at start, or from another board). */
  private readonly pending = new Map<string, OperatorAction[]>();
  skipped = 0;

  constructor(
    readonly hub: BoardHub,
    readonly o: LiveFeedOptions,
  ) {}

  async start(): Promise<void> {
    const saved = await this.o.redis.hgetall(actionsKey(this.o.prefix));
    // Acknowledgements first, then shelves, so a board rebuilding state ends where the others are.
    const fields = Object.entries(saved).sort(
      ([a], [b]) => (a.endsWith('|ack') ? 0 : 1) - (b.endsWith('|ack') ? 0 : 1),
    );
    for (const [, json] of fields) {
      const act = asAction(parse(Buffer.from(json)));
      if (act) this.remember(act);
    }
    this.producer = this.o.kafka.producer({ allowAutoTopicCreation: false });
    await this.producer.connect();
    this.follower = new ResumingFollower({
      kafka: this.o.kafka,
      topics: [this.o.alertTopic, this.o.actionTopic],
      sinceMs: this.o.sinceMs,
      role: 'board',
      onRetry: (err, delayMs, attempt) => this.o.onRetry?.(err, delayMs, attempt),
      onFollowing: () => this.o.onFollowing?.(),
      onMessage: (m) => this.onMessage(m),
    });
    await this.follower.start();
  }

  private remember(act: OperatorAction): void {
    if (this.pending.size >= MAX_PENDING && !this.pending.has(act.id)) return;
    const list = this.pending.get(act.id) ?? [];
    list.push(act);
    this.pending.set(act.id, list);
  }

  private onMessage(m: FollowMessage): void {
    const v = parse(m.value);
    if (m.topic === this.o.alertTopic) {
      const ev = asAlertEvent(v);
      if (ev === null) {
        this.skipped++;
        this.o.onSkip?.(`skipped a message on ${m.topic} at offset ${m.offset}: not an alert event`);
        return;
      }
      this.hub.applyEvent(ev);
      this.hub.addReading(ev.sensor, {
        ts: Date.parse(ev.ts),
        value: ev.value,
        flagged: ev.state !== 'cleared',
      });
      const waiting = this.pending.get(ev.id);
      if (waiting && ev.state !== 'cleared') {
        this.pending.delete(ev.id);
        for (const a of waiting) this.hub.applyRemoteAction(a);
      }
      if (ev.state === 'cleared') {
        this.pending.delete(ev.id);
        void this.o.redis.hdel(actionsKey(this.o.prefix), `${ev.id}|ack`, `${ev.id}|shelf`).catch(() => {});
      }
      return;
    }
    const msg = v as Partial<ActionMessage> | null;
    const act = msg && msg.kind === 'streamfence.operator-action' ? asAction(msg.action) : null;
    if (act === null) {
      this.skipped++;
      return;
    }
    if (msg!.origin === this.origin) return; // applied locally when it was taken
    if (this.hub.store.get(act.id) === undefined) this.remember(act);
    else this.hub.applyRemoteAction(act);
  }

  /** Share an action taken on this board: durable in Redis first, then announced on the topic. */
  async share(act: OperatorAction): Promise<void> {
    const field = `${act.id}|${act.kind === 'acknowledge' ? 'ack' : 'shelf'}`;
    const alert = this.hub.store.get(act.id);
    try {
      if (act.kind === 'acknowledge' && alert?.acknowledged === true) {
        // The first acknowledgement stays the durable one; a later one is recorded on the topic.
        await this.o.redis.hsetnx(actionsKey(this.o.prefix), field, JSON.stringify(act));
      } else {
        await this.o.redis.hset(actionsKey(this.o.prefix), field, JSON.stringify(act));
      }
    } catch (err) {
      throw new ShareFailure('redis', err);
    }
    const msg: ActionMessage = {
      kind: 'streamfence.operator-action',
      origin: this.origin,
      action: act,
      ...(alert === undefined ? {} : { sensor: alert.sensor }),
    };
    try {
      await this.producer!.send({
        topic: this.o.actionTopic,
        acks: -1,
        messages: [{ key: act.id, value: JSON.stringify(msg) }],
      });
    } catch (err) {
      throw new ShareFailure('kafka', err);
    }
  }

  async stop(): Promise<void> {
    await this.follower?.stop();
    await this.producer?.disconnect().catch(() => {});
  }
}
