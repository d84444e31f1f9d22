import { describe, expect, it } from 'vitest';
import { configToJson, validateConfig, SettingsResolver } from '../../../libs/config/config.js';
import { applyPoint } from '../../../libs/tuning/apply.js';
import { expandGrid, parseGridSpec } from '../../../libs/tuning/grid.js';

describe('applying a grid point to a config', () => {
  const base = validateConfig({
    defaults: { fenceK: 1.5, window: '6h', buckets: 12 },
    sensors: [
      { match: 'hot/*', fenceK: 2, outerK: 3.5, direction: 'high' },
      { match: 'slow/*', raiseAfter: 2, raiseWindow: 4, max: 50 },
      { match: 'plain/*', min: 0 },
    ],
  });
  const [point] = expandGrid(
    parseGridSpec('fenceK=2.5;zLimit=4;trigger=fence;debounce=3/5;clearAfter=10'),
    base.defaults,
  );
  const tuned = applyPoint(base, point);
  const resolver = new SettingsResolver(tuned);

  it('every sensor gets the tuned settings, including those whose override set a tuned key', () => {
    for (const id of ['hot/a', 'slow/b', 'plain/c', 'other']) {
      const s = resolver.resolve(id);
      expect(s).toMatchObject({
        fenceK: 2.5,
        outerK: 5,
        zLimit: 4,
        trigger: 'fence',
        raiseAfter: 3,
        raiseWindow: 5,
        clearAfter: 10,
      });
    }
  });

  it('other override keys stay, and the result is a valid config file', () => {
    expect(resolver.resolve('hot/a').direction).toBe('high');
    expect(resolver.resolve('slow/b').max).toBe(50);
    expect(resolver.resolve('plain/c').min).toBe(0);
    expect(resolver.resolve('hot/a').window).toBe(6 * 3_600_000);
    expect(validateConfig(JSON.parse(JSON.stringify(configToJson(tuned))))).toEqual(tuned);
  });

  it('does not change the base config', () => {
    expect(base.sensors[0].overrides.fenceK).toBe(2);
    expect(base.defaults.fenceK).toBe(1.5);
  });
});
