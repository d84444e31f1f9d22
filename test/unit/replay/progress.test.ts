import { describe, expect, it } from 'vitest';
import { Progress, formatCount, formatSeconds } from '../../../services/progress.js';
import { bannerText, parseCommandArgs } from '../../../services/setup/args.js';
import { NOTICE } from '../../../libs/schema/notice.js';

function sink(isTTY: boolean) {
  const parts: string[] = [];
  return { parts, isTTY, columns: 80, write: (c: string) => parts.push(c) };
}

describe('Progress', () => {
  it('draws rows, rate, percentage and ETA on a TTY, throttled, then clears the line for the summary', () => {
    let t = 0;
    const s = sink(true);
    const p = new Progress({ unit: 'lines', total: 1000, stream: s, now: () => t, intervalMs: 200 });
    t = 1000;
    p.update(5000, 250);
    t = 1100;
    p.update(6000, 300); // within the interval: not drawn
    expect(s.parts).toHaveLength(1);
    expect(s.parts[0]).toContain('5000 lines');
    expect(s.parts[0]).toContain('5000 lines/s');
    expect(s.parts[0]).toContain(' 25%');
    expect(s.parts[0]).toContain('ETA 3.0s');
    p.finish('done: 6000 lines');
    expect(s.parts.slice(1)).toEqual(['\r\x1b[K', 'done: 6000 lines\n']);
  });

  it('writes only the final summary when the stream is not a TTY', () => {
    const s = sink(false);
    const p = new Progress({ stream: s, now: () => 0 });
    p.update(10, 1);
    p.finish('summary');
    expect(s.parts).toEqual(['summary\n']);
  });

  it('formats counts and durations compactly', () => {
    expect([formatCount(999), formatCount(12_345), formatCount(2_500_000)]).toEqual([
      '999',
      '12.3k',
      '2.50M',
    ]);
    expect([formatSeconds(4.25), formatSeconds(75), formatSeconds(3700), formatSeconds(Number.NaN)]).toEqual([
      '4.3s',
      '1m15s',
      '1h01m',
      '--',
    ]);
  });
});

describe('CLI args helpers', () => {
  it('puts NOTICE, unchanged, in the banner', () => {
    expect(bannerText('replay')).toBe(`streamfence replay — ${NOTICE}\n`);
  });

  it('turns parseArgs failures into ARGS_INVALID naming the command', () => {
    expect(() => parseCommandArgs('x', ['--nope'], {})).toThrow(/--nope.*streamfence x --help/);
    expect(parseCommandArgs('x', ['-h', 'a'], { out: { type: 'string' } })).toMatchObject({
      help: true,
      positionals: ['a'],
    });
  });
});
