import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, statSync, writeFileSync, createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import {
  checkInputFile,
  detectFormat,
  isGzipContent,
  newInputStats,
  readInput,
  type InputFormat,
  type InputRecord,
} from '../../../services/replay/input.js';
import { isStreamfenceError } from '../../../libs/errors/index.js';

let dir: string;
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'sf-replay-input-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function file(name: string, content: string | Buffer): string {
  const p = join(dir, name);
  writeFileSync(p, content);
  return p;
}

async function all(path: string, format: InputFormat): Promise<InputRecord[]> {
  const out: InputRecord[] = [];
  for await (const b of readInput(path, format)) out.push(...b);
  return out;
}

async function failure(p: Promise<unknown>): Promise<{ code: string; message: string }> {
  try {
    await p;
  } catch (e) {
    if (isStreamfenceError(e)) return { code: e.code, message: e.message };
    throw e;
  }
  throw new Error('expected a failure');
}

const T0 = '2026-04-01T00:00:00Z';

describe('detectFormat', () => {
  it('uses --format first, then the extension (looking through .gz)', () => {
    expect(detectFormat('a.ndjson')).toBe('ndjson');
    expect(detectFormat('a.JSONL')).toBe('ndjson');
    expect(detectFormat('a.json')).toBe('ndjson');
    expect(detectFormat('dir.v2/a.csv.gz')).toBe('csv');
    expect(detectFormat('a.txt', 'CSV')).toBe('csv');
  });

  it('refuses an unknown extension or format with ARGS_INVALID', () => {
    expect(() => detectFormat('readings.txt')).toThrow(/--format ndjson\|csv/);
    expect(() => detectFormat('a.csv', 'xml')).toThrow(/unknown input format "xml"/);
  });
});

describe('readInput', () => {
  it('reads NDJSON in order with physical line numbers, skipping blank lines', async () => {
    const p = file(
      'a.ndjson',
      `{"sensor":"s1","ts":"${T0}","value":1}\n\n   \n{"sensor":"s2","ts":1775001600000,"value":2.5}\nnope\n`,
    );
    const stats = newInputStats();
    const recs: InputRecord[] = [];
    for await (const b of readInput(p, 'ndjson', stats)) recs.push(...b);
    expect(recs.map((r) => r.line)).toEqual([1, 4, 5]);
    expect(recs[0].result).toEqual({ ok: true, reading: { sensor: 's1', ts: Date.parse(T0), value: 1 } });
    expect(recs[1].result).toMatchObject({ ok: true, reading: { sensor: 's2', value: 2.5 } });
    expect(recs[2]).toMatchObject({ line: 5, raw: 'nope', result: { ok: false, reason: 'not_json' } });
    expect(stats).toEqual({ lines: 5, blank: 2, bytes: statSync(p).size });
  });

  it('reads CSV with a BOM, CRLF, any column order, extra columns and quoted fields', async () => {
    const p = file(
      'b.csv',
      '\uFEFFnote,Value,sensor,ts\r\n' +
        `"hello, ""world""",1.25,"north/pump-1",${T0}\r\n` +
        `,7,"odd ""quoted"", id",1775001600000\r\n` +
        '\r\n' +
        `x,abc,s3,${T0}\r\n`,
    );
    const recs = await all(p, 'csv');
    expect(recs.map((r) => r.line)).toEqual([2, 3, 5]);
    expect(recs[0].result).toEqual({
      ok: true,
      reading: { sensor: 'north/pump-1', ts: Date.parse(T0), value: 1.25 },
    });
    expect(recs[1].result).toEqual({
      ok: true,
      reading: { sensor: 'odd "quoted", id', ts: 1775001600000, value: 7 },
    });
    expect(recs[2].result).toMatchObject({ ok: false, reason: 'value_not_number' });
    expect(recs[2].raw).toBe(`x,abc,s3,${T0}`);
  });

  it('tells gzip by content, not by name: compressed .ndjson read decompressed, plain .gz read as it is', async () => {
    const zipped = file('zipped.ndjson', gzipSync(`{"sensor":"s","ts":"${T0}","value":3}\n`));
    expect(isGzipContent(zipped)).toBe(true);
    expect((await all(zipped, 'ndjson')).map((r) => r.result.ok)).toEqual([true]);
    const plain = file('plain.ndjson.gz', `{"sensor":"s","ts":"${T0}","value":3}\n`);
    expect(isGzipContent(plain)).toBe(false);
    expect((await all(plain, 'ndjson')).map((r) => r.result.ok)).toEqual([true]);
  });

  it('refuses an empty file (0 bytes) and one with only blank lines or a header with INPUT_EMPTY', async () => {
    expect(() => checkInputFile(file('empty.ndjson', ''))).toThrow(/is empty \(0 bytes\)/);
    expect(await failure(all(file('blank.ndjson', '\n  \n'), 'ndjson'))).toMatchObject({
      code: 'INPUT_EMPTY',
      message: expect.stringContaining('holds nothing to read'),
    });
    expect((await failure(all(file('header.csv', 'sensor,ts,value\n'), 'csv'))).code).toBe('INPUT_EMPTY');
    expect(checkInputFile(file('one.ndjson', 'x\n'))).toEqual({ size: 2, gzip: false });
  });

  it('reads gzip-compressed files', async () => {
    const p = file('c.ndjson.gz', gzipSync(`{"sensor":"s","ts":"${T0}","value":3}\n`));
    const recs = await all(p, 'ndjson');
    expect(recs).toHaveLength(1);
    expect(recs[0].result.ok).toBe(true);
  });

  it('fails with INPUT_UNREADABLE for a missing file, a directory, bad gzip and a CSV without the columns', async () => {
    expect(await failure(all(join(dir, 'missing.ndjson'), 'ndjson'))).toMatchObject({
      code: 'INPUT_UNREADABLE',
      message: expect.stringContaining('no such file'),
    });
    expect((await failure(all(dir, 'ndjson'))).code).toBe('INPUT_UNREADABLE');
    const gz = file('bad.ndjson.gz', Buffer.concat([gzipSync('{"sensor":"s"}\n').subarray(0, 12)]));
    expect((await failure(all(gz, 'ndjson'))).message).toContain('does not decompress');
    const csv = file('nohdr.csv', `s1,${T0},1\n`);
    expect(await failure(all(csv, 'csv'))).toMatchObject({
      code: 'INPUT_UNREADABLE',
      message: expect.stringContaining('must name the columns sensor, ts and value'),
    });
    expect((await failure(all(file('empty.csv', '\n\n'), 'csv'))).message).toContain('no CSV header');
  });

  it('streams: 200k lines arrive in bounded batches, the first long before the file is read', async () => {
    const p = join(dir, 'big.ndjson');
    const w = createWriteStream(p);
    const base = Date.parse(T0);
    for (let k = 0; k < 200; k++) {
      let s = '';
      for (let i = 0; i < 1000; i++)
        s += `{"sensor":"big/s${i % 50}","ts":${base + k * 1000 + i},"value":${i}}\n`;
      if (!w.write(s)) await once(w, 'drain');
    }
    w.end();
    await once(w, 'finish');
    const size = statSync(p).size;
    const stats = newInputStats();
    let n = 0;
    let biggest = 0;
    let bytesAtFirst = -1;
    const t0 = performance.now();
    for await (const b of readInput(p, 'ndjson', stats)) {
      if (bytesAtFirst < 0) bytesAtFirst = stats.bytes;
      n += b.length;
      biggest = Math.max(biggest, b.length);
      for (const r of b) if (!r.result.ok) throw new Error(`line ${r.line} rejected`);
    }
    const secs = (performance.now() - t0) / 1000;
    expect(n).toBe(200_000);
    expect(biggest).toBeLessThan(20_000);
    // Only the first chunk(s) had been read when the first batch came out: the file is not slurped.
    expect(bytesAtFirst).toBeLessThan(size / 4);
    expect(secs).toBeLessThan(20);
  });

  it('never crashes on random bytes (fuzz, seeded)', async () => {
    let a = 12345;
    const rand = () => {
      a = (Math.imul(a, 1103515245) + 12345) >>> 0;
      return a / 2 ** 32;
    };
    for (let round = 0; round < 30; round++) {
      const len = Math.floor(rand() * 20_000);
      const buf = Buffer.alloc(len);
      // Mix random bytes with some structure (newlines, quotes, commas, braces) to reach more paths.
      const alphabet = [10, 13, 34, 44, 123, 125, 0xef, 0xbb, 0xbf, 0xff];
      for (let i = 0; i < len; i++)
        buf[i] = rand() < 0.3 ? alphabet[Math.floor(rand() * alphabet.length)] : Math.floor(rand() * 256);
      const header = round % 2 === 0 ? Buffer.from('sensor,ts,value\n') : Buffer.alloc(0);
      for (const format of ['ndjson', 'csv'] as const) {
        const p = file(
          `fuzz-${round}.${format}`,
          Buffer.concat([format === 'csv' ? header : Buffer.alloc(0), buf]),
        );
        try {
          const recs = await all(p, format);
          for (const r of recs) {
            expect(r.line).toBeGreaterThan(0);
            expect(typeof r.raw).toBe('string');
          }
        } catch (e) {
          // The only acceptable failure is the typed one for a CSV without a usable header.
          expect(isStreamfenceError(e) && e.code === 'INPUT_UNREADABLE' && format === 'csv').toBe(true);
        }
      }
    }
  });
});
