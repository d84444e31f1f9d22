/**
 * The board's health window on hand-made alert streams: the span it covers (since the board
 * started, at most the last 24 h of plant time), what it keeps, and its verdicts. The figures
 * themselves are the KPI module's (test/unit/kpi covers their definitions).
 */
import { describe, expect, it } from 'vitest';
import { HEALTH_WINDOW_MS, HealthWindow, MAX_HEALTH_EVENTS } from '../../../libs/board/health.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';

const T0 = Date.parse('2026-06-03T00:00:00Z');
const H = 3_600_000;

const ev = (id: string, state: AlertEvent['state'], at: number, since = at): AlertEvent =>
  ({
    id,
    sensor: `line-1/${id}`,
    state,
    ts: new Date(at).toISOString(),
    since: new Date(since).toISOString(),
  }) as AlertEvent;

describe('board health window', () => {
  it('covers the time since the board started, then the last 24 h; older events drop out', () => {
    const window = new HealthWindow(T0);
    window.record(ev('a', 'raised', T0 + H));
    window.record(ev('b', 'raised', T0 + 20 * H));
    let h = window.read(T0 + 2 * H);
    expect([h.from, h.hours, h.raised]).toEqual([new Date(T0).toISOString(), 2, 2]);
    h = window.read(T0 + 26 * H);
    expect([h.from, h.hours, h.raised]).toEqual([new Date(T0 + 2 * H).toISOString(), 24, 1]);
    expect(HEALTH_WINDOW_MS).toBe(24 * H);
  });

  it('an event older than the board start moves the start back (a board following history)', () => {
    const window = new HealthWindow(T0 + 5 * H);
    window.record(ev('a', 'raised', T0 + H));
    expect(window.read(T0 + 6 * H).hours).toBe(5);
  });

  it('ignores updates, counts a clear within 60 s as fleeting, and keeps at most MAX_HEALTH_EVENTS', () => {
    const window = new HealthWindow(T0);
    window.record(ev('a', 'raised', T0));
    window.record(ev('a', 'updated', T0 + 10_000));
    window.record(ev('a', 'cleared', T0 + 30_000, T0));
    const h = window.read(T0 + H);
    expect(h.raised).toBe(1);
    expect(h.figures.find((f) => f.figure === 'fleeting')).toMatchObject({ shown: '1', verdict: 'not-met' });
    const many = new HealthWindow(T0);
    for (let i = 0; i < MAX_HEALTH_EVENTS + 5; i++) many.record(ev(`s${i % 50}`, 'raised', T0 + i));
    expect(many.read(T0 + H).raised).toBe(MAX_HEALTH_EVENTS);
  });

  it('an empty board judges what it can: nothing raised meets the rate targets, no top share', () => {
    const h = new HealthWindow(T0).read(T0 + H);
    expect(h.figures.map((f) => [f.figure, f.verdict])).toEqual([
      ['perHour.average', 'met'],
      ['worst10min', 'met'],
      ['flood.share', 'met'],
      ['chattering.sensors', 'met'],
      ['fleeting', 'met'],
      ['stale.count', 'met'],
      ['top.share', 'not-judged'],
    ]);
    expect([h.met, h.judged]).toEqual([6, 6]);
  });
});
