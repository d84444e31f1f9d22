import { describe, expect, it } from 'vitest';
import {
  actionLine,
  eventLine,
  fitWords,
  LINE_WIDTH,
  passesSeverity,
  shortTime,
} from '../../../libs/board/line.js';
import { parseSince } from '../../../services/cli/commands/alerts.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';

const ESC = String.fromCharCode(27);

const ev: AlertEvent = {
  id: 'x1',
  sensor: 'press-7/oil/temp',
  state: 'raised',
  severity: 'critical',
  reasons: ['limit_high'],
  value: 131,
  ts: '2026-02-11T10:20:30.456Z',
  since: '2026-02-11T10:20:30.456Z',
  flaggedReadings: 1,
  baseline: { ...FIXTURE_BASELINE },
  z: 9,
  robustZ: 9,
  percentileRank: 100,
  message: 'press-7/oil/temp reads 131, above its limit 120',
  notice: NOTICE,
};

describe('terminal lines', () => {
  it('mark severity by word and shape, and colour only when asked', () => {
    const plain = eventLine(ev, { color: false });
    expect(plain).toBe(
      '2026-02-11 10:20:30Z  ◆ CRITICAL  raised        press-7/oil/temp  reads 131, above its limit 120',
    );
    const coloured = eventLine(ev, { color: true });
    expect(coloured).toContain(ESC + '[');
    expect(coloured.replace(new RegExp(ESC + '\\[\\d+m', 'g'), '')).toBe(plain);
    expect(eventLine({ ...ev, severity: 'warning' }, { color: false })).toContain('▲ WARNING ');
    expect(eventLine({ ...ev, state: 'cleared' }, { color: false })).toContain(
      '○ CLEARED   cleared       press-7/oil/temp',
    );
  });

  it('describe operator actions with who, until when and why', () => {
    const line = actionLine(
      {
        kind: 'shelve',
        id: 'x1',
        by: 'Maren Quist',
        at: '2026-02-11T10:25:00Z',
        reason: 'oil change',
        until: '2026-02-11T11:25:00Z',
      },
      'press-7/oil/temp',
      { color: false },
    );
    expect(line).toBe(
      '2026-02-11 10:25:00Z  » OPERATOR  shelved       press-7/oil/temp  by Maren Quist until 2026-02-11 11:25:00Z: oil change',
    );
    const ack = { kind: 'acknowledge' as const, id: 'x1', by: 'Maren Quist', at: '2026-02-11T10:25:00Z' };
    expect(actionLine(ack, 'press-7/oil/temp', { color: false })).toBe(
      '2026-02-11 10:25:00Z  » OPERATOR  acknowledged  press-7/oil/temp  by Maren Quist',
    );
    expect(actionLine({ ...ack, kind: 'unshelve' }, 'press-7/oil/temp', { color: false })).toContain(
      ' unshelved ',
    );
    // An alert the view never saw is still named, never shown as a bare id.
    expect(actionLine(ack, null, { color: false })).toContain('alert x1');
    expect(shortTime('not a time')).toBe('not a time');
  });

  it('fit 120 columns by cutting the detail at a word, never inside one; --wide keeps it whole', () => {
    const long = {
      ...ev,
      message: `${ev.sensor} reads 131, above its limit 120 and above the upper fence 118.2 of the last six hours (median 96.4, spread 4.1); flagged readings 12 in a row since the pump was restarted`,
    };
    const mark = { asset: 'press-7/oil', firstOutSensor: 'press-7/oil/pressure', isFirstOut: false };
    for (const group of [null, mark, { ...mark, isFirstOut: true }]) {
      const line = eventLine(long, { color: false }, group);
      expect(Array.from(line).length).toBeLessThanOrEqual(LINE_WIDTH);
      expect(line.endsWith('…')).toBe(true);
      // Every word before the ellipsis is a whole word of the message.
      const words = new Set(long.message.split(' '));
      for (const w of line.slice(line.indexOf('reads')).replace(/…$/, '').trim().split(' '))
        expect(words.has(w), w).toBe(true);
      const coloured = eventLine(long, { color: true }, group);
      expect(coloured.replace(new RegExp(ESC + '\\[\\d+m', 'g'), '')).toBe(line);
    }
    expect(eventLine(long, { color: false }, mark)).toContain('[grouped, first-out press-7/oil/pressure]');
    expect(eventLine(long, { color: false }, { ...mark, isFirstOut: true })).toContain(
      '[first-out of press-7/oil]',
    );
    const wide = eventLine(long, { color: false, wide: true });
    expect(wide.endsWith(long.message)).toBe(true);
    expect(Array.from(wide).length).toBeGreaterThan(LINE_WIDTH);
    const shelve = actionLine(
      {
        kind: 'shelve',
        id: 'x1',
        by: 'Maren Quist',
        at: '2026-02-11T10:25:00Z',
        until: '2026-02-11T18:25:00Z',
        reason:
          'oil change planned for the whole shift; the pump skid is isolated and drained, readings are meaningless until it is refilled',
      },
      'press-7/oil/temp',
      { color: false },
    );
    expect(Array.from(shelve).length).toBeLessThanOrEqual(LINE_WIDTH);
  });

  it('fitWords cuts at word boundaries only', () => {
    expect(fitWords('alpha beta gamma', 20)).toBe('alpha beta gamma');
    expect(fitWords('alpha beta gamma', 16)).toBe('alpha beta gamma');
    expect(fitWords('alpha beta gamma', 15)).toBe('alpha beta…');
    expect(fitWords('alpha beta gamma', 12)).toBe('alpha beta…');
    expect(fitWords('alpha beta gamma', 11)).toBe('alpha beta…');
    expect(fitWords('alpha beta gamma', 10)).toBe('alpha…');
    expect(fitWords('alpha beta gamma', 5)).toBe('…');
    expect(fitWords('alpha', 3)).toBe('…');
    expect(fitWords('alpha', 0)).toBe('');
  });

  it('severity filter is a floor', () => {
    expect(passesSeverity('warning', null)).toBe(true);
    expect(passesSeverity('warning', 'warning')).toBe(true);
    expect(passesSeverity('critical', 'warning')).toBe(true);
    expect(passesSeverity('warning', 'critical')).toBe(false);
    expect(passesSeverity('critical', 'critical')).toBe(true);
  });

  it('--since takes an ISO time or a duration back from now', () => {
    const now = Date.parse('2026-02-11T12:00:00Z');
    expect(parseSince('2h', now, 'alerts')).toBe(now - 7_200_000);
    expect(parseSince('90m', now, 'alerts')).toBe(now - 5_400_000);
    expect(parseSince('2026-02-11T06:00:00Z', now, 'alerts')).toBe(Date.parse('2026-02-11T06:00:00Z'));
    expect(() => parseSince('yesterday', now, 'alerts')).toThrow(/must be a time with a zone/);
    // A time without a zone is refused, as readings refuse it.
    expect(() => parseSince('2026-12-02T05:00:00', now, 'alerts')).toThrow(/must be a time with a zone/);
  });
});
