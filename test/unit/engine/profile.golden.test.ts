/**
 * Time-of-day profiles (`profile: daily`): golden behaviour on an invented daily cycle, restore at
 * every cut point, daylight saving in a real zone (Europe/Berlin: the 23 h day 2026-03-29 and the
 * 25 h day 2026-10-25, dates from the EU summer-time rule: last Sunday of March and of October,
 * 01:00 UTC), the old state version still read, and the profile's quartiles against exact ones.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { quantileSorted } from 'simple-statistics';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import { LocalClock } from '../../../libs/engine/local-time.js';
import { DailyProfile } from '../../../libs/engine/profile.js';
import type { Reading } from '../../../libs/engine/reading.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { exactRank } from '../../../libs/stats/quantiles.js';
import { Prng } from '../../../libs/sim/prng.js';

const MIN = 60_000;
const HOUR = 3_600_000;
const DAY = 86_400_000;
const T0 = Date.UTC(2026, 2, 1);

/** An invented pump that runs by day: 10 at night, 50 from 08:00 to 18:00 UTC, noise sd 1. */
function dailyStream(days: number, seed = 7, sensor = 'site-a/pump-3/flow'): Reading[] {
  const rng = new Prng(seed);
  const out: Reading[] = [];
  for (let ts = T0; ts < T0 + days * DAY; ts += MIN) {
    const hour = new Date(ts).getUTCHours();
    const level = hour >= 8 && hour < 18 ? 50 : 10;
    out.push({ sensor, ts, value: Math.round((level + rng.normal()) * 100) / 100 });
  }
  return out;
}

/** The stream with the daytime level planted at night on the last day, 03:00-03:30 UTC. */
function withNightFault(stream: Reading[], day: number): Reading[] {
  const from = T0 + day * DAY + 3 * HOUR;
  const to = from + 30 * MIN;
  return stream.map((r) => (r.ts >= from && r.ts < to ? { ...r, value: 50 + (r.value - 10) } : r));
}

const settings = (profile: 'none' | 'daily') =>
  validateConfig({
    defaults: { profile, profileDays: 7, window: '24h', buckets: 24, minSamples: 60, flatlineAfter: 0 },
  });

function run(engine: Engine, stream: readonly Reading[]): AlertEvent[] {
  const events: AlertEvent[] = [];
  for (const r of stream) {
    const outcome = engine.process(r);
    events.push(...outcome.events);
  }
  return events;
}

describe('daily profile: golden stream', () => {
  const stream = withNightFault(dailyStream(9), 8);

  it('catches the daytime level at night, which the 24 h window alone passes', () => {
    const faultFrom = T0 + 8 * DAY + 3 * HOUR;
    const during = (e: AlertEvent) => {
      const ts = Date.parse(e.ts);
      return ts >= faultFrom && ts < faultFrom + 30 * MIN && e.state === 'raised';
    };
    const plain = run(new Engine(settings('none')), stream);
    const daily = run(new Engine(settings('daily')), stream);
    expect(plain.filter(during)).toHaveLength(0);
    const raised = daily.filter(during);
    expect(raised).toHaveLength(1);
    expect(raised[0].ts).toBe(new Date(faultFrom).toISOString());
    expect(raised[0].severity).toBe('critical');
    expect(raised[0].message).toContain('of the readings for 03:00-04:00 on the last 7 days (');
    // The baseline is the 03:00 hour of the previous 7 days: 7 x 60 readings.
    expect(raised[0].baseline.count).toBe(7 * 60);
    expect(raised[0].baseline.median).toBeCloseTo(10, 0);
    const cleared = daily.find((e) => e.state === 'cleared' && e.id === raised[0].id)!;
    // clearAfter 3: three unflagged readings after the fault (noise may flag one of them).
    expect(Date.parse(cleared.ts)).toBeGreaterThanOrEqual(faultFrom + 30 * MIN + 2 * MIN);
    expect(Date.parse(cleared.ts)).toBeLessThan(faultFrom + 30 * MIN + 15 * MIN);
    expect(cleared.message).toContain('for 03:00-04:00 on the last 7 days');
  });

  it('a profiled slot warms up on 3 days: before that the rolling window judges', () => {
    const engine = new Engine(settings('daily'));
    run(engine, dailyStream(3));
    const profile = engine.get('site-a/pump-3/flow')!.profile!;
    // Day 3 00:00 opened: slot 0 holds days 0, 1, 2 -> warm; the open hour is the new day's 00:00.
    expect(profile.baseline(60)).toBeNull();
    engine.process({ sensor: 'site-a/pump-3/flow', ts: T0 + 3 * DAY, value: 10 });
    expect(profile.baseline(60)?.count).toBe(3 * 60);
    const young = new Engine(settings('daily'));
    run(young, dailyStream(2));
    young.process({ sensor: 'site-a/pump-3/flow', ts: T0 + 2 * DAY, value: 10 });
    expect(young.get('site-a/pump-3/flow')!.profile!.baseline(60)).toBeNull();
  });

  it('restored from its encoding at any cut point, it continues with the same events and bytes', () => {
    const short = withNightFault(
      dailyStream(4, 11).filter((_, i) => i % 5 === 0),
      3,
    );
    const config = validateConfig({
      defaults: {
        profile: 'daily',
        profileDays: 3,
        minSamples: 20,
        flatlineAfter: 0,
        window: '24h',
        buckets: 24,
      },
    });
    const whole = new Engine(config);
    const expected = run(whole, short);
    expect(expected.length).toBeGreaterThan(0);
    const sensor = short[0].sensor;
    const finalBytes = whole.encode(sensor)!;
    // A prime stride (about 50 cuts over 1,152 readings) lands on every phase of the day's slots
    // and buckets without replaying the stream 160 times (it ran near its timeout on a busy machine);
    // every cut from just before to just after the night fault is added, where the alert is open.
    const clean = dailyStream(4, 11).filter((_, i) => i % 5 === 0);
    const faultStart = short.findIndex((reading, i) => reading.value !== clean[i].value);
    expect(faultStart).toBeGreaterThan(0);
    const cuts = new Set<number>();
    for (let cut = 1; cut < short.length; cut += 23) cuts.add(cut);
    for (let cut = faultStart - 2; cut <= faultStart + 12; cut++) cuts.add(cut);
    for (const cut of cuts) {
      const first = new Engine(config);
      const before = run(first, short.slice(0, cut));
      const resumed = new Engine(config);
      resumed.restore(first.encode(sensor)!);
      const after = run(resumed, short.slice(cut));
      expect([...before, ...after]).toEqual(expected);
      expect(resumed.encode(sensor)).toEqual(finalBytes);
    }
  });

  it('a state of version 5 (no profile section) is still read, the profile starting empty', () => {
    const plainConfig = settings('none');
    const engine = new Engine(plainConfig);
    run(engine, dailyStream(1));
    const current = engine.encode('site-a/pump-3/flow')!;
    expect(current[current.length - 1]).toBe(0); // no profile
    // Version 5 has neither the profile byte nor the lifecycle's on-delay start (version 7), an
    // f64 NaN here: it sits before no active alert (1 byte), the doubtful run (1), no quality
    // alert (1), the newest value (8), no stale alert (1) and the profile byte (1).
    const tail = 13;
    const pending = current.subarray(current.length - tail - 8, current.length - tail);
    expect(Number.isNaN(new DataView(pending.buffer, pending.byteOffset, 8).getFloat64(0, true))).toBe(true);
    const v5 = Uint8Array.from([
      ...current.subarray(0, current.length - tail - 8),
      ...current.subarray(current.length - tail, current.length - 1),
    ]);
    v5[2] = 5;
    const v6 = current;
    const profiled = new Engine(settings('daily'));
    const state = profiled.restore(v5);
    expect(state.profile?.heldReadings).toBe(0);
    expect(state.seen).toBe(24 * 60);
    const back = new Engine(plainConfig);
    back.restore(v5);
    expect(back.encode('site-a/pump-3/flow')).toEqual(v6);
  });

  it('a changed time zone or depth restarts the profile, keeping the window', () => {
    const engine = new Engine(settings('daily'));
    run(engine, dailyStream(2));
    const bytes = engine.encode('site-a/pump-3/flow')!;
    const other = new Engine(
      validateConfig({
        defaults: {
          profile: 'daily',
          profileDays: 5,
          window: '24h',
          buckets: 24,
          minSamples: 60,
          flatlineAfter: 0,
        },
      }),
    );
    const state = other.restore(bytes);
    expect(state.profile?.heldReadings).toBe(0);
    expect(state.window.baseline()?.count).toBe(engine.get('site-a/pump-3/flow')!.window.baseline()?.count);
  });
});

describe('daily profile: daylight saving in Europe/Berlin', () => {
  const clock = new LocalClock('Europe/Berlin');
  const berlinStream = (fromUtc: number, hours: number): Reading[] => {
    const out: Reading[] = [];
    for (let ts = fromUtc; ts < fromUtc + hours * HOUR; ts += MIN) {
      out.push({ sensor: 'site-b/chiller/temp', ts, value: 5 + ((ts / MIN) % 7) });
    }
    return out;
  };

  it('local hours: 2026-03-29 has no 02:00 hour (23 h), 2026-10-25 has it twice (25 h)', () => {
    const hoursOf = (dayStartUtc: number, hours: number) =>
      Array.from({ length: hours }, (_, i) => clock.slotOf(dayStartUtc + i * HOUR + 30 * MIN).hour);
    // Local midnight of 2026-03-29 is 23:00 UTC the day before (CET, UTC+1).
    const spring = hoursOf(Date.UTC(2026, 2, 28, 23), 23);
    expect(spring).toEqual([0, 1, ...Array.from({ length: 21 }, (_, i) => i + 3)]);
    // Local midnight of 2026-10-25 is 22:00 UTC the day before (CEST, UTC+2).
    const autumn = hoursOf(Date.UTC(2026, 9, 24, 22), 25);
    expect(autumn).toEqual([0, 1, 2, 2, ...Array.from({ length: 21 }, (_, i) => i + 3)]);
    // Each of those days is one local date.
    expect(clock.slotOf(Date.UTC(2026, 2, 28, 23)).day).toBe(clock.slotOf(Date.UTC(2026, 2, 29, 21, 59)).day);
    expect(clock.slotOf(Date.UTC(2026, 2, 29, 22)).day).toBe(clock.slotOf(Date.UTC(2026, 2, 28, 23)).day + 1);
    expect(clock.slotOf(Date.UTC(2026, 9, 24, 22)).day).toBe(clock.slotOf(Date.UTC(2026, 9, 25, 22, 59)).day);
    expect(clock.slotOf(Date.UTC(2026, 9, 25, 23)).day).toBe(clock.slotOf(Date.UTC(2026, 9, 24, 22)).day + 1);
    // A fresh clock (no cached hour) agrees at every minute around both changes.
    for (const around of [Date.UTC(2026, 2, 29, 1), Date.UTC(2026, 9, 25, 1)]) {
      for (let ts = around - 2 * HOUR; ts < around + 2 * HOUR; ts += MIN) {
        expect(new LocalClock('Europe/Berlin').slotOf(ts)).toEqual(clock.slotOf(ts));
      }
    }
  });

  it('slot entries follow local days across both changes', () => {
    for (const [dayStart, hours, twoAM] of [
      [Date.UTC(2026, 2, 28, 23), 23, 0],
      [Date.UTC(2026, 9, 24, 22), 25, 120],
    ] as const) {
      const profile = new DailyProfile('Europe/Berlin', 7);
      for (const r of berlinStream(dayStart, hours)) {
        profile.advance(r.ts);
        profile.add(r.ts, r.value);
      }
      profile.advance(dayStart + hours * HOUR); // the next local midnight closes 23:00
      const perSlot = profile.slots.map((slot) => slot.reduce((n, e) => n + e.moments.n, 0));
      expect(perSlot[2]).toBe(twoAM);
      expect(perSlot.filter((_, h) => h !== 2)).toEqual(Array(23).fill(60));
      expect(new Set(profile.slots.flatMap((slot) => slot.map((e) => e.day))).size).toBe(1);
    }
  });

  it('judges the hour after the 25 h day against the same local hour, not the same UTC hour', () => {
    const engine = new Engine(
      validateConfig({
        defaults: {
          profile: 'daily',
          timeZone: 'Europe/Berlin',
          profileDays: 3,
          minSamples: 30,
          flatlineAfter: 0,
        },
      }),
    );
    // Local days from 2026-10-22 00:00 CEST; at 04:00-05:00 local the level is 100, else 5-11.
    const from = Date.UTC(2026, 9, 21, 22);
    // 2026-10-26 04:00 local is 03:00 UTC (CET), an hour later in UTC than on the days before.
    const until = Date.UTC(2026, 9, 26, 3, 30);
    const lastDay = Date.UTC(2026, 9, 25, 23); // 2026-10-26 00:00 local
    let raisedLastDay = 0;
    for (let ts = from; ts <= until; ts += MIN) {
      const { hour } = clock.slotOf(ts);
      const value = hour === 4 ? 100 + ((ts / MIN) % 3) : 5 + ((ts / MIN) % 7);
      const events = engine.process({ sensor: 'site-b/chiller/temp', ts, value }).events;
      if (ts >= lastDay) raisedLastDay += events.filter((e) => e.state === 'raised').length;
    }
    const baseline = engine.get('site-b/chiller/temp')!.profile!.baseline(30)!;
    expect(baseline.hour).toBe(4);
    expect(baseline.count).toBe(3 * 60);
    expect(baseline.median).toBeGreaterThanOrEqual(100);
    expect(raisedLastDay).toBe(0);
  });
});

describe('daily profile: properties', () => {
  it('a profiled state round-trips exactly: encode(restore(encode(s))) is identical and continues the same', () => {
    const step = fc.oneof(
      { weight: 20, arbitrary: fc.integer({ min: 0, max: 20 * MIN }) },
      { weight: 1, arbitrary: fc.integer({ min: HOUR, max: 2 * DAY }) },
      { weight: 1, arbitrary: fc.integer({ min: -3 * HOUR, max: -1 }) },
    );
    const value = fc.oneof(fc.integer({ min: 0, max: 100 }), fc.double({ min: -1e4, max: 1e4, noNaN: true }));
    fc.assert(
      fc.property(
        fc.array(fc.tuple(step, value), { minLength: 1, maxLength: 600 }),
        fc.constantFrom('UTC', 'Europe/Berlin', 'America/New_York', 'Asia/Kolkata'),
        fc.integer({ min: 1, max: 4 }),
        fc.nat(),
        (steps, zone, days, cutSeed) => {
          const config = validateConfig({
            defaults: {
              profile: 'daily',
              timeZone: zone,
              profileDays: days,
              minSamples: 5,
              window: '48h',
              buckets: 48,
            },
          });
          let ts = Date.UTC(2026, 9, 23);
          const readings = steps.map(([dt, v]) => ({ sensor: 's/1', ts: (ts += dt), value: v }));
          const cut = cutSeed % readings.length;
          const whole = new Engine(config);
          const expected = readings.map((r) => whole.process(r));
          const first = new Engine(config);
          const head = readings.slice(0, cut).map((r) => first.process(r));
          const bytes = first.encode('s/1');
          const resumed = new Engine(config);
          if (bytes !== null) {
            resumed.restore(bytes);
            expect(resumed.encode('s/1')).toEqual(bytes);
          }
          const tail = readings.slice(cut).map((r) => resumed.process(r));
          expect([...head, ...tail]).toEqual(expected);
          expect(resumed.encode('s/1')).toEqual(whole.encode('s/1'));
        },
      ),
      { numRuns: 60, seed: 11 },
    );
  });

  it('slot quartiles are within 1 % rank of the exact quartiles of the same readings (simple-statistics quantileSorted, type 7)', () => {
    // Bound: 1 % rank error on q1, median and q3 (the window's sketch bound, README "Sketch accuracy").
    let worst = 0;
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 2 ** 31 }), fc.constantFrom(1, 5, 30), (seed, perMinute) => {
        const rng = new Prng(seed);
        const profile = new DailyProfile('UTC', 7);
        const inSlot3: number[][] = [];
        const step = MIN / perMinute;
        for (let ts = T0; ts < T0 + 8 * DAY; ts += step) {
          const value = rng.normal() * (1 + (ts % DAY) / DAY) + (rng.next() < 0.1 ? 5 : 0);
          const slot = profile.advance(ts)!;
          profile.add(ts, value);
          if (slot.hour === 3) (inSlot3[slot.day - Math.floor(T0 / DAY)] ??= []).push(value);
        }
        profile.advance(T0 + 8 * DAY + 3 * HOUR);
        const baseline = profile.baseline(10)!;
        const sorted = inSlot3
          .slice(1, 8)
          .flat()
          .sort((a, b) => a - b);
        expect(baseline.count).toBe(sorted.length);
        for (const [p, got] of [
          [0.25, baseline.q1],
          [0.5, baseline.median],
          [0.75, baseline.q3],
        ] as const) {
          const exact = quantileSorted(sorted, p);
          const rankError = Math.abs(exactRank(sorted, got) - exactRank(sorted, exact));
          worst = Math.max(worst, rankError);
          expect(rankError).toBeLessThanOrEqual(0.01);
        }
      }),
      { numRuns: 12, seed: 5 },
    );
    console.log(
      `[profile quartiles] worst rank error against exact type-7 quartiles: ${(worst * 100).toFixed(3)} %`,
    );
  });
});
