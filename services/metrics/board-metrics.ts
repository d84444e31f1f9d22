/**
 * Prometheus metrics of a board server (`board` and `demo`), on a registry of its own (never the
 * global one): the board's own figures, the process metrics every command shares and, for the
 * demo, the engine metrics under the names and labels `run` uses. Figures the board only ever
 * adds to are counters (`_total`); figures that go up and down are gauges.
 */
import { Counter, Gauge, Registry } from 'prom-client';
import type { BoardHub } from '../board/hub.js';
import {
  collectProcessMetrics,
  createBackoffCounter,
  createEngineMetrics,
  type EngineMetrics,
} from './metrics.js';

/** What a board server serves on /metrics, and counts of its own. */
export interface BoardMetrics {
  registry: Registry;
  /**
   * Requests the board could not answer for a reason other than the request or a dependency's
   * outage (answered 500 with a plain line, logged once), by `request`: `action` or `read`.
   */
  requestFailures: Counter<'request'>;
}

/** The metrics of `streamfence board`, which follows Kafka and Redis and waits out their outages. */
export interface LiveBoardMetrics extends BoardMetrics {
  /** One per logged retry line (start-up and running), as `run` counts its own. */
  backoff: Counter<'dependency' | 'cause'>;
  /** Operator actions Kafka or Redis refused to record (each answered 503 and logged). */
  actionFailures: Counter<'dependency' | 'cause'>;
}

/** A demo's metrics: the board's, plus the engine metrics its simulated plant is counted in. */
export interface DemoMetrics extends BoardMetrics {
  engine: EngineMetrics;
}

/** The metrics of `streamfence board`: the board's figures and the retries after Kafka or Redis failed. */
export function createBoardMetrics(hub: BoardHub): LiveBoardMetrics {
  const figures = boardFigures(hub);
  const { registry } = figures;
  const actionFailures = new Counter({
    name: 'streamfence_board_action_failures_total',
    help: 'Operator actions not taken because Kafka or Redis refused them (answered 503), by dependency and cause',
    labelNames: ['dependency', 'cause'],
    registers: [registry],
  });
  return { ...figures, backoff: createBackoffCounter(registry), actionFailures };
}

/** Alerts by status, events and actions applied, the rate meter (board and demo alike). */
function boardFigures(hub: BoardHub): BoardMetrics {
  const registry = new Registry();
  collectProcessMetrics(registry);
  const registers = [registry];
  const requestFailures = new Counter({
    name: 'streamfence_board_request_failures_total',
    help: 'Requests the board failed to answer for a reason of its own (answered 500 and logged), by request kind',
    labelNames: ['request'],
    registers,
  });
  new Gauge({
    name: 'streamfence_board_alerts',
    help: 'Alerts on the board by status',
    labelNames: ['status'],
    registers,
    collect() {
      const byStatus = { active: 0, shelved: 0, cleared: 0 };
      for (const alert of hub.store.list()) byStatus[alert.status]++;
      for (const [status, count] of Object.entries(byStatus)) this.set({ status }, count);
    },
  });
  // The hub keeps these counts; each scrape copies them (they only grow, so the counter does too).
  new Counter({
    name: 'streamfence_board_alert_events_total',
    help: 'Alert events the board has applied since start',
    registers,
    collect() {
      this.reset();
      this.inc(hub.counts.events);
    },
  });
  new Counter({
    name: 'streamfence_board_operator_actions_total',
    help: 'Operator actions taken on this board since start, by kind',
    labelNames: ['kind'],
    registers,
    collect() {
      this.reset();
      for (const [kind, count] of Object.entries(hub.counts.actions)) this.inc({ kind }, count);
    },
  });
  new Gauge({
    name: 'streamfence_board_raised_last_hour',
    help: 'Alerts raised in the last hour of plant time (the rate meter)',
    registers,
    collect() {
      this.set(hub.rateNow().lastHour);
    },
  });
  new Gauge({
    name: 'streamfence_board_event_stream_clients',
    help: 'Pages connected to the live event stream',
    registers,
    collect() {
      this.set(hub.listenerCount);
    },
  });
  return { registry, requestFailures };
}

/** The metrics of `streamfence demo`: the board's, and the engine metrics `run` exposes. */
export function createDemoMetrics(hub: BoardHub): DemoMetrics {
  const board = boardFigures(hub);
  return { ...board, engine: createEngineMetrics(board.registry) };
}
