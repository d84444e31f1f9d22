import { describe, expect, it } from 'vitest';
import { DEFAULT_GRID_SPEC, expandGrid, formatGridSpec, parseGridSpec } from '../../../libs/tuning/grid.js';
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
      'grid: "zlimit=3": unknown key "zlimit"; known keys: fenceK, zLimit, trigger, debounce, clearAfter, flatlineAfter',
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

  it('the default grid has 216 points and refuses absurd grids', () => {
    expect(expandGrid(parseGridSpec(DEFAULT_GRID_SPEC), { ...DEFAULT_SETTINGS })).toHaveLength(
      4 * 3 * 3 * 3 * 2,
    );
    expect(
      msg(() => expandGrid(parseGridSpec('fenceK=1:100:0.1;zLimit=1:100:1'), { ...DEFAULT_SETTINGS })),
    ).toMatch(/more than 5000/);
  });
});
