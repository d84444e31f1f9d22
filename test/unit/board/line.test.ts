import { describe, expect, it } from 'vitest';
import { actionLine, eventLine, passesSeverity, shortTime } from '../../../libs/board/line.js';
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
      '2026-02-11 10:20:30Z  ◆ CRITICAL  raised   press-7/oil/temp  press-7/oil/temp reads 131, above its limit 120',
    );
    const coloured = eventLine(ev, { color: true });
    expect(coloured).toContain(ESC + '[');
    expect(coloured.replace(new RegExp(ESC + '\\[\\d+m', 'g'), '')).toBe(plain);
    expect(eventLine({ ...ev, severity: 'warning' }, { color: false })).toContain('▲ WARNING ');
    expect(eventLine({ ...ev, state: 'cleared' }, { color: false })).toContain('○ CLEARED   cleared');
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
      '2026-02-11 10:25:00Z  » OPERATOR  shelve   press-7/oil/temp  shelved by Maren Quist until 2026-02-11 11:25:00Z: oil change',
    );
    expect(shortTime('not a time')).toBe('not a time');
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
