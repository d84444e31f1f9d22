/**
 * The board's in-process state for one server: the pure store, the rate meter, recent readings for
 * the charts, and the SSE listeners. Demo and live mode both drive it; live mode adds a hook that
 * shares operator actions (Redis + Kafka) before they are applied here.
 */
import type { BoardSnapshot, SnapshotPoint } from '../../libs/board/snapshot.js';
import {
  BoardStore,
  checkAction,
  type ActionKind,
  type ActionResult,
  type BoardAlert,
  type OperatorAction,
} from '../../libs/board/store.js';
import { RateMeter, type RateReading } from '../../libs/board/rate.js';
import {
  AssetNamer,
  DEFAULT_GROUP_RULE,
  groupAlerts,
  type AlertGroup,
  type GroupRule,
} from '../../libs/board/groups.js';
import { RecentSeries, type SeriesPoint } from '../../libs/board/series.js';
import { HealthWindow } from '../../libs/board/health.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';

export type HubMessage =
  | { type: 'alert'; alert: BoardAlert }
  | { type: 'action'; action: OperatorAction; alert: BoardAlert }
  | { type: 'returned'; alert: BoardAlert };

export interface HubClock {
  /** Server wall clock: action stamps and shelf expiry. */
  wall(): number;
  /** Plant clock: event time "now" for the rate meter and relative times (equals wall in live mode). */
  plant(): number;
}

export interface HubOptions {
  mode: 'demo' | 'live';
  clock: HubClock;
  /** Simulated-time speed factor (1 in live mode). */
  speed?: number;
  clearedKeep?: number;
  /**
   * Current flagged-reading count of an open alert, when the board runs the engine itself (demo).
   * Alert events carry the count only when they are emitted, so it goes stale between events.
   */
  flaggedNow?: (sensor: string, id: string) => number | null;
  /** Called with a validated action before it is applied locally (live mode persists and publishes it). */
  share?: (action: OperatorAction) => Promise<void>;
  /** Which open alerts form groups (default DEFAULT_GROUP_RULE). */
  groupRule?: GroupRule;
}

export type ActRequest = { ok: true; alert: BoardAlert } | { ok: false; status: number; message: string };

export type GroupActRequest =
  { ok: true; group: AlertGroup; alerts: BoardAlert[] } | { ok: false; status: number; message: string };

export class BoardHub {
  readonly store: BoardStore;
  readonly rate = new RateMeter();
  readonly series = new RecentSeries();
  private readonly listeners = new Set<(m: HubMessage) => void>();
  readonly counts = {
    events: 0,
    actions: { acknowledge: 0, shelve: 0, unshelve: 0 } as Record<ActionKind, number>,
  };

  readonly groupRule: GroupRule;
  private readonly assets: AssetNamer;
  /** The alert-system health figures of the last day of plant time (libs/board/health.ts). */
  readonly health: HealthWindow;

  constructor(readonly opts: HubOptions) {
    this.store = new BoardStore({ clearedKeep: opts.clearedKeep });
    this.groupRule = opts.groupRule ?? DEFAULT_GROUP_RULE;
    this.assets = new AssetNamer(this.groupRule);
    this.health = new HealthWindow(opts.clock.plant());
  }

  /** The groups among the open alerts now (computed from the list, so always in step with it). */
  groups(alerts: readonly BoardAlert[] = this.store.list()): AlertGroup[] {
    return groupAlerts(alerts, this.assets, this.groupRule.windowMs);
  }

  get clock(): HubClock {
    return this.opts.clock;
  }

  subscribe(fn: (m: HubMessage) => void): () => void {
    this.listeners.add(fn);
    return () => this.listeners.delete(fn);
  }

  get listenerCount(): number {
    return this.listeners.size;
  }

  private emit(m: HubMessage): void {
    for (const fn of this.listeners) fn(m);
  }

  applyEvent(ev: AlertEvent): void {
    this.counts.events++;
    if (ev.state === 'raised') this.rate.record(Date.parse(ev.since));
    this.health.record(ev);
    const a = this.store.applyEvent(ev, this.clock.wall());
    if (a !== null) this.emit({ type: 'alert', alert: a });
  }

  addReading(sensor: string, p: SeriesPoint): void {
    this.series.add(sensor, p);
  }

  /** An action that another board took (from the shared log); applied without sharing again. */
  applyRemoteAction(act: OperatorAction): void {
    const r = this.store.applyAction(act, this.clock.wall());
    if (r.ok) this.emit({ type: 'action', action: act, alert: r.alert });
  }

  /** An operator's request from this board's API: validate, share (live mode), apply, announce. */
  async act(kind: ActionKind, id: string, body: unknown): Promise<ActRequest> {
    const checked = checkAction(kind, id, body, this.clock.wall());
    if (!checked.ok) return { ok: false, status: 400, message: checked.message };
    // Dry-run the state check first so a refused action is never shared.
    const current = this.store.get(id);
    if (current === undefined)
      return { ok: false, status: 404, message: `no alert with id ${id} on this board; reload the list` };
    if (current.status === 'cleared')
      return { ok: false, status: 409, message: `alert ${id} has already cleared; nothing to ${kind}` };
    if (kind === 'unshelve' && current.status !== 'shelved')
      return { ok: false, status: 409, message: `alert ${id} is not shelved` };
    if (this.opts.share) await this.opts.share(checked.action);
    const r: ActionResult = this.store.applyAction(checked.action, this.clock.wall());
    if (!r.ok)
      return {
        ok: false,
        status: r.error === 'not_found' ? 404 : r.error === 'conflict' ? 409 : 400,
        message: r.message,
      };
    this.counts.actions[kind]++;
    this.emit({ type: 'action', action: checked.action, alert: r.alert });
    return { ok: true, alert: r.alert };
  }

  /**
   * An operator's request for a whole group: the same action on every member, each shared and
   * announced as its own action (so the shared log stays one action per alert). Members the action
   * does not apply to are left alone: acknowledge skips those already acknowledged.
   */
  async actOnGroup(kind: ActionKind, groupId: string, body: unknown): Promise<GroupActRequest> {
    const group = this.groups().find((g) => g.id === groupId);
    if (group === undefined)
      return {
        ok: false,
        status: 404,
        message: `no group with id ${groupId} on this board; reload the list`,
      };
    const checked = checkAction(kind, groupId, body, this.clock.wall());
    if (!checked.ok) return { ok: false, status: 400, message: checked.message };
    if (kind === 'unshelve' && group.status !== 'shelved')
      return { ok: false, status: 409, message: `group ${groupId} is not shelved` };
    if (kind === 'shelve' && group.status !== 'active')
      return { ok: false, status: 409, message: `group ${groupId} is already shelved` };
    const alerts: BoardAlert[] = [];
    for (const id of group.members) {
      const current = this.store.get(id);
      if (current === undefined) continue;
      if (kind === 'acknowledge' && current.acknowledged) {
        alerts.push(current);
        continue;
      }
      const r = await this.act(kind, id, body);
      if (!r.ok) return { ok: false, status: r.status, message: `${current.sensor}: ${r.message}` };
      alerts.push(r.alert);
    }
    return { ok: true, group, alerts };
  }

  /** Bring back alerts whose shelf has ended; call on a timer. */
  tick(): void {
    for (const a of this.store.expireShelves(this.clock.wall())) this.emit({ type: 'returned', alert: a });
  }

  rateNow(): RateReading {
    return this.rate.read(this.clock.plant());
  }

  /** Everything the page needs in one response. */
  snapshot(extra: Pick<BoardSnapshot, 'notice' | 'tokenRequired'> = {}): BoardSnapshot {
    const alerts = this.store.list();
    // Points as [ts, value, flagged 0/1]: half the bytes of objects, which matters in a flood.
    const series: Record<string, SnapshotPoint[]> = {};
    const flaggedNow: Record<string, number> = {};
    for (const a of alerts) {
      if (!(a.sensor in series) && a.status !== 'cleared') {
        series[a.sensor] = this.series.get(a.sensor).map((p) => [p.ts, p.value, p.flagged ? 1 : 0]);
      }
      const n = a.status === 'cleared' || !this.opts.flaggedNow ? null : this.opts.flaggedNow(a.sensor, a.id);
      if (n !== null) flaggedNow[a.id] = n;
    }
    return {
      mode: this.opts.mode,
      speed: this.opts.speed ?? 1,
      wallNow: new Date(this.clock.wall()).toISOString(),
      plantNow: new Date(this.clock.plant()).toISOString(),
      rate: this.rateNow(),
      health: this.health.read(this.clock.plant()),
      alerts,
      groups: this.groups(alerts),
      grouping: {
        depth: this.groupRule.depth,
        globs: this.groupRule.globs,
        windowMinutes: this.groupRule.windowMs / 60_000,
      },
      series,
      flaggedNow,
      ...extra,
    };
  }
}
