/**
 * Golden lifecycle tests on small hand-made streams. Config: a 10 s window in 10 buckets of 1 s,
 * so the first second of readings (the warm-up below) becomes the baseline once event time
 * enters the next second, and stays the baseline for every reading judged within that second.
 *
 * Warm-up: 40 readings cycling 10..19 during the first second. Baseline: median about 14.5,
 * IQR about 5, upper fence about 24, outer upper fence about 32, mean 14.5, sd 2.9 (z = 3 at
 * 23.2, z = 5 at 29). So 14 is normal, 26 is a warning (fence and z) and 100 is critical.
 */
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';

const T0 = Date.UTC(2026, 4, 1, 6, 0, 0);
const S = 'press-12/oil-temp';
const NORMAL = 14;
const WARN = 26;
const CRIT = 100;

function engine(over: Record<string, unknown> = {}): Engine {
  return new Engine(
    validateConfig({ defaults: { window: '10s', buckets: 10, minSamples: 20, flatlineAfter: 0, ...over } }),
  );
}

function warm(e: Engine, values?: number[]): void {
  const vs = values ?? Array.from({ length: 40 }, (_, i) => 10 + (i % 10));
  vs.forEach((v, i) => e.process({ sensor: S, ts: T0 + i * 20, value: v }));
}

/** Feed values one millisecond apart inside the second bucket; returns the events per reading. */
function feed(e: Engine, values: number[], from = T0 + 1000): AlertEvent[][] {
  return values.map((value, i) => [...e.process({ sensor: S, ts: from + i, value }).events]);
}

const states = (evs: AlertEvent[][]) =>
  evs.map((x) => x.map((ev) => `${ev.state}:${ev.severity}`).join(',') || '-');

describe('lifecycle golden streams', () => {
  it('the warm-up baseline is what the header says', () => {
    const e = engine();
    warm(e);
    feed(e, [NORMAL]);
    const st = e.get(S)!;
    const b = st.window.baseline()!;
    expect(b.count).toBe(40);
    expect(b.mean).toBe(14.5);
    expect(st.fences!.upper).toBeGreaterThan(22);
    expect(st.fences!.upper).toBeLessThan(WARN);
    expect(st.fences!.upperOuter).toBeLessThan(CRIT);
    expect((WARN - b.mean) / b.stdDev).toBeGreaterThan(3);
    expect((WARN - b.mean) / b.stdDev).toBeLessThan(5);
  });

  it('debounce: raiseAfter 2 of raiseWindow 3', () => {
    const e = engine({ raiseAfter: 2, raiseWindow: 3 });
    warm(e);
    const evs = feed(e, [WARN, NORMAL, NORMAL, WARN, NORMAL, WARN]);
    // 1 of 3, 1, 0, 1 of 3, 1 of 3, then [WARN, NORMAL, WARN] = 2 of 3 -> raised.
    expect(states(evs)).toEqual(['-', '-', '-', '-', '-', 'raised:warning']);
    expect(evs[5][0].flaggedReadings).toBe(2);
  });

  it('hysteresis: clearAfter 3 needs three unflagged readings in a row', () => {
    const e = engine({ clearAfter: 3 });
    warm(e);
    const evs = feed(e, [WARN, NORMAL, WARN, NORMAL, NORMAL, WARN, NORMAL, NORMAL, NORMAL]);
    expect(states(evs)).toEqual(['raised:warning', '-', '-', '-', '-', '-', '-', '-', 'cleared:warning']);
    const cleared = evs[8][0];
    expect(cleared.id).toBe(evs[0][0].id);
    expect(cleared.reasons).toEqual([]);
    expect(cleared.since).toBe(evs[0][0].ts);
    expect(cleared.flaggedReadings).toBe(3);
  });

  it('severity change while raised -> updated (both ways), same id; easing needs clearAfter milder readings', () => {
    const e = engine({ clearAfter: 3 });
    warm(e);
    const evs = feed(e, [WARN, CRIT, CRIT, WARN, CRIT, WARN, WARN, WARN, NORMAL, NORMAL, NORMAL]);
    expect(states(evs)).toEqual([
      'raised:warning',
      'updated:critical',
      '-',
      '-', // one milder reading is not enough to ease (hysteresis against warning/critical flapping)
      '-', // worse again: the ease count restarts
      '-',
      '-',
      'updated:warning', // three milder readings in a row
      '-',
      '-',
      'cleared:warning',
    ]);
    expect(evs[1][0].reasons).toEqual(['outer_fence_high', 'z_high']);
    expect(new Set(evs.flat().map((x) => x.id)).size).toBe(1);
    for (const ev of evs.flat()) expect(ev.notice).toBe(NOTICE);
  });

  it('flatline: the same value flatlineAfter times while the baseline has spread -> warning', () => {
    const e = engine({ flatlineAfter: 5 });
    warm(e);
    const evs = feed(e, [NORMAL, NORMAL, NORMAL, NORMAL, NORMAL, NORMAL, 15]);
    expect(states(evs)).toEqual(['-', '-', '-', '-', 'raised:warning', '-', '-']);
    expect(evs[4][0].reasons).toEqual(['flatline']);
    expect(evs[4][0].message).toContain('5 readings in a row');
  });

  it('one-sided sensors: direction high ignores low outliers, direction low ignores high ones', () => {
    const high = engine({ direction: 'high' });
    warm(high);
    expect(states(feed(high, [-CRIT, -CRIT, CRIT]))).toEqual(['-', '-', 'raised:critical']);
    const low = engine({ direction: 'low' });
    warm(low);
    const evs = feed(low, [CRIT, CRIT, -CRIT]);
    expect(states(evs)).toEqual(['-', '-', 'raised:critical']);
    expect(evs[2][0].reasons).toEqual(['outer_fence_low', 'z_low']);
  });

  it('physical limits: critical limit_high / limit_low, even before any baseline', () => {
    const e = engine({ min: 0, max: 50 });
    const first = e.process({ sensor: S, ts: T0, value: 60 });
    expect(first.accepted && first.verdict.evaluated).toBe(false);
    expect(first.events.map((x) => [x.state, x.severity, x.reasons])).toEqual([
      ['raised', 'critical', ['limit_high']],
    ]);
    expect(first.events[0].baseline.count).toBe(0);
    expect(first.events[0].z).toBeNull();
    const e2 = engine({ min: 0, max: 50 });
    expect(e2.process({ sensor: S, ts: T0, value: -1 }).events[0].reasons).toEqual(['limit_low']);
    // Limits ignore direction.
    const e3 = engine({ min: 0, direction: 'high' });
    expect(e3.process({ sensor: S, ts: T0, value: -1 }).events[0].reasons).toEqual(['limit_low']);
  });

  it('zero spread: constant baseline gives z and robustZ null, no NaN anywhere, departs_constant', () => {
    const e = engine();
    warm(e, Array(40).fill(7));
    const evs = feed(e, [7, 7.5]);
    expect(states(evs)).toEqual(['-', 'raised:warning']);
    const ev = evs[1][0];
    expect(ev.reasons).toEqual(['departs_constant']);
    expect(ev.z).toBeNull();
    expect(ev.robustZ).toBeNull();
    expect(ev.baseline.iqr).toBe(0);
    expect(ev.baseline.stdDev).toBe(0);
    const nonFinite: string[] = [];
    const walk = (v: unknown, path: string) => {
      if (typeof v === 'number' && !Number.isFinite(v)) nonFinite.push(path);
      else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x, `${path}.${k}`);
    };
    walk(ev, 'event');
    expect(nonFinite).toEqual([]);
    expect(ev.message).not.toMatch(/NaN|Infinity/);
    // direction high ignores a drop off the constant
    const hi = engine({ direction: 'high' });
    warm(hi, Array(40).fill(7));
    expect(states(feed(hi, [6, 8]))).toEqual(['-', 'raised:warning']);
  });

  it('minSamples warm-up: no statistical judgement until the baseline holds minSamples readings', () => {
    const e = engine({ minSamples: 60 });
    warm(e); // 40 readings in the first bucket
    const cold = e.process({ sensor: S, ts: T0 + 1000, value: CRIT });
    expect(cold.accepted && cold.verdict.evaluated).toBe(false);
    expect(cold.events).toEqual([]);
    for (let i = 1; i < 40; i++) e.process({ sensor: S, ts: T0 + 1000 + i * 20, value: 10 + (i % 10) });
    const hot = e.process({ sensor: S, ts: T0 + 2000, value: CRIT });
    expect(hot.accepted && hot.verdict.evaluated).toBe(true);
    expect(hot.events.map((x) => x.state)).toEqual(['raised']);
  });

  it('alert ids are deterministic: same stream, same ids; a different raising reading, a different id', () => {
    const run = (raiseTs: number) => {
      const e = engine();
      warm(e);
      return feed(e, [NORMAL, WARN, NORMAL, NORMAL, NORMAL], raiseTs)
        .flat()
        .map((x) => x.id);
    };
    const a = run(T0 + 1000);
    expect(a).toHaveLength(2);
    expect(run(T0 + 1000)).toEqual(a);
    expect(run(T0 + 1001)[0]).not.toBe(a[0]);
    expect(a[0]).toMatch(/^[0-9a-f]{24}$/);
  });

  it('learnWhileRaised false keeps readings taken while raised out of the baseline', () => {
    const count = (learn: boolean) => {
      const e = engine({ learnWhileRaised: learn });
      warm(e);
      feed(e, [NORMAL, WARN, CRIT, CRIT, NORMAL, NORMAL, NORMAL, NORMAL]);
      const w = e.get(S)!.window;
      return { open: w.openMoments.n };
    };
    // Raised from WARN up to and including the clearing reading: 6 readings kept out.
    expect(count(false).open).toBe(2);
    expect(count(true).open).toBe(8);
  });

  it('late readings are rejected with reason "late" and leave the state untouched', () => {
    const e = engine();
    warm(e);
    feed(e, [NORMAL], T0 + 12_000);
    const before = Buffer.from(e.encode(S)!).toString('hex');
    const out = e.process({ sensor: S, ts: T0 + 1_999, value: CRIT });
    expect(out.accepted).toBe(false);
    expect(out.accepted ? null : out.reason).toBe('late');
    expect(out.events).toEqual([]);
    expect(e.counters.late).toBe(1);
    expect(Buffer.from(e.encode(S)!).toString('hex')).toBe(before);
    // Exactly at the window's edge is still accepted.
    expect(e.process({ sensor: S, ts: T0 + 2_000, value: NORMAL }).accepted).toBe(true);
  });
});
