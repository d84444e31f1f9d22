import { describe, expect, it } from 'vitest';
import { FLOOD_LIMIT } from '../../../libs/schema/vocabulary.js';
import { score, worstWindow } from '../../../libs/scoring/score.js';
import type { Incident } from '../../../libs/scoring/labels.js';

const MIN = 60_000;
const T0 = Date.UTC(2026, 0, 5);
const at = (m: number) => T0 + m * MIN;
const inc = (sensor: string, s: number, e: number, kind = 'spike'): Incident => ({
  sensor,
  start: at(s),
  end: at(e),
  kind,
});
const span = { dataStart: at(0), dataEnd: at(600) }; // 10 hours

describe('score: hand-made cases', () => {
  it('counts caught incidents and true alerts exactly, with the default 120 s grace', () => {
    const incidents = [inc('a', 10, 20, 'step'), inc('a', 100, 100, 'spike'), inc('b', 50, 60, 'drift')];
    const raised = [
      { sensor: 'a', ts: at(15) }, // inside a's step -> true, catches it
      { sensor: 'a', ts: at(102) }, // 2 min after the spike's end: exactly at the grace edge -> true, catches it
      { sensor: 'b', ts: at(62) + 1 }, // 1 ms past b's grace -> false; b's drift is missed
      { sensor: 'c', ts: at(300) }, // no incident on c -> false
      { sensor: 'b', ts: at(10) }, // the right time of another sensor's incident -> false
    ];
    const s = score(incidents, raised, span);
    expect(s.incidents).toBe(3);
    expect(s.caught).toBe(2);
    expect(s.recall).toBeCloseTo(2 / 3, 12);
    expect(s.raised).toBe(5);
    expect(s.trueRaised).toBe(2);
    expect(s.precision).toBeCloseTo(0.4, 12);
    expect(s.hours).toBe(10);
    expect(s.alertsPerHour).toBeCloseTo(0.5, 12);
    expect(s.recallByKind).toEqual({
      step: { incidents: 1, caught: 1, recall: 1 },
      spike: { incidents: 1, caught: 1, recall: 1 },
      drift: { incidents: 1, caught: 0, recall: 0 },
    });
  });

  it('an alert before the start does not catch the incident; several alerts in one incident are all true', () => {
    const incidents = [inc('a', 10, 20)];
    const raised = [
      { sensor: 'a', ts: at(10) - 1 },
      { sensor: 'a', ts: at(10) },
      { sensor: 'a', ts: at(20) },
    ];
    const s = score(incidents, raised, span);
    expect(s.caught).toBe(1);
    expect(s.trueRaised).toBe(2);
    expect(s.precision).toBeCloseTo(2 / 3, 12);
  });

  it('leaves dropouts out of the headline recall but reports them per kind, and counts alerts in them as true', () => {
    const incidents = [inc('a', 10, 20, 'step'), inc('a', 100, 160, 'dropout')];
    const raised = [
      { sensor: 'a', ts: at(12) },
      { sensor: 'a', ts: at(161) },
    ];
    const s = score(incidents, raised, span);
    expect(s.incidents).toBe(1);
    expect(s.recall).toBe(1);
    expect(s.recallByKind.dropout).toEqual({ incidents: 1, caught: 1, recall: 1 });
    expect(s.trueRaised).toBe(2);
  });

  it('overlapping incidents of one sensor: an alert inside the longer one is true even after the shorter ended', () => {
    const incidents = [inc('a', 0, 100), inc('a', 10, 20)];
    const s = score(incidents, [{ sensor: 'a', ts: at(50) }], span);
    expect(s.trueRaised).toBe(1);
    expect(s.caught).toBe(1); // only the long one
  });

  it('custom grace', () => {
    const s = score([inc('a', 10, 20)], [{ sensor: 'a', ts: at(25) }], { ...span, graceMs: 5 * MIN });
    expect(s.recall).toBe(1);
    expect(s.precision).toBe(1);
  });

  it('edge cases: no incidents -> recall null; no alerts -> precision null; zero span -> rate null', () => {
    const none = score([], [{ sensor: 'a', ts: at(1) }], span);
    expect(none.recall).toBeNull();
    expect(none.precision).toBe(0);
    const quiet = score([inc('a', 1, 2)], [], span);
    expect(quiet.recall).toBe(0);
    expect(quiet.precision).toBeNull();
    expect(quiet.alertsPerHour).toBe(0);
    expect(quiet.worst10min).toBe(0);
    const flat = score([], [], { dataStart: at(5), dataEnd: at(5) });
    expect(flat.alertsPerHour).toBeNull();
    const onlyDropouts = score([inc('a', 1, 2, 'dropout')], [], span);
    expect(onlyDropouts.recall).toBeNull();
    const unkinded = score([inc('a', 1, 2, '')], [{ sensor: 'a', ts: at(1) }], span);
    expect(unkinded.recallByKind['(none)']).toEqual({ incidents: 1, caught: 1, recall: 1 });
  });
});

describe('worst 10-minute window and flood', () => {
  it('windows are half-open [t, t + 10 min)', () => {
    expect(worstWindow([0, 1, 2], 10)).toBe(3);
    expect(worstWindow([0, 10], 10)).toBe(1);
    expect(worstWindow([0, 9.999], 10)).toBe(2);
    expect(worstWindow([], 10)).toBe(0);
    expect(worstWindow([30, 0, 5, 31, 32, 33], 10)).toBe(4);
  });

  it('exactly 10 alerts in 10 minutes is not a flood; 11 is', () => {
    expect(FLOOD_LIMIT).toBe(10);
    const ten = Array.from({ length: 10 }, (_, i) => ({ sensor: `s${i}`, ts: at(1) + i * 1000 }));
    expect(score([], ten, span)).toMatchObject({ worst10min: 10, flood: false });
    const eleven = [...ten, { sensor: 'x', ts: at(1) + 9.99 * MIN }];
    expect(score([], eleven, span)).toMatchObject({ worst10min: 11, flood: true });
    const spread = [...ten, { sensor: 'x', ts: at(11) }]; // the 11th falls outside any 10-min window with all ten
    expect(score([], spread, span)).toMatchObject({ worst10min: 10, flood: false });
  });
});
