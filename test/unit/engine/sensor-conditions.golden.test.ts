/**
 * Golden streams for the alerts about a sensor itself: readings of doubtful quality
 * (bad_quality) and silence (stale). Same small world as lifecycle.golden.test.ts: a 10 s window in 10 buckets of
 * 1 s; 40 warm-up readings cycling 10..19 in the first second, so 14 is normal, 26 a warning and
 * 100 critical once event time enters the next second. Every stream is also replayed with a
 * restore from encoded state at every cut point, which must give the same events and bytes.
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
const CRIT = 100;
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

/** Readings one millisecond apart inside the second bucket. */
function inSecondBucket(rows: [number, Reading['quality']?][]): Reading[] {
  return rows.map(([value, quality], i) =>
    quality === undefined
      ? { sensor: S, ts: T0 + 1000 + i, value }
      : { sensor: S, ts: T0 + 1000 + i, value, quality },
  );
}

const label = (evs: readonly AlertEvent[]) =>
  evs.map((ev) => `${ev.state}:${ev.reasons.join('+') || '-'}`).join(',') || '-';

/** Events per reading of an uninterrupted run, and the final encoded states. */
function run(
  over: Record<string, unknown>,
  stream: Reading[],
  partitionOf: (sensor: string) => number = () => 0,
) {
  const e = engine(over);
  const events = stream.map((r) => [...e.process(r, partitionOf(r.sensor)).events]);
  return { engine: e, events };
}

const sensorsOf = (stream: Reading[]) => [...new Set(stream.map((r) => r.sensor))].sort();
const hexStates = (e: Engine, sensors: string[]) =>
  sensors.map((s) => {
    const b = e.encode(s);
    return b === null ? null : Buffer.from(b).toString('hex');
  });

/**
 * Stop at every cut, encode every sensor, restore into a fresh engine and go on: the events after
 * the cut and the final bytes must equal the uninterrupted run's.
 */
function expectExactAtEveryCut(
  over: Record<string, unknown>,
  stream: Reading[],
  partitionOf: (sensor: string) => number = () => 0,
): void {
  const whole = run(over, stream, partitionOf);
  const sensors = sensorsOf(stream);
  for (let cut = 0; cut <= stream.length; cut++) {
    const before = engine(over);
    for (let i = 0; i < cut; i++) before.process(stream[i], partitionOf(stream[i].sensor));
    const resumed = engine(over);
    for (const s of sensors) {
      const bytes = before.encode(s);
      if (bytes !== null) resumed.restore(bytes, partitionOf(s));
    }
    const after = stream.slice(cut).map((r) => [...resumed.process(r, partitionOf(r.sensor)).events]);
    expect(JSON.stringify(after), `events after a restore at cut ${cut}`).toBe(
      JSON.stringify(whole.events.slice(cut)),
    );
    expect(hexStates(resumed, sensors), `state bytes after a restore at cut ${cut}`).toEqual(
      hexStates(whole.engine, sensors),
    );
  }
}

describe('reading quality golden streams', () => {
  const stream = [
    ...WARM,
    ...inSecondBucket([
      [NORMAL],
      [CRIT, 'bad'], // not judged: no reading alert
      [CRIT, 'bad'],
      [CRIT, 'uncertain'], // third doubtful in a row -> bad_quality raised
      [CRIT, 'bad'],
      [NORMAL], // good again -> cleared
      [CRIT], // judged again: a critical reading alert
      [NORMAL, 'bad'],
      [NORMAL],
    ]),
  ];

  it('doubtful readings are neither judged nor learned; badQualityAfter in a row raise bad_quality, the next good one clears it', () => {
    const { engine: e, events } = run({ badQualityAfter: 3 }, stream);
    const tail = events.slice(WARM.length);
    expect(tail.map(label)).toEqual([
      '-',
      '-',
      '-',
      'raised:bad_quality',
      '-',
      'cleared:-',
      'raised:outer_fence_high+z_high',
      '-',
      '-',
    ]);
    const raised = tail[3][0];
    expect(raised).toMatchObject({
      sensor: S,
      severity: 'warning',
      value: CRIT,
      flaggedReadings: 3,
      z: null,
    });
    expect(raised.message).toBe(
      `${S} is sending readings of doubtful quality (warning): 3 in a row, the newest uncertain, 100 at ${new Date(T0 + 1003).toISOString()}; they are neither judged nor learned until good readings return; since ${new Date(T0 + 1003).toISOString()}.`,
    );
    const cleared = tail[5][0];
    expect(cleared.id).toBe(raised.id);
    expect(cleared.flaggedReadings).toBe(4);
    expect(cleared.message).toContain('sends good readings again: 14');
    // The reading alert has an id of its own.
    expect(tail[6][0].id).not.toBe(raised.id);
    // Only the four good readings of the second bucket went into its open bucket: 14, 14, 100, 14.
    expect(e.get(S)!.window.openMoments.n).toBe(4);
    expect(e.counters.quality).toEqual({ good: 40 + 4, uncertain: 1, bad: 4 });
    expect(e.counters.readings).toBe(stream.length);
    expect(e.counters.evaluated).toBe(4);
  });

  it('badQualityAfter 0 never raises; the counts stay', () => {
    const { engine: e, events } = run({ badQualityAfter: 0 }, stream);
    expect(
      events
        .slice(WARM.length)
        .map(label)
        .filter((l) => l.includes('bad_quality')),
    ).toEqual([]);
    expect(e.counters.quality.bad).toBe(4);
  });

  it('a bad_quality alert survives a restore at every cut point, exactly', () => {
    expectExactAtEveryCut({ badQualityAfter: 3 }, stream);
    expectExactAtEveryCut({ badQualityAfter: 1 }, stream);
  });

  it('a sensor with a raised bad_quality alert is not evicted', () => {
    const e = engine({ badQualityAfter: 2 });
    for (const r of [
      ...WARM,
      ...inSecondBucket([
        [1, 'bad'],
        [1, 'bad'],
      ]),
    ])
      e.process(r);
    e.process({ sensor: 'other', ts: T0 + 60_000, value: 1 });
    expect(e.evictIdle()).toBe(0);
    expect(e.get(S)!.qualityAlert).not.toBeNull();
  });
});

describe('silent sensor golden streams', () => {
  const A = 'kiln-1/flue-temp';
  const B = 'kiln-1/draft';
  const C = 'kiln-1/damper';
  // A every second for 30 s; B every second until 8.5 s, silent until 18.5 s; C once at 0.25 s.
  const stream: Reading[] = [];
  for (let i = 0; i <= 30; i++) {
    stream.push({ sensor: A, ts: T0 + i * 1000, value: 40 + (i % 3) });
    if (i <= 8 || i >= 18) stream.push({ sensor: B, ts: T0 + i * 1000 + 500, value: 7.5 });
    if (i === 0) stream.push({ sensor: C, ts: T0 + 250, value: 3 });
  }

  it('a sensor silent for more than staleAfter of its partition event time raises stale; its next reading clears it', () => {
    const { engine: e, events } = run({ staleAfter: '5s' }, stream);
    const all = events.flat().map((ev) => `${ev.sensor}:${ev.state}:${ev.reasons.join('+') || '-'}:${ev.ts}`);
    const at = (ms: number) => new Date(T0 + ms).toISOString();
    expect(all).toEqual([
      `${C}:raised:stale:${at(5500)}`, // C's newest 0.25 s + 5 s passed at B's reading at 5.5 s
      `${B}:raised:stale:${at(14000)}`, // B's newest 8.5 s + 5 s passed at A's reading at 14 s
      `${B}:cleared:-:${at(18500)}`,
    ]);
    const raised = events.flat().find((ev) => ev.sensor === B && ev.state === 'raised')!;
    expect(raised).toMatchObject({ severity: 'warning', value: 7.5, since: at(14000), z: null });
    expect(raised.message).toBe(`${B} is silent (warning): no reading for 5 s; last 7.5 at ${at(8500)}.`);
    const cleared = events.flat().find((ev) => ev.sensor === B && ev.state === 'cleared')!;
    expect(cleared.id).toBe(raised.id);
    expect(cleared.message).toBe(
      `${B} reports again: 7.5 at ${at(18500)}; it had been silent since ${at(14000)}.`,
    );
    expect(e.activeAlertCount()).toBe(1); // C stays silent
    expect(e.evictIdle()).toBe(0); // and is kept: its clear must still be published
  });

  it('staleAfter off (the default) raises nothing', () => {
    expect(run({}, stream).events.flat()).toEqual([]);
  });

  it('event time is per partition: a sensor alone on its partition is never silent by another partition', () => {
    const partitionOf = (sensor: string) => (sensor === A ? 0 : 1);
    const events = run({ staleAfter: '5s' }, stream, partitionOf).events.flat();
    // B and C share partition 1: C falls silent by B's readings, B's gap moves no clock of its own.
    expect(events.map((ev) => `${ev.sensor}:${ev.state}`)).toEqual([`${C}:raised`]);
    expect(events[0].ts).toBe(new Date(T0 + 5500).toISOString());
  });

  it('survives a restore at every cut point, exactly (one partition and two)', () => {
    expectExactAtEveryCut({ staleAfter: '5s' }, stream);
    expectExactAtEveryCut({ staleAfter: '5s' }, stream, (sensor) => (sensor === A ? 0 : 1));
    expectExactAtEveryCut({ staleAfter: '2s', badQualityAfter: 2 }, [
      ...stream.slice(0, 20),
      ...stream.slice(20).map((r, i) => (i % 3 === 0 ? { ...r, quality: 'bad' as const } : r)),
    ]);
  });
});

describe('older state encodings', () => {
  // Written by the build before reading quality (STATE_VERSION 3, main at c137f66): the 40 warm-up
  // readings above, then 14, 100 (raises a critical alert) and 14 at T0 + 1014, 1100, 1014.
  const V3 =
    'U0YDEXByZXNzLTEyL29pbC10ZW1wKwAAAAAAACxAAQAAAAAAiMNACgDANPYh3nlCAABAWBB92kEAAAAAAAAIQFVVVVVVVUVAqqqqqqpCs0AAYC/2Id55QgDANPYh3nlCAAMAAAAAAAAsQAAAAAAAAFlAAAAAAAAALEABAAAAWBB92kEAAAAAAABEQAAAAAAAAC1AAAAAAACgdEAAAPD1Id55QgDAIPYh3nlCJwAAAAAAACRAAQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEAAIA/AQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAD8CAAAAPwEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEAAIA/AQAAAAABAAAAAAEAAAAAAQAAgD8BAAAAAAEAAAAAAQAAAAABAACAPwEAAAAAAQAAAAABAAAAAAEBAAAAARgyN2NlMjQ4MGVmY2I5YmJkYzk1ZDViYzYBAhBvdXRlcl9mZW5jZV9oaWdoBnpfaGlnaADANPYh3nlCAQEB';
  const before = [...WARM, ...[14, 100, 14].map((v) => ({ sensor: S, ts: T0 + 1000 + v, value: v }))];
  const next = inSecondBucket([[14], [14], [14], [26]]).map((r) => ({ ...r, ts: r.ts + 200 }));

  it('a version 3 state is read and continues exactly like a state of this build', () => {
    const current = engine();
    for (const r of before) current.process(r);
    const restored = engine();
    const state = restored.restore(Uint8Array.from(Buffer.from(V3, 'base64')));
    expect(state.life.active?.reasons).toEqual(['outer_fence_high', 'z_high']);
    expect(state.doubtfulRun).toBe(0);
    expect(state.qualityAlert).toBeNull();
    // The old build compressed its buckets with the classic t-digest bound; this build keeps 40
    // readings exactly, so sketch-derived figures (percentile ranks) may differ in the last digits,
    // but the lifecycle, fences and moments continue exactly.
    const lifecycleOf = (events: (readonly AlertEvent[])[]) =>
      events.map((list) =>
        list.map(({ id, state, severity, reasons, value, ts, baseline, z }) => ({
          id,
          state,
          severity,
          reasons,
          value,
          ts,
          fences: [baseline?.lowerFence, baseline?.upperFence, baseline?.mean, baseline?.count],
          z,
        })),
      );
    const a = next.map((r) => current.process(r).events);
    const b = next.map((r) => restored.process(r).events);
    expect(JSON.stringify(lifecycleOf(b))).toBe(JSON.stringify(lifecycleOf(a)));
    expect(a.flat().map((ev) => ev.state)).toContain('cleared');
    // The upgraded state is written in this build's version and restores exactly from there on.
    const reread = engine();
    reread.restore(restored.encode(S)!);
    expect(Buffer.from(reread.encode(S)!).toString('hex')).toBe(
      Buffer.from(restored.encode(S)!).toString('hex'),
    );
    expect(restored.encode(S)![2]).toBe(STATE_VERSION);
  });

  it('a version this build does not know is refused with a message saying what to do', () => {
    const bytes = Uint8Array.from(Buffer.from(V3, 'base64'));
    bytes[2] = 2;
    expect(() => engine().restore(bytes)).toThrow(
      expect.objectContaining({
        code: 'STATE_VERSION',
        message: expect.stringContaining('delete the state'),
      }),
    );
  });
});
