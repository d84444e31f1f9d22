import { describe, expect, it } from 'vitest';
import { formatLabelsCsv, parseLabelsCsv, splitCsvLine } from '../../../libs/scoring/labels.js';
import { StreamfenceError } from '../../../libs/errors/index.js';

function failure(text: string): StreamfenceError {
  try {
    parseLabelsCsv(text, 'labels.csv');
  } catch (e) {
    return e as StreamfenceError;
  }
  throw new Error('expected a failure');
}

describe('labels CSV', () => {
  it('reads sensor,start,end,kind with ISO times, any column order, blank lines and a BOM', () => {
    const text =
      '\uFEFFkind,sensor,start,end\r\nspike,line-1/x,2026-01-05T10:00:00Z,2026-01-05T10:02:00Z\n\n' +
      'drift,"odd, name",2026-01-05T11:00:00+01:00,2026-01-05T10:30:00Z\n';
    expect(parseLabelsCsv(text)).toEqual([
      {
        sensor: 'line-1/x',
        start: Date.UTC(2026, 0, 5, 10),
        end: Date.UTC(2026, 0, 5, 10, 2),
        kind: 'spike',
      },
      {
        sensor: 'odd, name',
        start: Date.UTC(2026, 0, 5, 10),
        end: Date.UTC(2026, 0, 5, 10, 30),
        kind: 'drift',
      },
    ]);
  });

  it('kind is optional', () => {
    expect(parseLabelsCsv('sensor,start,end\na,2026-01-05T10:00:00Z,2026-01-05T10:00:00Z\n')[0].kind).toBe(
      '',
    );
  });

  it('errors name the line and what to fix', () => {
    const e1 = failure('sensor,begin,end\n');
    expect(e1.code).toBe('INPUT_UNREADABLE');
    expect(e1.message).toMatch(/labels\.csv line 1: .*missing start/);
    expect(
      failure(
        'sensor,start,end\na,2026-01-05T10:00:00Z,2026-01-05T10:00:00Z\nb,yesterday,2026-01-05T10:00:00Z\n',
      ).message,
    ).toMatch(/line 3: start: timestamp "yesterday" is not ISO-8601/);
    expect(failure('sensor,start,end\nb,2026-01-05T10:00:00Z,2026-01-05T09:00:00Z\n').message).toMatch(
      /line 2: end .* is before start/,
    );
    expect(failure('sensor,start,end\n,2026-01-05T10:00:00Z,2026-01-05T10:00:00Z\n').message).toMatch(
      /line 2: the sensor is empty/,
    );
    expect(failure('sensor,start,end\n"a,2026-01-05T10:00:00Z,2026-01-05T10:00:00Z\n').message).toMatch(
      /line 2: unbalanced/,
    );
    expect(failure('\n\n').message).toMatch(/empty/);
  });

  it('formatLabelsCsv round-trips through parseLabelsCsv', () => {
    const labels = [
      { sensor: 'a/b', start: 1_767_600_000_000, end: 1_767_600_060_000, kind: 'stuck' },
      { sensor: 'with "quote", comma', start: 1_767_600_000_000, end: 1_767_600_000_000, kind: 'spike' },
    ];
    expect(parseLabelsCsv(formatLabelsCsv(labels))).toEqual(labels);
  });

  it('splitCsvLine handles quotes', () => {
    expect(splitCsvLine('a,"b,c","d""e",')).toEqual(['a', 'b,c', 'd"e', '']);
    expect(splitCsvLine('"x"y')).toBeNull();
  });
});
