import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { execFile } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { promisify } from 'node:util';
import { main } from '../../../services/cli/commands/replay.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { isStreamfenceError } from '../../../libs/errors/index.js';

const repo = resolve(import.meta.dirname, '../../..');
let dir: string;
let input: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'sf-replay-cli-'));
  input = join(dir, 'in.ndjson');
  writeFileSync(input, '{"sensor":"a","ts":"2026-04-01T00:00:00Z","value":1}\nbad\n');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));
afterEach(() => vi.restoreAllMocks());

function capture() {
  const out: string[] = [];
  const err: string[] = [];
  vi.spyOn(process.stdout, 'write').mockImplementation((c) => (out.push(String(c)), true));
  vi.spyOn(process.stderr, 'write').mockImplementation((c) => (err.push(String(c)), true));
  return { out, err };
}

async function codeOf(argv: string[]): Promise<{ code: string; message: string }> {
  capture();
  try {
    await main(argv);
  } catch (e) {
    if (isStreamfenceError(e)) return { code: e.code, message: e.message };
    throw e;
  }
  throw new Error(`expected "${argv.join(' ')}" to fail`);
}

describe('streamfence replay (command)', () => {
  it('prints help on --help and exits 0', async () => {
    const { out } = capture();
    expect(await main(['--help'])).toBe(0);
    expect(out.join('')).toContain('Usage: streamfence replay INPUT');
  });

  it('replays into --out, prints the NOTICE banner and a one-line summary on stderr, exits 0 despite bad lines', async () => {
    const { err, out } = capture();
    const outDir = join(dir, 'ok');
    expect(await main([input, '--out', outDir])).toBe(0);
    vi.restoreAllMocks();
    expect(out.join('')).toBe('');
    const text = err.join('');
    expect(text).toContain(NOTICE);
    expect(text).toMatch(/streamfence replay: 2 lines, 1 readings from 1 sensors, 1 rejected/);
    const summary = JSON.parse(readFileSync(join(outDir, 'summary.json'), 'utf8'));
    expect(summary.input).toEqual({ path: input, format: 'ndjson', lines: 2, blank: 0 });
    expect(summary.rejected).toEqual({ total: 1, byReason: { not_json: 1 } });
    expect(existsSync(join(outDir, 'alerts.ndjson'))).toBe(true);
  });

  it('refuses unusable arguments with ARGS_INVALID', async () => {
    expect((await codeOf([])).code).toBe('ARGS_INVALID');
    expect(await codeOf([input, '--bogus'])).toMatchObject({
      code: 'ARGS_INVALID',
      message: expect.stringContaining('--bogus'),
    });
    expect((await codeOf([input, input])).message).toContain('give one input file');
    expect((await codeOf([input, '--format', 'xml'])).code).toBe('ARGS_INVALID');
    writeFileSync(join(dir, 'readings.txt'), 'x\n');
    expect((await codeOf([join(dir, 'readings.txt')])).message).toContain('--format');
    expect((await codeOf([input, '--out'])).code).toBe('ARGS_INVALID');
  });

  it('refuses a missing or unreadable input with INPUT_UNREADABLE', async () => {
    expect(await codeOf([join(dir, 'nope.ndjson')])).toMatchObject({
      code: 'INPUT_UNREADABLE',
      message: expect.stringContaining('no such file'),
    });
    expect((await codeOf([dir, '--format', 'csv'])).message).toContain('it is a folder, not a file');
  });

  it('refuses an output directory that cannot be created with OUTPUT_UNWRITABLE', async () => {
    expect(await codeOf([input, '--out', join(input, 'sub')])).toMatchObject({
      code: 'OUTPUT_UNWRITABLE',
      message: expect.stringContaining('choose another with --out'),
    });
  });

  it('refuses a bad config with its CONFIG_* code', async () => {
    const cfg = (name: string, text: string) => {
      const p = join(dir, name);
      writeFileSync(p, text);
      return p;
    };
    expect((await codeOf([input, '--config', join(dir, 'none.yaml')])).code).toBe('CONFIG_INVALID');
    expect((await codeOf([input, '--config', cfg('u.yaml', 'defaults:\n  fenceq: 2\n')])).code).toBe(
      'CONFIG_UNKNOWN_KEY',
    );
    expect(
      (await codeOf([input, '--config', cfg('c.yaml', 'defaults:\n  fenceK: 4\n  outerK: 3\n')])).code,
    ).toBe('CONFIG_CONTRADICTION');
    expect((await codeOf([input, '--config', cfg('y.yaml', 'defaults: [\n')])).code).toBe('CONFIG_INVALID');
  });

  it('exits 2 with one clear stderr line from the real CLI entry', async () => {
    const run = promisify(execFile);
    const missing = join(dir, 'missing.csv');
    const r = await run(process.execPath, ['--import', 'tsx', 'services/cli/main.ts', 'replay', missing], {
      cwd: repo,
    }).then(
      () => ({ code: 0, stderr: '' }),
      (e: { code: number; stderr: string }) => e,
    );
    expect(r.code).toBe(2);
    expect(r.stderr.trim()).toBe(
      `streamfence: cannot read input "${missing}": no such file or folder [INPUT_UNREADABLE]`,
    );
  });
});
