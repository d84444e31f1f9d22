import { describe, expect, it } from 'vitest';
import {
  configToJson,
  defaultConfig,
  parseConfigText,
  SettingsResolver,
  validateConfig,
} from '../../../libs/config/config.js';
import { formatDuration, parseDuration } from '../../../libs/config/duration.js';
import { DEFAULT_SETTINGS } from '../../../libs/config/settings.js';

/** Run fn and return the StreamfenceError it throws (fails the test if it does not throw). */
function refusal(fn: () => unknown): { code: string; message: string } {
  try {
    fn();
  } catch (e) {
    return e as { code: string; message: string };
  }
  throw new Error('expected a refusal');
}

describe('config: unknown keys are refused and named', () => {
  it('top level', () => {
    const e = refusal(() => validateConfig({ defaults: {}, sensor: [] }));
    expect(e.code).toBe('CONFIG_UNKNOWN_KEY');
    expect(e.message).toContain('"sensor"');
  });
  it('defaults', () => {
    const e = refusal(() => validateConfig({ defaults: { fenceK: 2, zlimit: 4 } }));
    expect(e.code).toBe('CONFIG_UNKNOWN_KEY');
    expect(e.message).toContain('"zlimit"');
    expect(e.message).toContain('defaults');
  });
  it('sensors[i]', () => {
    const e = refusal(() => validateConfig({ sensors: [{ match: 'a*' }, { match: 'b*', windw: '1h' }] }));
    expect(e.code).toBe('CONFIG_UNKNOWN_KEY');
    expect(e.message).toContain('sensors[1]');
    expect(e.message).toContain('"windw"');
  });
});

describe('config: contradictions are refused', () => {
  const cases: [string, Record<string, unknown>, string][] = [
    ['outerK <= fenceK', { fenceK: 3, outerK: 3 }, 'outerK'],
    ['zCritical <= zLimit', { zLimit: 4, zCritical: 3.5 }, 'zCritical'],
    ['raiseAfter > raiseWindow', { raiseAfter: 3, raiseWindow: 2 }, 'raiseAfter'],
    ['min >= max', { min: 5, max: 5 }, 'min'],
    ['window not divisible by buckets', { window: '10s', buckets: 3 }, 'buckets'],
  ];
  for (const [name, defaults, word] of cases) {
    it(name, () => {
      const e = refusal(() => validateConfig({ defaults }));
      expect(e.code).toBe('CONFIG_CONTRADICTION');
      expect(e.message).toContain(word);
    });
  }
  it('a per-sensor override contradicting the defaults is refused with its glob named', () => {
    const e = refusal(() =>
      validateConfig({ defaults: { outerK: 4 }, sensors: [{ match: 'kiln-*', fenceK: 4 }] }),
    );
    expect(e.code).toBe('CONFIG_CONTRADICTION');
    expect(e.message).toContain('kiln-*');
  });
  it('wrong types and out-of-range values are CONFIG_INVALID', () => {
    expect(refusal(() => validateConfig({ defaults: { fenceK: -1 } })).code).toBe('CONFIG_INVALID');
    expect(refusal(() => validateConfig({ defaults: { trigger: 'any' } })).code).toBe('CONFIG_INVALID');
    expect(refusal(() => validateConfig({ defaults: { buckets: 49 } })).code).toBe('CONFIG_INVALID');
    expect(refusal(() => validateConfig({ defaults: { window: '40d' } })).code).toBe('CONFIG_INVALID');
    expect(refusal(() => validateConfig({ sensors: [{ fenceK: 2 }] })).code).toBe('CONFIG_INVALID');
    expect(refusal(() => validateConfig([])).code).toBe('CONFIG_INVALID');
    expect(refusal(() => parseConfigText('defaults: [unclosed', 'plant.yaml')).message).toContain(
      'plant.yaml',
    );
  });
});

describe('config: resolution, formats, durations', () => {
  it('the first matching glob wins over later ones and over defaults', () => {
    const c = validateConfig({
      defaults: { fenceK: 1.5 },
      sensors: [
        { match: 'kiln-*/temp', fenceK: 2 },
        { match: 'kiln-*', fenceK: 2.5 },
        { match: '**', fenceK: 1.2 },
      ],
    });
    const r = new SettingsResolver(c);
    expect(r.resolve('kiln-3/temp').fenceK).toBe(2);
    expect(r.resolve('kiln-3').fenceK).toBe(2.5);
    expect(r.resolve('dryer-1/temp').fenceK).toBe(1.2);
    expect(
      new SettingsResolver(validateConfig({ sensors: [{ match: 'x', fenceK: 2 }] })).resolve('y').fenceK,
    ).toBe(DEFAULT_SETTINGS.fenceK);
  });

  it('YAML and JSON give the same config', () => {
    const yaml = `
defaults:
  window: 90m
  buckets: 9
  zLimit: 3.5
sensors:
  - match: "line-2/*"
    direction: high
    max: 120
`;
    const json = JSON.stringify({
      defaults: { window: '90m', buckets: 9, zLimit: 3.5 },
      sensors: [{ match: 'line-2/*', direction: 'high', max: 120 }],
    });
    const a = parseConfigText(yaml, 'a.yaml');
    const b = parseConfigText(json, 'b.json');
    expect(a).toEqual(b);
    expect(a.defaults.window).toBe(90 * 60_000);
    // configToJson round-trips through validation.
    expect(validateConfig(configToJson(a))).toEqual(a);
    expect(parseConfigText('', 'empty')).toEqual(defaultConfig());
  });

  it('durations: units, plain milliseconds, refusals, formatting', () => {
    expect(parseDuration('250ms')).toBe(250);
    expect(parseDuration('30s')).toBe(30_000);
    expect(parseDuration('15m')).toBe(900_000);
    expect(parseDuration('24h')).toBe(86_400_000);
    expect(parseDuration('7d')).toBe(604_800_000);
    expect(parseDuration('1.5h')).toBe(5_400_000);
    expect(parseDuration('5000')).toBe(5000);
    expect(parseDuration(5000)).toBe(5000);
    for (const bad of ['', 'h', '-5s', '5 hours', '1e3', null, {}, -1, Infinity])
      expect(parseDuration(bad)).toBeNull();
    expect(formatDuration(86_400_000)).toBe('1d');
    expect(formatDuration(5_400_000)).toBe('90m');
    expect(formatDuration(1500)).toBe('1500ms');
  });
});

describe('config: critical levels the user left out follow the warning levels', () => {
  it('zLimit alone derives zCritical = max(5, zLimit + 2); fenceK alone derives outerK = max(3, 2 fenceK)', () => {
    const c = validateConfig({ defaults: { zLimit: 5, fenceK: 3 } });
    expect(c.defaults.zCritical).toBe(7);
    expect(c.defaults.outerK).toBe(6);
    const mild = validateConfig({ defaults: { zLimit: 2, fenceK: 1 } });
    expect(mild.defaults.zCritical).toBe(5);
    expect(mild.defaults.outerK).toBe(3);
    // The effective values are what summaries show, and they validate as written.
    expect(configToJson(c).defaults).toMatchObject({ zCritical: 7, outerK: 6 });
    expect(validateConfig(configToJson(c))).toEqual(c);
  });
  it('an override with its own warning level gets its own derived critical level', () => {
    const c = validateConfig({ sensors: [{ match: 'kiln-*', zLimit: 6, fenceK: 2.5 }] });
    const s = new SettingsResolver(c).resolve('kiln-1');
    expect(s.zCritical).toBe(8);
    expect(s.outerK).toBe(5);
    expect(new SettingsResolver(c).resolve('dryer').zCritical).toBe(5);
  });
  it('values the user wrote are kept, and contradictions between them are still refused', () => {
    expect(validateConfig({ defaults: { zLimit: 4, zCritical: 4.5 } }).defaults.zCritical).toBe(4.5);
    expect(refusal(() => validateConfig({ defaults: { zLimit: 5, zCritical: 5 } })).code).toBe(
      'CONFIG_CONTRADICTION',
    );
    const e = refusal(() =>
      validateConfig({ defaults: { zCritical: 6 }, sensors: [{ match: 'kiln-*', zLimit: 6 }] }),
    );
    expect(e.code).toBe('CONFIG_CONTRADICTION');
    expect(e.message).toContain('kiln-*');
  });

  it('profile settings: defaults none/UTC/7, IANA zones accepted, anything else refused naming the key', () => {
    const plain = validateConfig({});
    expect([plain.defaults.profile, plain.defaults.timeZone, plain.defaults.profileDays]).toEqual([
      'none',
      'UTC',
      7,
    ]);
    const c = validateConfig({
      sensors: [{ match: 'hall-2/**', profile: 'daily', timeZone: 'America/New_York', profileDays: 14 }],
    });
    expect(c.sensors[0].overrides).toEqual({
      profile: 'daily',
      timeZone: 'America/New_York',
      profileDays: 14,
    });
    for (const bad of [
      { profile: 'weekly' },
      { timeZone: 'Mars/Olympus' },
      { timeZone: 3 },
      { profileDays: 0 },
      { profileDays: 32 },
    ]) {
      let caught: unknown;
      try {
        validateConfig({ defaults: bad });
      } catch (e) {
        caught = e;
      }
      expect((caught as { code: string }).code).toBe('CONFIG_INVALID');
      expect((caught as Error).message).toContain(`"${Object.keys(bad)[0]}"`);
    }
  });
});
