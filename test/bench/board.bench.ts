/**
 * Board bench: how much the board adds on top of merely parsing the alert topic's messages, and
 * what one page refresh (/api/board snapshot as JSON) costs with many open alerts.
 * Baselines are measured in the same run: raw JSON.parse of the same messages, and JSON.stringify
 * of the same alert events without the board's extra fields and charts.
 */
import { performance } from 'node:perf_hooks';
import { BoardHub } from '../../services/board/hub.js';
import { asAlertEvent } from '../../services/board/live.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';
import { NOTICE } from '../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../support/alert-fixture.js';

const T0 = Date.parse('2026-06-01T00:00:00Z');

function messages(sensors: number, rounds: number): Buffer[] {
  const out: Buffer[] = [];
  for (let r = 0; r < rounds; r++) {
    for (let s = 0; s < sensors; s++) {
      const id = `b-${s}-${r}`;
      const t = new Date(T0 + (r * sensors + s) * 1000).toISOString();
      for (const state of ['raised', 'updated', 'cleared'] as const) {
        const e: AlertEvent = {
          id,
          sensor: `bench-${s % 50}/m-${s}`,
          state,
          severity: state === 'updated' ? 'critical' : 'warning',
          reasons: ['fence_high'],
          value: s + r,
          ts: t,
          since: t,
          flaggedReadings: 2,
          baseline: { ...FIXTURE_BASELINE, from: t, to: t },
          z: 4,
          robustZ: 3,
          percentileRank: 99.5,
          message: `bench-${s} reads high`,
          notice: NOTICE,
        };
        out.push(Buffer.from(JSON.stringify(e)));
      }
    }
  }
  return out;
}

function time(fn: () => void, repeat = 3): number {
  let best = Infinity;
  for (let i = 0; i < repeat; i++) {
    const t = performance.now();
    fn();
    best = Math.min(best, performance.now() - t);
  }
  return best;
}

export async function run(): Promise<Record<string, unknown>> {
  const msgs = messages(2000, 10); // 60 000 messages
  let sink = 0;
  const rawMs = time(() => {
    for (const m of msgs) sink += (JSON.parse(m.toString('utf8')) as AlertEvent).value;
  });
  const boardMs = time(() => {
    const hub = new BoardHub({ mode: 'live', clock: { wall: () => T0, plant: () => T0 } });
    for (const m of msgs) {
      const ev = asAlertEvent(JSON.parse(m.toString('utf8')));
      if (ev === null) continue;
      hub.applyEvent(ev);
      hub.addReading(ev.sensor, { ts: Date.parse(ev.ts), value: ev.value, flagged: ev.state !== 'cleared' });
    }
  });

  // Page refresh with 500 open alerts (a flood far beyond any budget) and 120-point charts.
  const hub = new BoardHub({ mode: 'live', clock: { wall: () => T0, plant: () => T0 } });
  const open: AlertEvent[] = [];
  for (const m of msgs) {
    const ev = JSON.parse(m.toString('utf8')) as AlertEvent;
    if (ev.state === 'raised' && open.length < 500) {
      open.push(ev);
      hub.applyEvent(ev);
    }
  }
  for (const ev of open)
    for (let i = 0; i < 120; i++)
      hub.addReading(ev.sensor, { ts: T0 + i * 60_000, value: i, flagged: i > 100 });
  let bytes = 0;
  const snapMs =
    time(() => {
      for (let i = 0; i < 20; i++) bytes = JSON.stringify(hub.snapshot()).length;
    }) / 20;
  const rawSnapMs =
    time(() => {
      for (let i = 0; i < 20; i++) sink += JSON.stringify(open).length;
    }) / 20;

  return {
    messages: msgs.length,
    rawParseMs: Math.round(rawMs),
    boardApplyMs: Math.round(boardMs),
    boardEventsPerSec: Math.round(msgs.length / (boardMs / 1000)),
    boardVsRawParse: Number((boardMs / rawMs).toFixed(2)),
    snapshot500AlertsMs: Number(snapMs.toFixed(2)),
    snapshot500AlertsBytes: bytes,
    rawStringify500AlertsMs: Number(rawSnapMs.toFixed(2)),
    snapshotVsRawStringify: Number((snapMs / rawSnapMs).toFixed(2)),
    sink: sink > 0,
  };
}
