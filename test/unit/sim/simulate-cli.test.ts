import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseConfigText } from '../../../libs/config/config.js';
import { parseJsonReading } from '../../../libs/engine/reading.js';
import { parseLabelsCsv } from '../../../libs/scoring/labels.js';
import { main } from '../../../services/cli/commands/simulate.js';

const dir = mkdtempSync(join(tmpdir(), 'sf-sim-'));
const p = (name: string) => join(dir, name);
const common = ['--sensors', '5', '--duration', '12h', '--interval', '2m', '--seed', '42'];

describe('streamfence simulate', () => {
  it('same seed -> byte-identical readings and labels; readings parse; labels match the stream', async () => {
    expect(
      await main([
        ...common,
        '--readings',
        p('a.ndjson'),
        '--labels',
        p('a.csv'),
        '--config-out',
        p('cfg.yaml'),
      ]),
    ).toBe(0);
    expect(await main([...common, '--readings', p('b.ndjson'), '--labels', p('b.csv')])).toBe(0);
    expect(await main([...common.slice(0, -1), '43', '--readings', p('c.ndjson')])).toBe(0);
    const a = readFileSync(p('a.ndjson'));
    expect(a.equals(readFileSync(p('b.ndjson')))).toBe(true);
    expect(readFileSync(p('a.csv')).equals(readFileSync(p('b.csv')))).toBe(true);
    expect(a.equals(readFileSync(p('c.ndjson')))).toBe(false);
    const lines = a.toString().trimEnd().split('\n');
    expect(lines[0]).toBe(
      '{"sensor":"line-1/pasteuriser/outlet-temp","ts":"2026-01-05T00:00:00.000Z","value":' +
        JSON.parse(lines[0]).value +
        '}',
    );
    expect(lines.every((l) => parseJsonReading(l).ok)).toBe(true);
    const labels = parseLabelsCsv(readFileSync(p('a.csv'), 'utf8'));
    expect(labels.length).toBeGreaterThan(0);
    const sensors = new Set(lines.map((l) => JSON.parse(l).sensor as string));
    expect(sensors.size).toBe(5);
    for (const l of labels) expect(sensors.has(l.sensor)).toBe(true);
    // Dropouts leave holes: 5 sensors x 360 slots minus the readings dropped out.
    const dropped = labels
      .filter((l) => l.kind === 'dropout')
      .reduce((n, l) => n + (l.end - l.start) / 120_000 + 1, 0);
    expect(lines.length).toBe(5 * 360 - dropped);
    expect(parseConfigText(readFileSync(p('cfg.yaml'), 'utf8')).defaults.window).toBe(6 * 3_600_000);
  });

  it('CSV by extension, with a header; --no-faults gives no labels', async () => {
    expect(
      await main([...common, '--readings', p('d.csv'), '--labels', p('d-labels.csv'), '--no-faults']),
    ).toBe(0);
    const rows = readFileSync(p('d.csv'), 'utf8').trimEnd().split('\n');
    expect(rows[0]).toBe('sensor,ts,value');
    expect(rows).toHaveLength(1 + 5 * 360);
    expect(rows[1]).toMatch(/^line-1\/pasteuriser\/outlet-temp,2026-01-05T00:00:00\.000Z,\d+\.\d+$/);
    expect(readFileSync(p('d-labels.csv'), 'utf8')).toBe('sensor,start,end,kind\n');
  });

  it('unusable options fail with ARGS_INVALID naming the fix', async () => {
    const fails = async (argv: string[], re: RegExp) => {
      await expect(main(argv)).rejects.toMatchObject({
        code: 'ARGS_INVALID',
        message: expect.stringMatching(re),
      });
    };
    await fails([], /--readings FILE/);
    await fails(['--out', p('x.ndjson')], /--out is an output folder in replay and tune.*--readings FILE/);
    await fails(['--readings', p('x.ndjson'), '--seed', '-1.5'], /--seed must be a whole number/);
    await fails(
      ['--readings', p('x.ndjson'), '--start', '2026-01-05T00:00:00'],
      /--start .* not a time with a zone/,
    );
    await fails(['--readings', p('x.txt')], /name it \.ndjson or \.csv/);
    await fails(['--readings', p('x.ndjson'), '--duration', 'long'], /--duration must be a duration/);
    await fails(['--readings', p('x.ndjson'), '--sensors', '0'], /--sensors must be a positive whole number/);
    await fails(['--readings', p('x.ndjson'), '--scenario', 'moon-base'], /unknown scenario "moon-base"/);
    await fails(['--readings', p('x.ndjson'), '--start', '2026-01-05'], /--start/);
    await fails(['--readings', p('x.ndjson'), '--kafka', 't'], /either --readings or --kafka/);
    await fails(['--bogus'], /bogus/);
  });

  it('an unwritable output fails with OUTPUT_UNWRITABLE', async () => {
    await expect(main([...common, '--readings', join(dir, 'missing-dir', 'x.ndjson')])).rejects.toMatchObject(
      {
        code: 'OUTPUT_UNWRITABLE',
      },
    );
  });
});
