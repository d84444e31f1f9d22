/**
 * The engine config file: `{ defaults: {...}, sensors: [ { match: "<glob>", ...overrides } ] }`.
 * Validation refuses unknown keys, wrong types and contradictions with a message that names the
 * key and says what to change. The first `sensors` entry whose glob matches a sensor id wins.
 */
import picomatch from 'picomatch';
import YAML from 'yaml';
import { StreamfenceError } from '../errors/index.js';
import { parseDuration, formatDuration } from './duration.js';
import { isTimeZone } from './time-zone.js';
import { DEFAULT_SETTINGS, SETTING_BOUNDS, SETTING_KEYS, type SensorSettings } from './settings.js';

/** One `sensors` entry: a glob over sensor ids and the settings it overrides. */
export interface SensorRule {
  match: string;
  overrides: Partial<SensorSettings>;
}

/** A validated engine config: the default settings and the per-sensor rules, first match wins. */
export interface EngineConfig {
  defaults: SensorSettings;
  sensors: SensorRule[];
}

/** The config used when no file is given: DEFAULT_SETTINGS for every sensor. */
export function defaultConfig(): EngineConfig {
  return { defaults: { ...DEFAULT_SETTINGS }, sensors: [] };
}

/**
 * A YAML parse failure as "line L, column C: problem": the parser's own first line ends in a bare
 * "at line L, column C:" that introduces a code excerpt, which a one-line message cannot show.
 */
export function describeYamlError(err: unknown): string {
  const first = (err instanceof Error ? err.message : String(err)).split('\n')[0].trim();
  const pos = (err as { linePos?: { line: number; col: number }[] }).linePos?.[0];
  const problem = first.replace(/\s*at line \d+, column \d+:?\s*$/, '').replace(/:\s*$/, '');
  const where = pos ? `line ${pos.line}, column ${pos.col}: ` : '';
  return `not valid YAML or JSON: ${where}${problem}`;
}

/** Parse config text (YAML is a superset of JSON, so one parser reads both), then validate it. */
export function parseConfigText(text: string, source = 'config'): EngineConfig {
  let raw: unknown;
  try {
    raw = YAML.parse(text);
  } catch (err) {
    throw new StreamfenceError('CONFIG_INVALID', `${source}: ${describeYamlError(err)}`);
  }
  return validateConfig(raw ?? {}, source);
}

/**
 * Check a parsed config object and fill in the defaults. Refuses unknown keys
 * (CONFIG_UNKNOWN_KEY), wrong types and out-of-range values (CONFIG_INVALID) and settings that
 * contradict each other (CONFIG_CONTRADICTION), each with a message naming the key and what to
 * change; `source` (a file name) starts the message.
 *
 * @example
 * const config = validateConfig({ defaults: { window: '6h', buckets: 6 }, sensors: [{ match: 'line-1/**', fenceK: 2 }] });
 * validateConfig({ defaults: { fenceK: 3, outerK: 2 } }); // throws CONFIG_CONTRADICTION: "outerK (2) must be greater than fenceK (3)"
 */
export function validateConfig(raw: unknown, source = 'config'): EngineConfig {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) {
    throw new StreamfenceError(
      'CONFIG_INVALID',
      `${source}: the top level must be an object with "defaults" and/or "sensors"`,
    );
  }
  const top = raw as Record<string, unknown>;
  for (const key of Object.keys(top)) {
    if (key !== 'defaults' && key !== 'sensors') {
      throw new StreamfenceError(
        'CONFIG_UNKNOWN_KEY',
        `${source}: unknown top-level key "${key}"; allowed: defaults, sensors`,
      );
    }
  }
  const defaultsPart = parseSettings(top.defaults ?? {}, `${source}: defaults`, false);
  const defaults: SensorSettings = { ...DEFAULT_SETTINGS, ...defaultsPart };
  // Critical levels the user left out follow the warning levels they wrote (as `tune` does), so
  // `zLimit: 5` alone is not refused because of the default zCritical.
  const writtenInDefaults = { outerK: 'outerK' in defaultsPart, zCritical: 'zCritical' in defaultsPart };
  if (!writtenInDefaults.outerK) defaults.outerK = derivedOuterK(defaults.fenceK);
  if (!writtenInDefaults.zCritical) defaults.zCritical = derivedZCritical(defaults.zLimit);
  checkContradictions(defaults, `${source}: defaults`);

  const sensors: SensorRule[] = [];
  if (top.sensors !== undefined) {
    if (!Array.isArray(top.sensors)) {
      throw new StreamfenceError(
        'CONFIG_INVALID',
        `${source}: "sensors" must be a list of { match: "<glob>", ...overrides }`,
      );
    }
    top.sensors.forEach((entry, index) => {
      const where = `${source}: sensors[${index}]`;
      if (typeof entry !== 'object' || entry === null || Array.isArray(entry)) {
        throw new StreamfenceError('CONFIG_INVALID', `${where} must be an object with a "match" glob`);
      }
      const { match, ...rest } = entry as Record<string, unknown>;
      if (typeof match !== 'string' || match.length === 0) {
        throw new StreamfenceError(
          'CONFIG_INVALID',
          `${where}: "match" must be a non-empty glob on the sensor id`,
        );
      }
      const overrides = parseSettings(rest, where, true);
      // An override's critical level follows its own warning level unless someone wrote one.
      if (overrides.fenceK !== undefined && overrides.outerK === undefined && !writtenInDefaults.outerK) {
        overrides.outerK = derivedOuterK(overrides.fenceK);
      }
      if (
        overrides.zLimit !== undefined &&
        overrides.zCritical === undefined &&
        !writtenInDefaults.zCritical
      ) {
        overrides.zCritical = derivedZCritical(overrides.zLimit);
      }
      checkContradictions({ ...defaults, ...overrides }, `${where} (match "${match}")`);
      sensors.push({ match, overrides });
    });
  }
  return { defaults, sensors };
}

type Parsed = Partial<SensorSettings>;

/** outerK when the user did not write one: max(3, 2 × fenceK), the rule `tune` uses. */
export function derivedOuterK(fenceK: number): number {
  return Math.max(DEFAULT_SETTINGS.outerK, 2 * fenceK);
}

/** zCritical when the user did not write one: max(5, zLimit + 2), the rule `tune` uses. */
export function derivedZCritical(zLimit: number): number {
  return Math.max(DEFAULT_SETTINGS.zCritical, zLimit + 2);
}

function parseSettings(raw: unknown, where: string, isOverride: boolean): Parsed {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) {
    throw new StreamfenceError('CONFIG_INVALID', `${where} must be an object of settings`);
  }
  const out: Record<string, unknown> = {};
  for (const [key, value] of Object.entries(raw as Record<string, unknown>)) {
    if (!(SETTING_KEYS as string[]).includes(key)) {
      throw new StreamfenceError(
        'CONFIG_UNKNOWN_KEY',
        `${where}: unknown key "${key}"; allowed: ${isOverride ? 'match, ' : ''}${SETTING_KEYS.join(', ')}`,
      );
    }
    out[key] = parseOne(key as keyof SensorSettings, value, where);
  }
  return out as Parsed;
}

function bad(where: string, key: string, want: string, got: unknown): never {
  throw new StreamfenceError(
    'CONFIG_INVALID',
    `${where}: "${key}" must be ${want}, got ${JSON.stringify(got)}`,
  );
}

function parseOne(key: keyof SensorSettings, value: unknown, where: string): unknown {
  return SETTING_PARSERS[key](value, (want) => bad(where, key, want, value));
}

/** Checks one setting's value and returns it as the engine holds it; `fail` says what it must be. */
type SettingParser = (value: unknown, fail: (want: string) => never) => unknown;

const positiveNumber: SettingParser = (value, fail) =>
  typeof value === 'number' && Number.isFinite(value) && value > 0 ? value : fail('a positive number');

const wholeNumber =
  (min: number, max = Number.MAX_SAFE_INTEGER): SettingParser =>
  (value, fail) =>
    typeof value === 'number' && Number.isInteger(value) && value >= min && value <= max
      ? value
      : fail(`a whole number from ${min} to ${max}`);

const oneOf =
  (...choices: string[]): SettingParser =>
  (value, fail) =>
    typeof value === 'string' && choices.includes(value) ? value : fail(`one of ${choices.join(', ')}`);

/** A duration text (or ms) from `minMs` to 31 days, returned in ms. */
const durationFrom =
  (minMs: number, want: string): SettingParser =>
  (value, fail) => {
    const ms = parseDuration(value);
    return ms === null || ms < minMs || ms > SETTING_BOUNDS.maxWindowMs ? fail(want) : ms;
  };

/** One parser per setting: a new setting without one is a type error here. */
const SETTING_PARSERS: Record<keyof SensorSettings, SettingParser> = {
  fenceK: positiveNumber,
  outerK: positiveNumber,
  zLimit: positiveNumber,
  zCritical: positiveNumber,
  trigger: oneOf('fence', 'z', 'either', 'both'),
  direction: oneOf('both', 'high', 'low'),
  min: finiteOrNull,
  max: finiteOrNull,
  minSamples: wholeNumber(2),
  flatlineAfter: wholeNumber(0),
  badQualityAfter: wholeNumber(0),
  raiseAfter: wholeNumber(1, SETTING_BOUNDS.maxRaiseWindow),
  raiseWindow: wholeNumber(1, SETTING_BOUNDS.maxRaiseWindow),
  clearAfter: wholeNumber(1),
  deadband: (value, fail) =>
    typeof value === 'number' && Number.isFinite(value) && value >= 0
      ? value
      : fail('a number of spreads, 0 or more (0 = no margin)'),
  clearDelay: durationFrom(0, `a duration from 0 to 31d such as "30s" or "2m" (0 = none)`),
  onDelay: durationFrom(0, `a duration from 0 to 31d such as "30s" or "2m" (0 = none)`),
  buckets: wholeNumber(1, SETTING_BOUNDS.maxBuckets),
  profile: oneOf('none', 'daily'),
  timeZone: (value, fail) =>
    typeof value === 'string' && isTimeZone(value)
      ? value
      : fail('an IANA time zone name such as "UTC" or "Europe/Berlin"'),
  profileDays: wholeNumber(1, SETTING_BOUNDS.maxProfileDays),
  learnWhileRaised: (value, fail) => (typeof value === 'boolean' ? value : fail('true or false')),
  staleAfter: (value, fail) =>
    value === null || value === 'off'
      ? null
      : durationFrom(SETTING_BOUNDS.minWindowMs, `"off" or a duration from 1s to 31d such as "15m"`)(
          value,
          fail,
        ),
  window: durationFrom(SETTING_BOUNDS.minWindowMs, `a duration from 1s to 31d such as "24h" or "90m"`),
};

function finiteOrNull(value: unknown, fail: (want: string) => never): unknown {
  if (value === null) return null;
  return typeof value === 'number' && Number.isFinite(value) ? value : fail('a finite number or null');
}

function contradiction(where: string, msg: string): never {
  throw new StreamfenceError('CONFIG_CONTRADICTION', `${where}: ${msg}`);
}

const usesFence = (settings: SensorSettings) => settings.trigger !== 'z';
const usesZ = (settings: SensorSettings) => settings.trigger !== 'fence';

function checkContradictions(settings: SensorSettings, where: string): void {
  if (settings.outerK <= settings.fenceK)
    contradiction(where, `outerK (${settings.outerK}) must be greater than fenceK (${settings.fenceK})`);
  if (settings.zCritical <= settings.zLimit)
    contradiction(
      where,
      `zCritical (${settings.zCritical}) must be greater than zLimit (${settings.zLimit})`,
    );
  if (settings.raiseAfter > settings.raiseWindow) {
    contradiction(
      where,
      `raiseAfter (${settings.raiseAfter}) cannot exceed raiseWindow (${settings.raiseWindow})`,
    );
  }
  // A margin as wide as the warning level would leave no reading that could clear an alert.
  if (settings.deadband > 0 && usesFence(settings) && settings.deadband >= settings.fenceK)
    contradiction(
      where,
      `deadband (${settings.deadband}) must be below fenceK (${settings.fenceK}), or no reading could clear an alert`,
    );
  if (settings.deadband > 0 && usesZ(settings) && settings.deadband >= settings.zLimit)
    contradiction(
      where,
      `deadband (${settings.deadband}) must be below zLimit (${settings.zLimit}), or no reading could clear an alert`,
    );
  if (settings.min !== null && settings.max !== null && settings.min >= settings.max)
    contradiction(where, `min (${settings.min}) must be below max (${settings.max})`);
  if (settings.window % settings.buckets !== 0) {
    contradiction(
      where,
      `window (${formatDuration(settings.window)}) must split evenly into ${settings.buckets} buckets`,
    );
  }
}

/** Resolves the effective settings of a sensor id: the first matching rule wins over defaults. */
export class SettingsResolver {
  private readonly matchers: { test: (sensor: string) => boolean; settings: SensorSettings }[];
  constructor(readonly config: EngineConfig) {
    this.matchers = config.sensors.map((r) => ({
      test: picomatch(r.match, { dot: true }),
      settings: Object.freeze({ ...config.defaults, ...r.overrides }),
    }));
    Object.freeze(config.defaults);
  }

  /** The settings of the first rule whose glob matches the sensor, else the defaults. */
  resolve(sensor: string): SensorSettings {
    for (const matcher of this.matchers) if (matcher.test(sensor)) return matcher.settings;
    return this.config.defaults;
  }
}

/** The config as plain JSON (window as a duration string), suitable for summaries and as a --config file. */
export function configToJson(config: EngineConfig): Record<string, unknown> {
  const conv = (settings: Partial<SensorSettings>) => {
    const out: Record<string, unknown> = { ...settings };
    if (settings.window !== undefined) out.window = formatDuration(settings.window);
    if (settings.clearDelay !== undefined) out.clearDelay = formatDuration(settings.clearDelay);
    if (settings.onDelay !== undefined) out.onDelay = formatDuration(settings.onDelay);
    if (settings.staleAfter !== undefined)
      out.staleAfter = settings.staleAfter === null ? 'off' : formatDuration(settings.staleAfter);
    return out;
  };
  return {
    defaults: conv(config.defaults),
    sensors: config.sensors.map((r) => ({ match: r.match, ...conv(r.overrides) })),
  };
}
