import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import {
  PlantSimulator,
  SCENARIOS,
  suggestedConfig,
  type SimOptions,
  type SimReading,
} from '../../../libs/sim/plant.js';

const DAY = 86_400_000;
const BASE: SimOptions = {
  seed: 7,
  start: Date.UTC(2026, 0, 5),
  durationMs: 2 * DAY,
  intervalMs: 60_000,
  sensors: 12,
};
const all = (o: SimOptions): SimReading[] => [...new PlantSimulator(o)];

describe('plant simulator', () => {
  it('same seed -> identical stream and labels; different seed -> different', () => {
    const a = new PlantSimulator(BASE);
    const b = new PlantSimulator(BASE);
    expect([...a]).toEqual([...b]);
    expect(a.labels()).toEqual(b.labels());
    const c = new PlantSimulator({ ...BASE, seed: 8 });
    const first = all({ ...BASE, durationMs: DAY / 4 });
    const other = [...c].slice(0, first.length);
    expect(other.map((r) => r.value)).not.toEqual(first.map((r) => r.value));
    expect(c.labels()).not.toEqual(a.labels());
  });

  it('streams in event-time order, one reading per sensor per interval, all sensors interleaved', () => {
    const sim = new PlantSimulator({ ...BASE, faults: false, durationMs: DAY / 2 });
    const rs = [...sim];
    expect(rs).toHaveLength(12 * 720);
    for (let i = 1; i < rs.length; i++) expect(rs[i].ts).toBeGreaterThanOrEqual(rs[i - 1].ts);
    expect(new Set(rs.slice(0, 12).map((r) => r.sensor)).size).toBe(12);
    expect(rs.every((r) => Number.isFinite(r.value))).toBe(true);
    expect(sim.next()).toBeNull();
  });

  it('the fault labels cover every injected fault and nothing else', () => {
    // Noise comes from per-sensor streams that faults never consume, so the run without faults is
    // the same plant: readings differ exactly where a label says a fault was.
    const faulty = new PlantSimulator(BASE);
    const clean = all({ ...BASE, faults: false });
    const labels = faulty.labels();
    const key = (r: { sensor: string; ts: number }) => `${r.sensor}@${r.ts}`;
    const got = new Map([...faulty].map((r) => [key(r), r.value]));
    const inLabel = (sensor: string, ts: number) =>
      labels.find((l) => l.sensor === sensor && ts >= l.start && ts <= l.end);
    const touched = new Set<(typeof labels)[number]>();
    for (const r of clean) {
      const v = got.get(key(r));
      const l = inLabel(r.sensor, r.ts);
      if (l === undefined) {
        expect(v, `reading outside any label changed: ${key(r)}`).toBe(r.value);
        continue;
      }
      if (l.kind === 'dropout') expect(v, `reading inside a dropout: ${key(r)}`).toBeUndefined();
      if (v !== r.value) touched.add(l);
    }
    // Every label changed at least one reading (a stuck run might repeat its value by chance once, not throughout).
    expect(labels.filter((l) => !touched.has(l))).toEqual([]);
    const kinds = new Set(labels.map((l) => l.kind));
    expect([...kinds].sort()).toEqual(['drift', 'dropout', 'noise', 'spike', 'step', 'stuck']);
    // Stuck: every reading in the label repeats the reading just before it starts.
    const rs = [...new PlantSimulator(BASE)];
    for (const l of labels.filter((x) => x.kind === 'stuck')) {
      const mine = rs.filter((r) => r.sensor === l.sensor);
      const i = mine.findIndex((r) => r.ts === l.start);
      const held = mine[i - 1].value;
      for (const r of mine.filter((x) => x.ts >= l.start && x.ts <= l.end)) expect(r.value).toBe(held);
    }
  });

  it('faults start after the warm-up and sit inside the data', () => {
    const sim = new PlantSimulator(BASE);
    for (const l of sim.labels()) {
      expect(l.start).toBeGreaterThanOrEqual(BASE.start + 6 * 3_600_000);
      expect(l.end).toBeLessThan(BASE.start + BASE.durationMs);
      expect(l.end).toBeGreaterThanOrEqual(l.start);
    }
  });

  it('sensors on one machine move together (shared load factor)', () => {
    const rs = all({ ...BASE, faults: false, sensors: 7 });
    const series = (name: string) => rs.filter((r) => r.sensor.endsWith(name)).map((r) => r.value);
    const corr = (x: number[], y: number[]) => {
      const mx = x.reduce((a, b) => a + b) / x.length;
      const my = y.reduce((a, b) => a + b) / y.length;
      let sxy = 0;
      let sxx = 0;
      let syy = 0;
      for (let i = 0; i < x.length; i++) {
        sxy += (x[i] - mx) * (y[i] - my);
        sxx += (x[i] - mx) ** 2;
        syy += (y[i] - my) ** 2;
      }
      return sxy / Math.sqrt(sxx * syy);
    };
    expect(corr(series('filler/motor-current'), series('filler/bearing-temp'))).toBeGreaterThan(0.5);
    expect(Math.abs(corr(series('filler/motor-current'), series('pasteuriser/holding-temp')))).toBeLessThan(
      0.3,
    );
    expect(series('filler/vibration').every((v) => v >= 0)).toBe(true);
  });

  it('more sensors repeat the unit: line-1, line-2, ... with unique ids; fault plans do not depend on the count', () => {
    const big = new PlantSimulator({ ...BASE, sensors: 30 });
    const ids = big.sensors().map((s) => s.id);
    expect(new Set(ids).size).toBe(30);
    expect(ids[12]).toBe('line-2/pasteuriser/outlet-temp');
    expect(ids[29].startsWith('line-3/')).toBe(true);
    const small = new PlantSimulator(BASE);
    const firstLine = big.labels().filter((l) => l.sensor.startsWith('line-1/'));
    expect(firstLine.map((l) => [l.sensor, l.kind])).toEqual(small.labels().map((l) => [l.sensor, l.kind]));
  });

  it('every scenario has a valid suggested config and a description', () => {
    for (const name of Object.keys(SCENARIOS)) {
      expect(SCENARIOS[name].title.length).toBeGreaterThan(0);
      const cfg = validateConfig(suggestedConfig(name), name);
      expect(cfg.defaults.flatlineAfter).toBeGreaterThan(0);
      const sim = new PlantSimulator({ ...BASE, scenario: name, sensors: undefined, durationMs: 3_600_000 });
      expect(sim.sensors().length).toBeGreaterThan(0);
      expect([...sim].length).toBe(sim.sensors().length * 60);
    }
  });

  it('refuses unusable options with ARGS_INVALID', () => {
    const bad = (o: Partial<SimOptions>) => () => new PlantSimulator({ ...BASE, ...o });
    expect(bad({ scenario: 'nowhere' })).toThrow(/unknown scenario "nowhere"/);
    expect(bad({ intervalMs: 0 })).toThrow(/interval/);
    expect(bad({ sensors: 0 })).toThrow(/sensors/);
    expect(bad({ seed: 1.5 })).toThrow(/seed/);
    expect(bad({ durationMs: -1 })).toThrow(/duration/);
    expect(() => suggestedConfig('nowhere')).toThrow(/unknown scenario/);
  });
});

describe('water-supply: strong daily cycles and time-of-day faults', () => {
  const WATER: SimOptions = {
    seed: 3,
    start: Date.UTC(2026, 0, 5),
    durationMs: 9 * DAY,
    intervalMs: 60_000,
    scenario: 'water-supply',
  };
  const HOUR = 3_600_000;
  /** Local hour in the plant's zone (the scenario's curve follows Europe/Berlin local time). */
  const berlinHour = (ts: number): number =>
    Number(
      new Intl.DateTimeFormat('en-GB', {
        timeZone: 'Europe/Berlin',
        hour: 'numeric',
        hourCycle: 'h23',
      }).format(ts),
    );

  it('plants timeshift faults only on two-sided sensors with a strong daily cycle, after the 4-day warm-up', () => {
    const sim = new PlantSimulator(WATER);
    const labels = sim.labels();
    const shifted = labels.filter((l) => l.kind === 'timeshift');
    expect(shifted.length).toBeGreaterThan(5);
    const onSensors = new Set(shifted.map((l) => l.sensor.replace(/^zone-\d+\//, '')));
    expect([...onSensors].sort()).toEqual([
      'booster/motor-temp',
      'booster/pump-current',
      'inlet/flow',
      'inlet/pressure',
    ]);
    for (const l of labels) expect(l.start).toBeGreaterThanOrEqual(WATER.start + 4 * DAY);
    const kinds = new Set(labels.map((l) => l.kind));
    expect([...kinds].sort()).toEqual(['drift', 'dropout', 'noise', 'spike', 'step', 'stuck', 'timeshift']);
  });

  it('a timeshift fault reads a level normal for another time of day: inside the day range, far from the hour', () => {
    // Against the same plant without faults (same noise streams): inside a timeshift label the
    // readings differ from the clean ones by several spreads of the hour on average, yet stay
    // within the clean sensor's own range over the whole data set (normal for some hour).
    const faulty = [...new PlantSimulator(WATER)];
    const clean = [...new PlantSimulator({ ...WATER, faults: false })];
    const key = (r: SimReading) => `${r.sensor}@${r.ts}`;
    const cleanAt = new Map(clean.map((r) => [key(r), r.value]));
    const range = new Map<string, [number, number]>();
    for (const r of clean) {
      const [lo, hi] = range.get(r.sensor) ?? [Infinity, -Infinity];
      range.set(r.sensor, [Math.min(lo, r.value), Math.max(hi, r.value)]);
    }
    const labels = new PlantSimulator(WATER).labels().filter((l) => l.kind === 'timeshift');
    for (const l of labels) {
      const inside = faulty.filter((r) => r.sensor === l.sensor && r.ts >= l.start && r.ts <= l.end);
      expect(inside.length).toBeGreaterThanOrEqual(10);
      const [lo, hi] = range.get(l.sensor)!;
      const span = hi - lo;
      let gap = 0;
      for (const r of inside) {
        expect(r.value, key(r)).toBeGreaterThanOrEqual(lo - 0.05 * span);
        expect(r.value, key(r)).toBeLessThanOrEqual(hi + 0.05 * span);
        gap += Math.abs(r.value - cleanAt.get(key(r))!);
      }
      // At least a fifth of the day's range on average (the shift is chosen for the widest gap).
      expect(gap / inside.length, `${l.sensor} ${new Date(l.start).toISOString()}`).toBeGreaterThan(
        0.2 * span,
      );
    }
  });

  it('the daily cycle follows local time across the daylight-saving change (Europe/Berlin, 2026-03-29)', () => {
    // Demand peaks at 08:00 local and is 0.2 of its amplitude (18 m3/h of flow) lower at 09:00.
    // Readings on the hour, a week either side of the change: if the cycle ignored the change,
    // after it 08:00 local would read the 07:00 level (below 09:00's) and the gap would turn.
    const readings = [
      ...new PlantSimulator({
        ...WATER,
        start: Date.UTC(2026, 2, 22),
        durationMs: 14 * DAY,
        faults: false,
        sensors: 1,
      }),
    ].filter((r) => r.ts % HOUR === 0);
    expect(readings[0].sensor).toBe('zone-1/inlet/flow');
    const change = Date.UTC(2026, 2, 29, 1);
    for (const side of [(ts: number) => ts < change, (ts: number) => ts >= change]) {
      const mean = (hour: number) => {
        const at = readings.filter((r) => side(r.ts) && berlinHour(r.ts) === hour).map((r) => r.value);
        return at.reduce((x, y) => x + y, 0) / at.length;
      };
      // Sampling error of the gap about 3 m3/h (noise and the 2 h load process over 7 days).
      expect(mean(8) - mean(9)).toBeGreaterThan(9);
      expect(mean(8) - mean(3)).toBeGreaterThan(150);
    }
  });

  it('suggests a 24 h window and a daily profile in the plant time zone', () => {
    const cfg = validateConfig(suggestedConfig('water-supply'), 'water-supply');
    expect(cfg.defaults).toMatchObject({
      window: 24 * 3_600_000,
      profile: 'daily',
      timeZone: 'Europe/Berlin',
      profileDays: 7,
    });
  });
});
