/**
 * Golden streams for the anti-chattering settings: `deadband` (a raised alert clears only on
 * readings back inside the limits by that many spreads), `clearDelay` and `onDelay` (event time
 * the clearing readings, or the raise rule, must span). Same small world as
 * lifecycle.golden.test.ts: a 10 s window in 10 buckets of 1 s; 40 warm-up readings cycling
 * 10..19 in the first second become the baseline of every reading judged in the next second
 * (IQR about 5, upper fence about 24, mean 14.5, sd about 2.9). Every stream is also replayed with
 * a restore from encoded state at every cut, which must give the same events and bytes.
 */
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import type { Reading } from '../../../libs/engine/reading.js';
import { STATE_VERSION } from '../../../libs/engine/sensor-state.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';

const T0 = Date.UTC(2026, 4, 1, 6, 0, 0);
const S = 'press-12/oil-temp';
const NORMAL = 14;
const WARN = 26;
const WARM: Reading[] = Array.from({ length: 40 }, (_, i) => ({
  sensor: S,
  ts: T0 + i * 20,
  value: 10 + (i % 10),
}));

function engine(over: Record<string, unknown> = {}): Engine {
  return new Engine(
    validateConfig({ defaults: { window: '10s', buckets: 10, minSamples: 20, flatlineAfter: 0, ...over } }),
  );
}

/** Readings in the second bucket, `stepMs` apart, starting at T0 + 1000. */
function inSecondBucket(values: number[], stepMs = 1): Reading[] {
  return values.map((value, i) => ({ sensor: S, ts: T0 + 1000 + i * stepMs, value }));
}

/** Events of the stream after warm-up, per reading. */
function run(settings: Record<string, unknown>, stream: Reading[]): AlertEvent[][] {
  const e = engine(settings);
  for (const r of WARM) e.process(r);
  return stream.map((r) => [...e.process(r).events]);
}

const states = (evs: AlertEvent[][]) => evs.map((x) => x.map((ev) => ev.state).join(',') || '-');

/** Restoring from the encoding at every cut continues exactly as never stopping. */
function expectExactAtEveryCut(settings: Record<string, unknown>, stream: Reading[]): void {
  const all = [...WARM, ...stream];
  const live = engine(settings);
  const liveEvents = all.map((r) => JSON.stringify(live.process(r).events));
  for (let cut = WARM.length; cut < all.length; cut++) {
    const before = engine(settings);
    for (let i = 0; i < cut; i++) before.process(all[i]);
    const resumed = engine(settings);
    resumed.restore(before.encode(S)!);
    for (let i = cut; i < all.length; i++) {
      expect(JSON.stringify(resumed.process(all[i]).events)).toBe(liveEvents[i]);
    }
    expect(Buffer.from(resumed.encode(S)!).toString('hex')).toBe(
      Buffer.from(live.encode(S)!).toString('hex'),
    );
  }
}

/** The upper fence and IQR of the golden baseline, read from a raised event (not assumed). */
function fenceOfBaseline(): { upper: number; iqr: number } {
  const [raised] = run({ trigger: 'fence' }, inSecondBucket([WARN])).flat();
  return { upper: raised.baseline.upperFence!, iqr: raised.baseline.iqr! };
}

describe('deadband', () => {
  const { upper, iqr } = fenceOfBaseline();
  // Just above and just below the fence, by a tenth of the spread: a value hovering at the fence.
  const hover = Array.from({ length: 20 }, (_, i) => (i % 2 === 0 ? upper + 0.1 * iqr : upper - 0.1 * iqr));
  const base = { trigger: 'fence', clearAfter: 1 };

  it('the golden baseline is as the header says', () => {
    expect(iqr).toBeGreaterThan(4);
    expect(iqr).toBeLessThan(6);
    expect(upper).toBeGreaterThan(22);
    expect(upper).toBeLessThan(26);
  });

  it('without a deadband a value hovering at the fence raises on every crossing', () => {
    const events = run(base, inSecondBucket(hover)).flat();
    expect(events.filter((ev) => ev.state === 'raised')).toHaveLength(10);
    expect(events.filter((ev) => ev.state === 'cleared')).toHaveLength(10);
  });

  it('with a deadband the same hovering value raises once; it clears once back inside by the margin', () => {
    const stream = inSecondBucket([...hover, upper - 0.4 * iqr, upper - 0.6 * iqr]);
    const evs = run({ ...base, deadband: 0.5 }, stream);
    expect(states(evs)).toEqual([
      'raised',
      ...Array.from({ length: 19 }, () => '-'),
      '-', // inside the fence by 0.4 IQR: still within the deadband of 0.5
      'cleared', // inside by 0.6 IQR
    ]);
    const ids = new Set(evs.flat().map((ev) => ev.id));
    expect(ids.size).toBe(1);
    expectExactAtEveryCut({ ...base, deadband: 0.5 }, stream);
  });

  it('a reading within the deadband restarts the clear run (clearAfter counts settled readings in a row)', () => {
    const stream = inSecondBucket([WARN, NORMAL, upper - 0.2 * iqr, NORMAL, NORMAL, NORMAL]);
    expect(states(run({ trigger: 'fence', clearAfter: 3, deadband: 0.5 }, stream))).toEqual([
      'raised',
      '-',
      '-',
      '-',
      '-',
      'cleared',
    ]);
    expectExactAtEveryCut({ trigger: 'fence', clearAfter: 3, deadband: 0.5 }, stream);
  });

  it('the z rule takes the margin in standard deviations', () => {
    // trigger z: z limit 3 and a deadband of 1 → clears only at z <= 2 (mean 14.5, sd about 2.9).
    const [raised] = run({ trigger: 'z' }, inSecondBucket([WARN])).flat();
    const { mean, stdDev } = raised.baseline as { mean: number; stdDev: number };
    const stream = inSecondBucket([WARN, mean + 2.5 * stdDev, mean + 2.1 * stdDev, mean + 1.9 * stdDev]);
    expect(states(run({ trigger: 'z', clearAfter: 1, deadband: 1 }, stream))).toEqual([
      'raised',
      '-',
      '-',
      'cleared',
    ]);
    expect(states(run({ trigger: 'z', clearAfter: 1 }, stream))).toEqual(['raised', 'cleared', '-', '-']);
  });

  it('a deadband as wide as the warning level is refused', () => {
    expect(() => engine({ deadband: 1.5 })).toThrow(
      expect.objectContaining({ code: 'CONFIG_CONTRADICTION', message: expect.stringContaining('fenceK') }),
    );
    expect(() => engine({ trigger: 'z', zLimit: 2, deadband: 2 })).toThrow(
      expect.objectContaining({ code: 'CONFIG_CONTRADICTION', message: expect.stringContaining('zLimit') }),
    );
    // trigger z does not use the fences, so only the z limit bounds the margin
    expect(() => engine({ trigger: 'z', deadband: 2 })).not.toThrow();
    expect(() => engine({ deadband: -0.5 })).toThrow(expect.objectContaining({ code: 'CONFIG_INVALID' }));
  });
});

describe('clearDelay', () => {
  const settings = { clearAfter: 1, clearDelay: '200ms' };

  it('clears only once the clearing readings span the delay in event time', () => {
    // readings 50 ms apart: normal from 50 ms, so 250 ms is the first 200 ms after the clear run began
    const stream = inSecondBucket([WARN, NORMAL, NORMAL, NORMAL, NORMAL, NORMAL, NORMAL], 50);
    expect(states(run(settings, stream))).toEqual(['raised', '-', '-', '-', '-', 'cleared', '-']);
    expect(states(run({ clearAfter: 1 }, stream))).toEqual(['raised', 'cleared', '-', '-', '-', '-', '-']);
    expectExactAtEveryCut(settings, stream);
  });

  it('a flagged reading inside the delay starts it over', () => {
    const stream = inSecondBucket([WARN, NORMAL, NORMAL, WARN, NORMAL, NORMAL, NORMAL, NORMAL, NORMAL], 50);
    expect(states(run(settings, stream))).toEqual(['raised', '-', '-', '-', '-', '-', '-', '-', 'cleared']);
    expectExactAtEveryCut(settings, stream);
  });

  it('both clearAfter and clearDelay must be met', () => {
    const stream = inSecondBucket([WARN, NORMAL, NORMAL, NORMAL, NORMAL], 150);
    expect(states(run({ clearAfter: 3, clearDelay: '200ms' }, stream))).toEqual([
      'raised',
      '-',
      '-',
      'cleared',
      '-',
    ]);
  });
});

describe('onDelay', () => {
  const settings = { onDelay: '100ms' };

  it('raises once the raise rule has held for the delay; the alert is raised at that reading', () => {
    const stream = inSecondBucket([WARN, WARN, WARN, WARN, WARN, WARN, WARN], 20);
    const evs = run(settings, stream);
    expect(states(evs)).toEqual(['-', '-', '-', '-', '-', 'raised', '-']);
    expect(evs[5][0].since).toBe(new Date(T0 + 1100).toISOString());
    expectExactAtEveryCut(settings, stream);
  });

  it('a burst shorter than the delay never raises; a normal reading starts the delay over', () => {
    const stream = inSecondBucket([WARN, WARN, WARN, NORMAL, WARN, WARN, WARN, WARN, WARN, WARN], 20);
    expect(states(run(settings, stream))).toEqual(['-', '-', '-', '-', '-', '-', '-', '-', '-', 'raised']);
    expectExactAtEveryCut(settings, stream);
  });

  it('durations are validated', () => {
    expect(() => engine({ onDelay: 'soon' })).toThrow(
      expect.objectContaining({ code: 'CONFIG_INVALID', message: expect.stringContaining('onDelay') }),
    );
    expect(() => engine({ clearDelay: '40d' })).toThrow(expect.objectContaining({ code: 'CONFIG_INVALID' }));
    expect(() => engine({ clearDely: '1m' })).toThrow(
      expect.objectContaining({ code: 'CONFIG_UNKNOWN_KEY' }),
    );
  });

  it('per sensor glob, like every other setting', () => {
    const e = new Engine(
      validateConfig({
        defaults: { window: '10s', buckets: 10, minSamples: 20, flatlineAfter: 0 },
        sensors: [{ match: 'press-*/**', onDelay: '1s', deadband: 0.5, clearDelay: '30s' }],
      }),
    );
    expect(e.settingsFor(S)).toMatchObject({ onDelay: 1000, deadband: 0.5, clearDelay: 30_000 });
    expect(e.settingsFor('kiln-1/temp')).toMatchObject({ onDelay: 0, deadband: 0, clearDelay: 0 });
  });
});

describe('state from before the delays (version 6)', () => {
  // Written by main at 55de8a2 (STATE_VERSION 6): the 40 warm-up readings, then 14, 100 (raises a
  // critical alert) and 14 at T0 + 1014, 1100, 1014: an alert one reading into its clear run.
  const V6 =
    'U0YGEXByZXNzLTEyL29pbC10ZW1wKwAAAAAAACxAAQAAAAAAiMNACgDANPYh3nlCAABAWBB92kEAAAAAAAAIQFVVVVVVVUVAqqqqqqpCs0AAYC/2Id55QgDANPYh3nlCAAMAAAAAAAAsQAAAAAAAAFlAAAAAAAAALEABAAAAWBB92kEAAAAAAABEQAAAAAAAAC1AAAAAAACgdEAAAPD1Id55QgDAIPYh3nlCKAAAAAAAACRAAQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEAAIA/AQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEAAIA/AQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEAAIA/AQAAAAABAAAAAAEAAAAAAQEAAAABGDI3Y2UyNDgwZWZjYjliYmRjOTVkNWJjNgECEG91dGVyX2ZlbmNlX2hpZ2gGel9oaWdoAMA09iHeeUIBAQEAAAAAAAAAAFlAAAA=';
  const before = [...WARM, ...[14, 100, 14].map((v) => ({ sensor: S, ts: T0 + 1000 + v, value: v }))];
  const next = [14, 14, 14, 26].map((value, i) => ({ sensor: S, ts: T0 + 1200 + i * 100, value }));

  it('is read, and continues exactly like a state of this build (the clear run timed from its newest reading)', () => {
    // The clear run began with the newest reading, so a clear delay continues exactly too.
    for (const settings of [{}, { clearDelay: '150ms' }]) {
      const current = engine(settings);
      for (const r of before) current.process(r);
      const restored = engine(settings);
      const state = restored.restore(Uint8Array.from(Buffer.from(V6, 'base64')));
      expect(state.life.active?.clearRun).toBe(1);
      const a = next.map((r) => JSON.stringify(current.process(r).events));
      const b = next.map((r) => JSON.stringify(restored.process(r).events));
      expect(b).toEqual(a);
      expect(a.join()).toContain('"cleared"');
      expect(restored.encode(S)![2]).toBe(STATE_VERSION);
      expect(Buffer.from(restored.encode(S)!).toString('hex')).toBe(
        Buffer.from(current.encode(S)!).toString('hex'),
      );
    }
  });
});
