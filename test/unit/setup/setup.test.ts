/** The setup layer every command uses: option parsing, config-file loading and stop signals. */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import {
  PORT_OR_ANY_RULE,
  PORT_RULE,
  numberOption,
  parseCommandArgs,
  parseNumber,
  parseTimeOrAgo,
  parseTimeValue,
  warnNoEffect,
} from '../../../services/setup/args.js';
import { fileProblem } from '../../../services/fs-errors.js';
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
      `cannot read the config file "${missing}": no such file or folder; check --config (or STREAMFENCE_CONFIG)`,
    );
    expect(refusal(() => loadEngineConfig(dir)).message).toContain('it is a folder, not a file');
  });

  it('an empty config file is refused, not read as the defaults', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-setup-'));
    for (const text of ['', '\n  \n', '# only a comment\n']) {
      const file = path.join(dir, 'empty.yaml');
      writeFileSync(file, text);
      const e = refusal(() => loadEngineConfig(file));
      expect(e.code).toBe('CONFIG_INVALID');
      expect(e.message).toMatch(/is empty \(or only comments\).*leave --config out/);
    }
  });

  it('a YAML error names its line and column and the problem, not a bare ":"', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-setup-'));
    const file = path.join(dir, 'bad.yaml');
    writeFileSync(file, 'defaults:\n  fenceK: [1\n');
    const e = refusal(() => loadEngineConfig(file));
    expect(e.message).toMatch(
      /bad\.yaml: not valid YAML or JSON: line 3, column 1: Flow sequence .* end with a \]$/,
    );
    expect(e.message).not.toMatch(/:\s*$/);
  });
});

describe('shared option rules', () => {
  const spec = { budget: { type: 'string' }, report: { type: 'boolean' }, out: { type: 'string' } } as const;
  const envOf = { budget: 'STREAMFENCE_ALERT_BUDGET', report: 'STREAMFENCE_REPLAY_REPORT' };

  it('a negative value reaches the range check instead of parseArgs\' "ambiguous" text', () => {
    const parsed = parseCommandArgs('replay', ['--budget', '-1'], spec);
    expect(parsed.values.budget).toBe('-1');
    const e = refusal(() => numberOption(parsed, 'budget', 'replay', { above: 0, fallback: 6 }));
    expect(e.message).toBe('--budget must be a positive number, got "-1" (see "streamfence replay --help")');
    expect(e.message.split('\n')).toHaveLength(1);
    // `--` still ends the options; a negative positional after it stays a positional.
    expect(parseCommandArgs('replay', ['--', '-1'], spec).positionals).toEqual(['-1']);
  });

  it('an option not given as a flag takes its environment variable; the flag wins', () => {
    const env = { STREAMFENCE_ALERT_BUDGET: '4', STREAMFENCE_REPLAY_REPORT: 'yes' };
    const fromEnv = parseCommandArgs('replay', [], spec, true, envOf, env);
    expect(fromEnv.values).toMatchObject({ budget: '4', report: true });
    expect(fromEnv.fromEnv).toEqual(envOf);
    const flagWins = parseCommandArgs('replay', ['--budget', '9'], spec, true, envOf, env);
    expect(flagWins.values.budget).toBe('9');
    // A bad value from the environment is named by its variable.
    const bad = parseCommandArgs('replay', [], spec, true, envOf, { STREAMFENCE_ALERT_BUDGET: '-2' });
    expect(refusal(() => numberOption(bad, 'budget', 'replay', { above: 0, fallback: 6 })).message).toMatch(
      /^STREAMFENCE_ALERT_BUDGET must be a positive number, got "-2"/,
    );
    expect(
      refusal(() => parseCommandArgs('replay', [], spec, true, envOf, { STREAMFENCE_REPLAY_REPORT: 'maybe' }))
        .message,
    ).toMatch(/STREAMFENCE_REPLAY_REPORT must be true or false/);
  });

  it('ports are 1-65535 (0 only where any free port is meant), in one line', () => {
    expect(parseNumber('8080', 'port', PORT_RULE)).toBe(8080);
    expect(parseNumber('0', 'port', PORT_OR_ANY_RULE)).toBe(0);
    expect(refusal(() => parseNumber('0', 'port', PORT_RULE)).message).toMatch(/from 1 to 65535, got "0"/);
    expect(refusal(() => parseNumber('70000', 'metrics-port', PORT_OR_ANY_RULE)).message).toBe(
      '--metrics-port must be a TCP port from 1 to 65535, or 0 for any free port, got "70000"',
    );
  });

  it('times need a zone, as readings do; durations count back from now', () => {
    expect(parseTimeValue('2026-12-02T05:00:00Z', '--from', 'replay')).toBe(Date.UTC(2026, 11, 2, 5));
    expect(parseTimeValue('2026-12-02T06:00:00+01:00', '--from', 'replay')).toBe(Date.UTC(2026, 11, 2, 5));
    expect(parseTimeValue('1764651600000', '--from', 'replay')).toBe(1764651600000);
    expect(refusal(() => parseTimeValue('2026-12-02T05:00:00', '--from', 'replay')).message).toMatch(
      /--from "2026-12-02T05:00:00" is not a time with a zone/,
    );
    const now = Date.UTC(2026, 11, 2, 12);
    expect(parseTimeOrAgo('2h', '--since', now, 'alerts')).toBe(now - 7_200_000);
    expect(refusal(() => parseTimeOrAgo('2026-12-02T05:00:00', '--since', now, 'alerts')).code).toBe(
      'ARGS_INVALID',
    );
  });

  it('options without effect are named in one warning line', () => {
    const lines: string[] = [];
    const sink = { write: (t: string) => lines.push(t) };
    const parsed = parseCommandArgs('replay', ['--budget', '3'], spec);
    warnNoEffect('replay', parsed, ['budget', 'out'], 'without --report', sink);
    warnNoEffect('replay', parsed, ['out'], 'never shown', sink);
    expect(lines).toEqual(['streamfence replay: warning: --budget has no effect without --report\n']);
  });

  it("file-system failures are words, never node's errno text", () => {
    const eexist = Object.assign(new Error("EEXIST: file already exists, mkdir 'out'"), { code: 'EEXIST' });
    expect(fileProblem(eexist)).toBe('a file of that name is in the way (a folder is needed)');
    expect(fileProblem(Object.assign(new Error('x'), { code: 'EWEIRD' }))).toBe(
      'the system refused it (EWEIRD)',
    );
    expect(fileProblem(new Error("ENOTDIR: not a directory, mkdir 'a/b'"))).toBe('not a directory');
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
