/**
 * Crash safety: encoded sensor state must resume EXACTLY. For random streams and random cut
 * points, an engine restored from the encoded state at the cut continues with the same events and
 * the same subsequent encoded bytes as an engine that never stopped (this is what makes a live
 * run after a crash equal to a replay), and encode(restore(encode(s))) is byte-identical.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import type { Reading } from '../../../libs/engine/reading.js';

const T0 = Date.UTC(2026, 2, 1);
const SENSORS = ['boiler-1/temp', 'boiler-1/pressure', 'fan-9/vibration'];

const configArb = fc.record({
  learnWhileRaised: fc.boolean(),
  raiseAfter: fc.integer({ min: 1, max: 2 }),
  clearAfter: fc.integer({ min: 1, max: 4 }),
  flatlineAfter: fc.constantFrom(0, 3, 5),
  minSamples: fc.integer({ min: 2, max: 20 }),
  trigger: fc.constantFrom('fence', 'z', 'either', 'both'),
  direction: fc.constantFrom('both', 'high', 'low'),
  badQualityAfter: fc.constantFrom(0, 1, 3),
  staleAfter: fc.constantFrom('off', '1s', '4s'),
  deadband: fc.constantFrom(0, 0.5, 1),
  clearDelay: fc.constantFrom(0, '300ms', '2s'),
  onDelay: fc.constantFrom(0, '200ms', '1s'),
});

/** Mostly good readings (no field), runs of doubtful ones now and then. */
const qualityArb = fc.oneof(
  { weight: 12, arbitrary: fc.constant(undefined) },
  { weight: 1, arbitrary: fc.constantFrom('uncertain' as const, 'bad' as const) },
);

const valueArb = fc.oneof(
  { weight: 6, arbitrary: fc.integer({ min: 40, max: 60 }) },
  { weight: 3, arbitrary: fc.double({ min: -1e3, max: 1e3, noNaN: true, noDefaultInfinity: true }) },
  { weight: 1, arbitrary: fc.constantFrom(500, -500, 1e9, 0, -0) },
);

/** Steps in event time: mostly forward (some bucket rolls and long gaps), sometimes backwards. */
const stepArb = fc.oneof(
  { weight: 40, arbitrary: fc.integer({ min: 0, max: 300 }) },
  { weight: 2, arbitrary: fc.integer({ min: -12_000, max: -1 }) },
  { weight: 1, arbitrary: fc.integer({ min: 1_000, max: 15_000 }) },
);

const streamArb = fc
  .array(fc.tuple(fc.integer({ min: 0, max: SENSORS.length - 1 }), stepArb, valueArb, qualityArb), {
    minLength: 150,
    maxLength: 600,
    size: 'max',
  })
  .map((rows) => {
    let ts = T0;
    return rows.map(([s, d, value, quality]): Reading => {
      ts = Math.max(0, ts + d);
      return quality === undefined
        ? { sensor: SENSORS[s], ts, value }
        : { sensor: SENSORS[s], ts, value, quality };
    });
  });

function engineFor(settings: Record<string, unknown>): Engine {
  return new Engine(
    validateConfig({ defaults: { window: '10s', buckets: 10, raiseWindow: 3, ...settings } }),
  );
}

const bytesOf = (e: Engine) => SENSORS.map((s) => e.encode(s));
const hex = (b: Uint8Array | null) => (b === null ? null : Buffer.from(b).toString('hex'));

describe('state encode/restore round-trips exactly (property)', () => {
  it('continuing after a restore at any cut gives the same events and bytes as never stopping', () => {
    let eventsCompared = 0;
    let restoredWithBaseline = 0;
    fc.assert(
      fc.property(
        configArb,
        streamArb,
        fc.noBias(fc.integer({ min: 0, max: 999_999 })),
        (cfg, stream, cutAt) => {
          const cut = Math.floor((cutAt / 1_000_000) * stream.length);
          const live = engineFor(cfg);
          const liveEvents: unknown[] = [];
          const liveOutcomes: unknown[] = [];
          stream.forEach((r, i) => {
            const out = live.process(r);
            if (i >= cut) {
              liveEvents.push(...out.events);
              liveOutcomes.push(out.accepted ? out.verdict : out.reason);
            }
          });

          const before = engineFor(cfg);
          for (let i = 0; i < cut; i++) before.process(stream[i]);
          const saved = bytesOf(before);
          const resumed = engineFor(cfg);
          for (const b of saved)
            if (b !== null && resumed.restore(b).window.baseline() !== null) restoredWithBaseline++;
          // encode(restore(encode(s))) is byte-identical
          expect(bytesOf(resumed).map(hex)).toEqual(saved.map(hex));

          const resumedEvents: unknown[] = [];
          const resumedOutcomes: unknown[] = [];
          for (let i = cut; i < stream.length; i++) {
            const out = resumed.process(stream[i]);
            resumedEvents.push(...out.events);
            resumedOutcomes.push(out.accepted ? out.verdict : out.reason);
          }
          expect(JSON.stringify(resumedEvents)).toBe(JSON.stringify(liveEvents));
          eventsCompared += liveEvents.length;
          expect(resumedOutcomes).toEqual(liveOutcomes);
          expect(bytesOf(resumed).map(hex)).toEqual(bytesOf(live).map(hex));
        },
      ),
      { numRuns: 150 },
    );
    // The property is not vacuous: real alert events and warm baselines crossed the cut.
    console.log(
      `[roundtrip] events compared ${eventsCompared}, restored warm states ${restoredWithBaseline}`,
    );
    expect(eventsCompared).toBeGreaterThan(50);
    expect(restoredWithBaseline).toBeGreaterThan(100);
  });

  it('a long stream with many bucket rolls and open-bucket buffer merges resumes exactly', () => {
    // 3,000 readings in each 1 s bucket: the open bucket merges its buffer (SKETCH.openCap) many
    // times per bucket, so the cut often falls with a part-filled buffer.
    const stream: Reading[] = [];
    let x = 12345;
    for (let i = 0; i < 20_000; i++) {
      x = (x * 1103515245 + 12345) % 2147483648;
      stream.push({
        sensor: SENSORS[0],
        ts: T0 + Math.floor(i / 3),
        value: (x / 2147483648) * 100 + (i % 997 === 0 ? 400 : 0),
      });
    }
    for (const cut of [1, 2_999, 3_001, 10_007, 19_999]) {
      const live = engineFor({ minSamples: 50 });
      const liveEvents = stream.flatMap((r, i) =>
        i >= cut ? live.process(r).events : (live.process(r), []),
      );
      const before = engineFor({ minSamples: 50 });
      for (let i = 0; i < cut; i++) before.process(stream[i]);
      const resumed = engineFor({ minSamples: 50 });
      resumed.restore(before.encode(SENSORS[0])!);
      const resumedEvents = stream.slice(cut).flatMap((r) => resumed.process(r).events);
      if (cut < 10_000) expect(liveEvents.length).toBeGreaterThan(0);
      expect(JSON.stringify(resumedEvents)).toBe(JSON.stringify(liveEvents));
      expect(hex(resumed.encode(SENSORS[0]))).toBe(hex(live.encode(SENSORS[0])));
    }
  });

  it('corrupt or foreign bytes are refused with STATE_CORRUPT / STATE_VERSION, never a crash', () => {
    const e = engineFor({});
    for (let i = 0; i < 50; i++) e.process({ sensor: SENSORS[0], ts: T0 + i * 100, value: 50 + (i % 7) });
    const good = e.encode(SENSORS[0])!;
    expect(() => e.restore(Uint8Array.from([1, 2, 3]))).toThrow(
      expect.objectContaining({ code: 'STATE_CORRUPT' }),
    );
    const wrongVersion = Uint8Array.from(good);
    wrongVersion[2] = 99;
    expect(() => e.restore(wrongVersion)).toThrow(expect.objectContaining({ code: 'STATE_VERSION' }));
    expect(() => e.restore(good.subarray(0, good.length - 3))).toThrow(
      expect.objectContaining({ code: 'STATE_CORRUPT' }),
    );
    const trailing = new Uint8Array(good.length + 1);
    trailing.set(good);
    expect(() => e.restore(trailing)).toThrow(expect.objectContaining({ code: 'STATE_CORRUPT' }));
    fc.assert(
      fc.property(
        fc.integer({ min: 3, max: good.length - 1 }),
        fc.integer({ min: 0, max: 255 }),
        (pos, byte) => {
          const b = Uint8Array.from(good);
          b[pos] = byte;
          try {
            engineFor({}).restore(b);
          } catch (err) {
            expect((err as { code?: string }).code).toMatch(/^STATE_/);
          }
        },
      ),
      { numRuns: 300 },
    );
  });
});
