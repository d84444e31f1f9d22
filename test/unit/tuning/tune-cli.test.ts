import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../../services/cli/commands/tune.js';

const dir = mkdtempSync(join(tmpdir(), 'sf-tune-cli-'));
const p = (name: string) => join(dir, name);
writeFileSync(p('labels.csv'), 'sensor,start,end,kind\na,2026-01-05T00:10:00Z,2026-01-05T00:20:00Z,spike\n');
writeFileSync(
  p('one-time.ndjson'),
  '{"sensor":"a","ts":"2026-01-05T00:00:00Z","value":1}\n{"sensor":"b","ts":"2026-01-05T00:00:00Z","value":2}\n',
);
writeFileSync(p('junk.ndjson'), 'not json\n');

const fails = async (argv: string[], code: string, re: RegExp) => {
  await expect(main(argv)).rejects.toMatchObject({ code, message: expect.stringMatching(re) });
};

describe('streamfence tune: arguments and unusable input', () => {
  it('--help works', async () => {
    expect(await main(['--help'])).toBe(0);
  });

  it('refuses bad arguments with ARGS_INVALID naming the fix', async () => {
    await fails([], 'ARGS_INVALID', /give one readings file/);
    await fails([p('one-time.ndjson'), '--out', p('o')], 'ARGS_INVALID', /--labels FILE is required/);
    await fails([p('one-time.ndjson'), '--labels', p('labels.csv')], 'ARGS_INVALID', /--out DIR is required/);
    const ok = [p('one-time.ndjson'), '--labels', p('labels.csv'), '--out', p('o')];
    await fails([...ok, '--budget', '0'], 'ARGS_INVALID', /--budget must be a positive number/);
    await fails(
      [...ok, '--workers', 'many'],
      'ARGS_INVALID',
      /--workers must be a whole number from 1 to 256/,
    );
    await fails([...ok, '--grace', 'soon'], 'ARGS_INVALID', /--grace must be a duration/);
    await fails(
      [...ok, '--grid', 'fenceK=2;speed=3'],
      'ARGS_INVALID',
      /grid: "speed=3": unknown key "speed"/,
    );
  });

  it('refuses input it cannot tune on', async () => {
    const base = ['--labels', p('labels.csv'), '--out', p('o'), '--grid', 'fenceK=2', '--workers', '1'];
    await fails([p('missing.ndjson'), ...base], 'INPUT_UNREADABLE', /missing\.ndjson/);
    await fails(
      [p('junk.ndjson'), ...base],
      'INPUT_UNREADABLE',
      /no valid readings \(line 1: line is not valid JSON\)/,
    );
    await fails([p('one-time.ndjson'), ...base], 'INPUT_UNREADABLE', /all readings share one timestamp/);
    await fails(
      [p('one-time.ndjson'), ...base.slice(0, 1), p('nope.csv'), ...base.slice(2)],
      'INPUT_UNREADABLE',
      /cannot read labels/,
    );
  });
});
