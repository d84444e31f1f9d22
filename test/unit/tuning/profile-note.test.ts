/**
 * `tune` says which time-of-day profile its grid points keep (the grid never varies profile,
 * timeZone or profileDays; README "`streamfence tune`"), naming per-sensor profile overrides.
 */
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { profileNote } from '../../../services/tune/tune.js';

describe('tune profile note', () => {
  it('names the default profile when none is set', () => {
    expect(profileNote(validateConfig({}))).toBe(
      "streamfence tune: every point keeps the config's profile setting (profile none); the grid does not vary profile, timeZone or profileDays: tune once per setting to compare them",
    );
  });

  it('names a daily profile with its zone and depth, and the sensor rules that override it', () => {
    const config = validateConfig({
      defaults: { profile: 'daily', timeZone: 'Europe/Berlin', profileDays: 5 },
      sensors: [
        { match: 'boiler-*/flow', profile: 'none' },
        { match: 'boiler-*/temp', zLimit: 4 },
        { match: 'yard/*', profileDays: 10 },
      ],
    });
    expect(profileNote(config)).toBe(
      'streamfence tune: every point keeps the config\'s profile setting (profile daily, timeZone Europe/Berlin, profileDays 5 and the profile overrides of "boiler-*/flow", "yard/*"); the grid does not vary profile, timeZone or profileDays: tune once per setting to compare them',
    );
  });
});
