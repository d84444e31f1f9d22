/**
 * Alert-system health figures on small hand-made alert streams, with exact expected values.
 * The definitions' numbers (more than 10 in 10 minutes is a flood; 3 raises within 60 s is
 * chattering; fleeting within 60 s; stale after 24 h) are common alarm-management practice
 * (ISA-18.2 / EEMUA 191 as secondary sources state them; /work notes, from memory).
 */
import { describe, expect, it } from 'vitest';
import { alertKpis, kpiEventOf, type KpiEvent } from '../../../libs/kpi/alert-kpis.js';
import { KPI_TARGETS, targetFor } from '../../../libs/kpi/kpi-targets.js';
import type { Incident } from '../../../libs/scoring/labels.js';

const SEC = 1000;
const MIN = 60 * SEC;
const HOUR = 60 * MIN;
// Aligned to a 10-minute and an hour boundary, so aligned periods are easy to count by hand.
const T0 = Date.UTC(2026, 0, 5, 6, 0, 0);
const at = (ms: number) => T0 + ms;

let serial = 0;
/** A raise, and optionally its clear `lasts` ms later. */
function alert(sensor: string, raisedAt: number, lasts?: number): KpiEvent[] {
  const id = `a${serial++}`;
  const out: KpiEvent[] = [{ id, sensor, state: 'raised', ts: at(raisedAt), since: at(raisedAt) }];
  if (lasts !== undefined)
    out.push({ id, sensor, state: 'cleared', ts: at(raisedAt + lasts), since: at(raisedAt) });
  return out;
}
const raises = (sensor: string, times: number[], lasts = 5 * MIN): KpiEvent[] =>
  times.flatMap((t) => alert(sensor, t, lasts));
const span = (ms: number) => ({ start: T0, end: T0 + ms });

describe('alert KPIs: rates and floods', () => {
  it('exactly 10 raised in one 10-minute period is not a flood; 11 is', () => {
    const ten = raises(
      's',
      Array.from({ length: 10 }, (_, i) => i * 50 * SEC),
    );
    const k10 = alertKpis(ten, span(HOUR));
    expect(k10.raised).toBe(10);
    expect(k10.per10Min.peak).toBe(10);
    expect(k10.worst10min).toBe(10);
    expect(k10.flood).toEqual({ periods: 7, floodPeriods: 0, share: 0, any: false });

    const eleven = [...ten, ...alert('s', 9 * MIN + 55 * SEC, MIN)];
    const k11 = alertKpis(eleven, span(HOUR));
    expect(k11.per10Min.peak).toBe(11);
    // The hour [06:00, 07:00] touches 7 aligned periods (07:00 itself starts the seventh).
    expect(k11.flood).toEqual({ periods: 7, floodPeriods: 1, share: 1 / 7, any: true });
  });

  it('a sliding flood across two aligned periods counts as a flood but in no flood period', () => {
    // 6 in the last 2 minutes of one period, 6 in the first 2 minutes of the next.
    const times = [
      ...Array.from({ length: 6 }, (_, i) => 8 * MIN + i * 10 * SEC),
      ...Array.from({ length: 6 }, (_, i) => 10 * MIN + i * 10 * SEC),
    ];
    const k = alertKpis(raises('s', times, 2 * SEC), span(HOUR - 1));
    expect(k.per10Min.peak).toBe(6);
    expect(k.worst10min).toBe(12);
    expect(k.flood).toEqual({ periods: 6, floodPeriods: 0, share: 0, any: true });
  });

  it('averages per hour and per 10 minutes over the span; peaks per aligned hour and period', () => {
    // 2 hours; 9 raises in the first hour (4 of them in 06:20-06:30), 3 in the second.
    const first = [0, 5 * MIN, 11 * MIN, 20 * MIN, 22 * MIN, 25 * MIN, 29 * MIN, 40 * MIN, 59 * MIN];
    const second = [61 * MIN, 90 * MIN, 119 * MIN];
    const k = alertKpis(raises('s', [...first, ...second], 30 * SEC), span(2 * HOUR));
    expect(k.hours).toBe(2);
    expect(k.raised).toBe(12);
    expect(k.cleared).toBe(12);
    expect(k.perHour).toEqual({ average: 6, peak: 9 });
    expect(k.per10Min).toEqual({ average: 1, peak: 4 });
  });

  it('a zero span has no averages and no periods without raises', () => {
    const k = alertKpis([], { start: T0, end: T0 });
    expect(k.perHour.average).toBeNull();
    expect(k.per10Min.average).toBeNull();
    expect(k.flood).toEqual({ periods: 0, floodPeriods: 0, share: null, any: false });
    expect(k.top).toEqual({ sensors: [], share: null });
    expect(k.raisesPerCaught).toBeNull();
  });
});

describe('alert KPIs: chattering, fleeting, stale', () => {
  it('three raises of one sensor within 60 s is chattering; spread over 60.001 s it is not', () => {
    const yes = alertKpis(raises('c', [0, 20 * SEC, 60 * SEC], 5 * SEC), span(HOUR));
    expect(yes.chattering).toEqual({ sensors: 1, raises: 3 });
    const no = alertKpis(raises('c', [0, 20 * SEC, 60 * SEC + 1], 5 * SEC), span(HOUR));
    expect(no.chattering).toEqual({ sensors: 0, raises: 0 });
    // Three raises of three sensors in 60 s are no sensor's chattering.
    const three = alertKpis(
      [...alert('a', 0, SEC), ...alert('b', SEC, SEC), ...alert('c', 2 * SEC, SEC)],
      span(HOUR),
    );
    expect(three.chattering).toEqual({ sensors: 0, raises: 0 });
  });

  it('counts each raise of a chattering run once, and only raises inside a run', () => {
    // Run of 4 within 50 s, then a lone raise 10 minutes later; a second sensor with a run of 3.
    const events = [
      ...raises('c', [0, 10 * SEC, 30 * SEC, 50 * SEC, 10 * MIN], 2 * SEC),
      ...raises('d', [HOUR - 40 * SEC, HOUR - 30 * SEC, HOUR - 20 * SEC], 2 * SEC),
    ];
    const k = alertKpis(events, span(HOUR));
    expect(k.chattering).toEqual({ sensors: 2, raises: 7 });
    expect(alertKpis(events, span(HOUR), { chatterRaises: 4 }).chattering).toEqual({ sensors: 1, raises: 4 });
    expect(alertKpis(events, span(HOUR), { chatterWindowMs: 20 * SEC }).chattering).toEqual({
      sensors: 1,
      raises: 3,
    });
  });

  it('fleeting: cleared within 60 s of the raise (60 s exactly included)', () => {
    const events = [
      ...alert('a', 0, 60 * SEC),
      ...alert('b', 0, 60 * SEC + 1),
      ...alert('c', 0, 5 * SEC),
      ...alert('d', 0),
    ];
    const k = alertKpis(events, span(HOUR));
    expect(k.fleeting).toBe(2);
    expect(alertKpis(events, span(HOUR), { fleetingMs: 10 * SEC }).fleeting).toBe(1);
  });

  it('stale: active longer than 24 h, cleared late or still active at the end', () => {
    const day = 24 * HOUR;
    const events = [
      ...alert('a', 0, day), // exactly 24 h: not stale
      ...alert('b', 0, day + 1), // stale, cleared
      ...alert('c', HOUR), // still active at the end: 2 days - 1 h > 24 h
      ...alert('d', day + 2 * HOUR), // still active, 22 h: not stale
    ];
    const k = alertKpis(events, span(2 * day));
    expect(k.stale).toEqual({ count: 2, activeAtEnd: 2 });
  });

  it('a clear whose raise came before the events (a board window) still counts by its since', () => {
    const id = 'old';
    const k = alertKpis(
      [{ id, sensor: 'x', state: 'cleared', ts: at(30 * SEC), since: at(-20 * SEC) }],
      span(HOUR),
    );
    expect(k.raised).toBe(0);
    expect(k.cleared).toBe(1);
    expect(k.fleeting).toBe(1);
    expect(k.stale.activeAtEnd).toBe(0);
  });
});

describe('alert KPIs: top sensors and raises per caught incident', () => {
  it('lists the ten most frequent sensors (ties by id) and their share of all raises', () => {
    // Sensor s0 raises 12 times, s1..s11 once each: 23 raises.
    const events = [
      ...raises(
        's0',
        Array.from({ length: 12 }, (_, i) => i * 5 * MIN),
        MIN,
      ),
      ...Array.from({ length: 11 }, (_, i) => alert(`s${i + 1}`, i * MIN, MIN)).flat(),
    ];
    const k = alertKpis(events, span(HOUR));
    expect(k.raised).toBe(23);
    expect(k.top.sensors).toHaveLength(10);
    expect(k.top.sensors[0]).toEqual({ sensor: 's0', raised: 12, share: 12 / 23 });
    // Ties broken by sensor id as text: s1, s10, s11, s2, ...
    expect(k.top.sensors.slice(1, 4).map((t) => t.sensor)).toEqual(['s1', 's10', 's11']);
    expect(k.top.share).toBe(21 / 23);
  });

  it('raises per caught incident counts raises inside caught incidents (grace included)', () => {
    const incidents: Incident[] = [
      { sensor: 'a', start: at(10 * MIN), end: at(20 * MIN), kind: 'step' },
      { sensor: 'b', start: at(30 * MIN), end: at(31 * MIN), kind: 'spike' },
      { sensor: 'c', start: at(40 * MIN), end: at(50 * MIN), kind: 'drift' }, // missed
      { sensor: 'a', start: at(50 * MIN), end: at(55 * MIN), kind: 'dropout' }, // excluded
    ];
    const events = [
      ...raises('a', [10 * MIN, 12 * MIN, 15 * MIN, 20 * MIN + 2 * MIN], 30 * SEC), // 4 in [10, 20 + 2]
      ...raises('a', [23 * MIN, 52 * MIN], 30 * SEC), // outside the step (and in the excluded dropout)
      ...raises('b', [31 * MIN + 30 * SEC], 30 * SEC), // 1 in [30, 31 + 2]
    ];
    const labels = { incidents, graceMs: 2 * MIN, excludeKinds: ['dropout'] };
    const k = alertKpis(events, span(HOUR), {}, labels);
    expect(k.raisesPerCaught).toBe(5 / 2);
    // Without grace, b's raise (30 s after its end) misses: a alone, with 3 raises inside.
    expect(alertKpis(events, span(HOUR), {}, { ...labels, graceMs: 0 }).raisesPerCaught).toBe(3 / 1);
  });

  it('reads alert events with ISO times', () => {
    const e = kpiEventOf({
      id: 'x',
      sensor: 's',
      state: 'cleared',
      ts: '2026-01-05T06:01:00.000Z',
      since: '2026-01-05T06:00:00Z',
    });
    expect(e).toEqual({ id: 'x', sensor: 's', state: 'cleared', ts: T0 + MIN, since: T0 });
  });
});

describe('KPI targets', () => {
  it('names a source beside every target and judges the boundary values as the text says', () => {
    for (const t of KPI_TARGETS) expect(t.source.length).toBeGreaterThan(10);
    expect(targetFor('per10Min.peak')!.met(10)).toBe(true);
    expect(targetFor('per10Min.peak')!.met(11)).toBe(false);
    expect(targetFor('flood.share')!.met(0.0099)).toBe(true);
    expect(targetFor('flood.share')!.met(0.01)).toBe(false);
    expect(targetFor('chattering.sensors')!.met(0)).toBe(true);
    expect(targetFor('stale.count')!.met(5)).toBe(false);
  });
});
