/** The setup layer every command uses: option parsing, config-file loading and stop signals. */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { numberOption, parseCommandArgs, parseNumber } from '../../../services/setup/args.js';
import { loadEngineConfig } from '../../../services/setup/config-file.js';
import { onStopSignal, untilStopSignal } from '../../../services/setup/signals.js';
import { defaultConfig } from '../../../libs/config/config.js';

const refusal = (fn: () => unknown) => {
  try {
    fn();
  } catch (e) {
    return e as { code?: string; message: string };
  }
  throw new Error('expected a refusal');
};

describe('numeric options', () => {
  it('returns the number when it meets the rule', () => {
    expect(parseNumber('0', 'port', { whole: true, min: 0, max: 65535 })).toBe(0);
    expect(parseNumber('2.5', 'budget', { above: 0 })).toBe(2.5);
    expect(parseNumber('-7', 'seed', { whole: true, min: -10, max: 10 })).toBe(-7);
  });

  it('says what the option accepts', () => {
    const cases: [string, Parameters<typeof parseNumber>[2], string][] = [
      ['70000', { whole: true, min: 0, max: 65535 }, 'a whole number from 0 to 65535'],
      ['1.5', { whole: true, above: 0 }, 'a positive whole number'],
      ['0', { above: 0, what: 'alerts per hour' }, 'a positive number of alerts per hour'],
      ['5', { whole: true, min: 10 }, 'a whole number >= 10'],
      ['', { min: 0 }, 'a number >= 0'],
      ['abc', {}, 'a number'],
    ];
    for (const [raw, rule, says] of cases) {
      const e = refusal(() => parseNumber(raw, 'x', rule, 'demo'));
      expect(e.code).toBe('ARGS_INVALID');
      expect(e.message).toBe(`--x must be ${says}, got "${raw}" (see "streamfence demo --help")`);
    }
  });

  it('falls back when the option is absent', () => {
    const spec = { speed: { type: 'string' as const } };
    const rule = { min: 1, max: 3600, fallback: 60 };
    expect(numberOption(parseCommandArgs('demo', [], spec), 'speed', 'demo', rule)).toBe(60);
    expect(numberOption(parseCommandArgs('demo', ['--speed', '120'], spec), 'speed', 'demo', rule)).toBe(120);
  });
});

describe('config files', () => {
  it('defaults without a file; a file is parsed and validated', () => {
    expect(loadEngineConfig(undefined)).toEqual(defaultConfig());
    expect(loadEngineConfig(null)).toEqual(defaultConfig());
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-setup-'));
    const good = path.join(dir, 'good.yaml');
    writeFileSync(good, 'defaults:\n  fenceK: 2\n');
    expect(loadEngineConfig(good).defaults.fenceK).toBe(2);
    const unknown = path.join(dir, 'unknown.yaml');
    writeFileSync(unknown, 'defaults:\n  fenceKK: 2\n');
    expect(refusal(() => loadEngineConfig(unknown)).code).toBe('CONFIG_UNKNOWN_KEY');
  });

  it('an unreadable file is one CONFIG_INVALID line naming the file and where it came from', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-setup-'));
    const missing = path.join(dir, 'nope.yaml');
    const e = refusal(() => loadEngineConfig(missing, '--config (or STREAMFENCE_CONFIG)'));
    expect(e.code).toBe('CONFIG_INVALID');
    expect(e.message).toBe(
      `cannot read the config file "${missing}": no such file; check --config (or STREAMFENCE_CONFIG)`,
    );
    expect(refusal(() => loadEngineConfig(dir)).message).toContain('it is a directory');
  });
});

describe('stop signals', () => {
  const before = { int: process.listenerCount('SIGINT'), term: process.listenerCount('SIGTERM') };
  afterEach(() => {
    expect(process.listenerCount('SIGINT')).toBe(before.int);
    expect(process.listenerCount('SIGTERM')).toBe(before.term);
  });

  it('the first signal stops once and the handlers go away', () => {
    const seen: string[] = [];
    onStopSignal((signal) => seen.push(signal));
    process.emit('SIGTERM', 'SIGTERM');
    expect(seen).toEqual(['SIGTERM']);
  });

  it('with onRepeat, later signals are reported until released', () => {
    const seen: string[] = [];
    const release = onStopSignal((signal) => seen.push(`stop ${signal}`), {
      onRepeat: (signal) => seen.push(`again ${signal}`),
    });
    process.emit('SIGINT', 'SIGINT');
    process.emit('SIGTERM', 'SIGTERM');
    release();
    expect(seen).toEqual(['stop SIGINT', 'again SIGTERM']);
  });

  it('release before any signal removes the handlers', () => {
    const release = onStopSignal(() => {
      throw new Error('not expected');
    });
    release();
  });

  it('untilStopSignal resolves with the signal', async () => {
    const stopped = untilStopSignal();
    process.emit('SIGINT', 'SIGINT');
    await expect(stopped).resolves.toBe('SIGINT');
  });
});
