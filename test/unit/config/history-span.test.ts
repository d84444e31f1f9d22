import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { historyNeeded } from '../../../libs/config/history-span.js';

const HOUR = 3600 * 1000;

describe('history a rebuild re-reads', () => {
  it('is the window plus one bucket', () => {
    expect(historyNeeded(validateConfig({ defaults: { window: '12h', buckets: 12 } }))).toBe(13 * HOUR);
    // The defaults: 24 h in 12 buckets of 2 h.
    expect(historyNeeded(validateConfig({}))).toBe(26 * HOUR);
  });

  it('is profileDays + 2 days with a daily profile, when that is longer', () => {
    const daily = validateConfig({ defaults: { profile: 'daily', profileDays: 7, timeZone: 'UTC' } });
    expect(historyNeeded(daily)).toBe(9 * 24 * HOUR);
  });

  it('takes the longest over the defaults and every sensors rule', () => {
    const config = validateConfig({
      defaults: { window: '1h', buckets: 6 },
      sensors: [
        { match: 'a/**', window: '6h' },
        { match: 'b/**', profile: 'daily', profileDays: 2, timeZone: 'UTC' },
      ],
    });
    expect(historyNeeded(config)).toBe(4 * 24 * HOUR);
    const rolling = validateConfig({
      defaults: { window: '1h', buckets: 6 },
      sensors: [{ match: 'a/**', window: '6h' }],
    });
    expect(historyNeeded(rolling)).toBe(7 * HOUR);
  });
});
