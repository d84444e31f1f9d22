/** Prometheus metrics of a board server, on a registry of its own (never the global one). */
import { Counter, Gauge, Registry, collectDefaultMetrics } from 'prom-client';
import type { BoardHub } from '../board/hub.js';

export interface BoardMetrics {
  registry: Registry;
  readings: Counter;
}

export function createBoardMetrics(hub: BoardHub): BoardMetrics {
  const registry = new Registry();
  collectDefaultMetrics({ register: registry, prefix: 'streamfence_' });
  new Gauge({
    name: 'streamfence_board_alerts',
    help: 'Alerts on the board by status',
    labelNames: ['status'],
    registers: [registry],
    collect() {
      const n = { active: 0, shelved: 0, cleared: 0 };
      for (const a of hub.store.list()) n[a.status]++;
      for (const [k, v] of Object.entries(n)) this.set({ status: k }, v);
    },
  });
  new Gauge({
    name: 'streamfence_board_alert_events',
    help: 'Alert events the board has applied since start',
    registers: [registry],
    collect() {
      this.set(hub.counts.events);
    },
  });
  new Gauge({
    name: 'streamfence_board_operator_actions',
    help: 'Operator actions taken on this board since start, by kind',
    labelNames: ['kind'],
    registers: [registry],
    collect() {
      for (const [k, v] of Object.entries(hub.counts.actions)) this.set({ kind: k }, v);
    },
  });
  new Gauge({
    name: 'streamfence_board_raised_last_hour',
    help: 'Alerts raised in the last hour of plant time (the rate meter)',
    registers: [registry],
    collect() {
      this.set(hub.rateNow().lastHour);
    },
  });
  new Gauge({
    name: 'streamfence_board_event_stream_clients',
    help: 'Pages connected to the live event stream',
    registers: [registry],
    collect() {
      this.set(hub.listenerCount);
    },
  });
  const readings = new Counter({
    name: 'streamfence_demo_readings_total',
    help: 'Simulated readings judged by the demo engine',
    registers: [registry],
  });
  return { registry, readings };
}
