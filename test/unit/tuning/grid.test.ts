import { describe, expect, it } from 'vitest';
import {
  DEFAULT_GRID_SPEC,
  delayMs,
  expandGrid,
  formatGridSpec,
  gridSize,
  parseGridSpec,
} from '../../../libs/tuning/grid.js';
import { ColumnBuilder, medianReadingInterval } from '../../../libs/tuning/columns.js';
import { DEFAULT_SETTINGS } from '../../../libs/config/settings.js';

const msg = (f: () => unknown): string => {
  try {
    f();
  } catch (e) {
    expect((e as { code: string }).code).toBe('ARGS_INVALID');
    return (e as Error).message;
  }
  throw new Error('expected a failure');
};

describe('grid spec', () => {
  it('parses lists, ranges, triggers and debounce pairs', () => {
    expect(
      parseGridSpec(
        'fenceK=1.5,2,3; zLimit=3:5:1 ;trigger=either,fence;debounce=1/1,2/3;clearAfter=3,10;flatlineAfter=0,20',
      ),
    ).toEqual({
      fenceK: [1.5, 2, 3],
      zLimit: [3, 4, 5],
      trigger: ['either', 'fence'],
      debounce: [
        [1, 1],
        [2, 3],
      ],
      clearAfter: [3, 10],
      flatlineAfter: [0, 20],
    });
  });

  it('ranges with fractional steps come out clean, duplicates collapse', () => {
    expect(parseGridSpec('fenceK=1:1.5:0.1').fenceK).toEqual([1, 1.1, 1.2, 1.3, 1.4, 1.5]);
    expect(parseGridSpec('fenceK=2,2,1:3:1').fenceK).toEqual([2, 1, 3]);
  });

  it('errors name the bad part', () => {
    expect(msg(() => parseGridSpec('fenceK=1,2;zlimit=3'))).toBe(
      'grid: "zlimit=3": unknown key "zlimit"; known keys: fenceK, zLimit, trigger, debounce, clearAfter, flatlineAfter, deadband, clearDelay',
    );
    expect(msg(() => parseGridSpec('fenceK=1,x'))).toMatch(/"fenceK=1,x": "x" is not a number/);
    expect(msg(() => parseGridSpec('zLimit=5:3:1'))).toMatch(/ends before it starts/);
    expect(msg(() => parseGridSpec('zLimit=3:5:0'))).toMatch(/positive step/);
    expect(msg(() => parseGridSpec('trigger=sometimes'))).toMatch(
      /"sometimes" is not one of fence, z, either, both/,
    );
    expect(msg(() => parseGridSpec('debounce=3/2'))).toMatch(/"3\/2" needs 1 <= raiseAfter <= raiseWindow/);
    expect(msg(() => parseGridSpec('debounce=2'))).toMatch(/must be raiseAfter\/raiseWindow/);
    expect(msg(() => parseGridSpec('clearAfter=1.5'))).toMatch(/1.5 must be a whole number/);
    expect(msg(() => parseGridSpec('fenceK=0'))).toMatch(/below the smallest/);
    expect(msg(() => parseGridSpec('fenceK'))).toMatch(/must be key=values/);
    expect(msg(() => parseGridSpec('fenceK=1;fenceK=2'))).toMatch(/given twice/);
    expect(msg(() => parseGridSpec(' ; '))).toMatch(/empty grid/);
    expect(msg(() => parseGridSpec('deadband=-0.5'))).toMatch(/-0.5 is below the smallest allowed value 0/);
    expect(msg(() => parseGridSpec('clearDelay=soon'))).toMatch(
      /"soon" must be a duration up to 31d \(e.g. 30s, 2m, 0\) or a count of readings \(e.g. 10readings\)/,
    );
    expect(msg(() => parseGridSpec('clearDelay=40d'))).toMatch(/"40d" must be a duration up to 31d/);
  });

  it('deadband takes numbers; clearDelay takes durations and counts of readings', () => {
    expect(parseGridSpec('deadband=0,0.5,0:1:0.5;clearDelay=0,30s,2m,10readings,1 reading')).toEqual({
      deadband: [0, 0.5, 1],
      clearDelay: [{ ms: 0 }, { ms: 30_000 }, { ms: 120_000 }, { readings: 10 }, { readings: 1 }],
    });
    expect(parseGridSpec('clearDelay=10readings,10 readings,30s,30000').clearDelay).toEqual([
      { readings: 10 },
      { ms: 30_000 },
    ]);
  });

  it('format round-trips', () => {
    const spec = parseGridSpec(DEFAULT_GRID_SPEC);
    expect(parseGridSpec(formatGridSpec(spec))).toEqual(spec);
  });
});

describe('grid expansion', () => {
  it('is the cross product in a stable order; missing keys keep the base settings', () => {
    const pts = expandGrid(parseGridSpec('fenceK=2,4;debounce=1/1,2/3'), { ...DEFAULT_SETTINGS });
    expect(pts.map((p) => [p.fenceK, p.raiseAfter, p.raiseWindow])).toEqual([
      [2, 1, 1],
      [2, 2, 3],
      [4, 1, 1],
      [4, 2, 3],
    ]);
    for (const p of pts) {
      expect(p.zLimit).toBe(DEFAULT_SETTINGS.zLimit);
      expect(p.trigger).toBe(DEFAULT_SETTINGS.trigger);
      expect(p.clearAfter).toBe(DEFAULT_SETTINGS.clearAfter);
    }
  });

  it('keeps outerK > fenceK and zCritical > zLimit', () => {
    const base = { ...DEFAULT_SETTINGS, outerK: 3, zCritical: 5 };
    const pts = expandGrid(parseGridSpec('fenceK=1,2.5,4;zLimit=3,6'), base);
    expect(pts.map((p) => [p.outerK, p.zCritical])).toEqual([
      [3, 5],
      [3, 8],
      [5, 5],
      [5, 8],
      [8, 5],
      [8, 8],
    ]);
    for (const p of pts) {
      expect(p.outerK).toBeGreaterThan(p.fenceK);
      expect(p.zCritical).toBeGreaterThan(p.zLimit);
    }
  });

  it('the default grid has 432 points and refuses absurd grids', () => {
    expect(expandGrid(parseGridSpec(DEFAULT_GRID_SPEC), { ...DEFAULT_SETTINGS }, 1000)).toHaveLength(
      4 * 3 * 3 * 3 * 2 * 2,
    );
    expect(
      msg(() => expandGrid(parseGridSpec('fenceK=1:100:0.1;zLimit=1:100:1'), { ...DEFAULT_SETTINGS })),
    ).toMatch(/more than 5000/);
  });
});

describe('grid delays and deadbands', () => {
  it('the default clear delay is 10 reading intervals: 10 s at 1 Hz, 10 minutes at one a minute', () => {
    const spec = parseGridSpec(DEFAULT_GRID_SPEC);
    const delays = (interval: number) => [
      ...new Set(expandGrid(spec, { ...DEFAULT_SETTINGS }, interval).map((p) => p.clearDelay)),
    ];
    expect(delays(1000)).toEqual([0, 10_000]);
    expect(delays(60_000)).toEqual([0, 600_000]);
  });

  it('counts of readings round to whole seconds from 1 s up, stay exact below, and cap at 31 days', () => {
    expect(delayMs({ readings: 3 }, 1234)).toBe(4000);
    expect(delayMs({ readings: 3 }, 250)).toBe(750);
    expect(delayMs({ readings: 1000 }, 86_400_000)).toBe(31 * 86_400_000);
    expect(delayMs({ ms: 1500 }, undefined)).toBe(1500);
    expect(() => delayMs({ readings: 3 }, undefined)).toThrow(/needs the reading interval/);
  });

  it('two counts that round to one duration are tried once', () => {
    const pts = expandGrid(parseGridSpec('clearDelay=1readings,2readings'), { ...DEFAULT_SETTINGS }, 100);
    expect(pts.map((p) => p.clearDelay)).toEqual([100, 200]);
    const same = expandGrid(parseGridSpec('clearDelay=10readings,10s'), { ...DEFAULT_SETTINGS }, 1000);
    expect(same.map((p) => p.clearDelay)).toEqual([10_000]);
  });

  it('skips points whose deadband leaves no way to clear, for the rules the trigger uses', () => {
    const spec = parseGridSpec('fenceK=1,2;zLimit=1.5,3;trigger=fence,z,either;deadband=0,1.5');
    const pts = expandGrid(spec, { ...DEFAULT_SETTINGS });
    expect(gridSize(spec)).toBe(24);
    const kept = pts.filter((p) => p.deadband === 1.5).map((p) => [p.trigger, p.fenceK, p.zLimit]);
    // fence: needs fenceK > 1.5; z: needs zLimit > 1.5; either: needs both.
    expect(kept).toEqual([
      ['z', 1, 3],
      ['fence', 2, 1.5],
      ['fence', 2, 3],
      ['z', 2, 3],
      ['either', 2, 3],
    ]);
    expect(pts.filter((p) => p.deadband === 0)).toHaveLength(12);
  });
});

describe('median reading interval', () => {
  const columns = (rows: [string, number][]) => {
    const builder = new ColumnBuilder();
    for (const [sensor, ts] of rows) builder.add(sensor, ts, 1);
    return builder.finish();
  };

  it("is the median gap between one sensor's consecutive readings, across sensors", () => {
    // a: gaps 10, 10, 40; b: gaps 20, 20 -> sorted 10 10 20 20 40 -> 20.
    const rows: [string, number][] = [
      ['a', 0],
      ['b', 5],
      ['a', 10],
      ['a', 20],
      ['b', 25],
      ['b', 45],
      ['a', 60],
    ];
    expect(medianReadingInterval(columns(rows))).toBe(20);
    // An even count is the mean of the middle two: gaps 10 and 30 -> 20.
    expect(
      medianReadingInterval(
        columns([
          ['a', 0],
          ['a', 10],
          ['a', 40],
        ]),
      ),
    ).toBe(20);
  });

  it('ignores equal and backward times, and is null when no sensor read twice at different times', () => {
    expect(
      medianReadingInterval(
        columns([
          ['a', 0],
          ['a', 0],
          ['a', 30],
          ['a', 10],
          ['a', 40],
        ]),
      ),
    ).toBe(30);
    expect(
      medianReadingInterval(
        columns([
          ['a', 0],
          ['b', 10],
          ['c', 0],
          ['c', 0],
        ]),
      ),
    ).toBeNull();
  });
});
