import { describe, expect, it } from 'vitest';
import { RateMeter } from '../../../libs/board/rate.js';
import { RecentSeries } from '../../../libs/board/series.js';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { authorized, boardTokenFor, isLoopbackHost, readBoardToken } from '../../../services/board/auth.js';

const MIN = 60_000;
const T0 = Date.parse('2026-03-02T08:00:00Z');

describe('RateMeter', () => {
  // Budget 6/h and flood > 10 in 10 min: common-practice alarm-management figures (ISA-18.2 / EEMUA 191 order of magnitude).
  it('counts raises in the last 10 minutes and the last hour against the budget', () => {
    const m = new RateMeter();
    for (const ago of [70, 59, 30, 9, 1]) m.record(T0 - ago * MIN);
    const r = m.read(T0);
    expect(r).toMatchObject({ last10Min: 2, lastHour: 4, budgetPerHour: 6, overBudget: false, flood: false });
    expect(r.budgetUse).toBeCloseTo(4 / 6, 12);
  });

  it('is over budget above 6 in an hour and flags a flood above 10 in 10 minutes, not at 10', () => {
    const m = new RateMeter();
    for (let i = 0; i < 10; i++) m.record(T0 - i * 30_000);
    expect(m.read(T0)).toMatchObject({ last10Min: 10, overBudget: true, flood: false });
    m.record(T0);
    expect(m.read(T0)).toMatchObject({ last10Min: 11, flood: true });
    // Ten minutes later the flood is over, the hour still counts them.
    expect(m.read(T0 + 10 * MIN)).toMatchObject({ last10Min: 0, lastHour: 11, flood: false });
    expect(m.read(T0 + 61 * MIN)).toMatchObject({ lastHour: 0 });
  });

  it('accepts raises out of order and does not count ones after "now"', () => {
    const m = new RateMeter();
    m.record(T0 - 2 * MIN);
    m.record(T0 - 20 * MIN);
    m.record(T0 + 5 * MIN);
    expect(m.read(T0)).toMatchObject({ last10Min: 1, lastHour: 2 });
  });
});

describe('RateMeter memory', () => {
  it('holds at most the last hour of raises even if never read', () => {
    const m = new RateMeter();
    for (let i = 0; i < 10_000; i++) m.record(T0 + i * MIN);
    expect(m.held).toBe(60);
    expect(m.read(T0 + 9_999 * MIN)).toMatchObject({ lastHour: 60, last10Min: 10 });
  });
});

describe('RecentSeries', () => {
  it('keeps the last N points per sensor in order and a bounded number of sensors', () => {
    const s = new RecentSeries(3, 2);
    for (let i = 0; i < 5; i++) s.add('a', { ts: i, value: i, flagged: i === 4 });
    expect(s.get('a').map((p) => p.ts)).toEqual([2, 3, 4]);
    s.add('b', { ts: 0, value: 0, flagged: false });
    s.add('a', { ts: 5, value: 5, flagged: false }); // touch a, so b is the oldest
    s.add('c', { ts: 0, value: 0, flagged: false });
    expect(s.sensorCount).toBe(2);
    expect(s.get('b')).toEqual([]);
    expect(s.get('a').map((p) => p.ts)).toEqual([3, 4, 5]);
  });
});

describe('board auth decision', () => {
  it('knows loopback addresses', () => {
    for (const h of ['127.0.0.1', '127.1.2.3', 'localhost', '::1', '[::1]'])
      expect(isLoopbackHost(h)).toBe(true);
    for (const h of ['0.0.0.0', '10.0.0.5', '::', 'board.plant.example'])
      expect(isLoopbackHost(h)).toBe(false);
  });
  it('refuses to start off loopback without a token, and uses the token when given', () => {
    expect(() => boardTokenFor('0.0.0.0', undefined)).toThrow(/--board-token-file/);
    expect(() => boardTokenFor('10.0.0.5', '  ')).toThrow(/STREAMFENCE_BOARD_TOKEN/);
    expect(boardTokenFor('0.0.0.0', 'kiln-room-secret-42')).toBe('kiln-room-secret-42');
    expect(boardTokenFor('127.0.0.1', undefined)).toBeNull();
  });
  it('refuses a token shorter than 16 characters, on any address', () => {
    expect(() => boardTokenFor('0.0.0.0', 's3cret')).toThrow(/6 characters; use at least 16/);
    expect(() => boardTokenFor('127.0.0.1', 'fifteen-chars-x')).toThrow(/at least 16/);
    expect(boardTokenFor('127.0.0.1', 'sixteen-chars-xy')).toBe('sixteen-chars-xy');
  });
  it('reads the token from the environment or a file, never both', () => {
    const dir = mkdtempSync(join(tmpdir(), 'sf-token-'));
    const file = join(dir, 'token');
    writeFileSync(file, 'from-a-file-0123456789\n');
    expect(readBoardToken(file, {})).toBe('from-a-file-0123456789');
    expect(readBoardToken(undefined, { STREAMFENCE_BOARD_TOKEN: ' from-env-0123456789 ' })).toBe(
      'from-env-0123456789',
    );
    expect(readBoardToken(undefined, {})).toBeUndefined();
    expect(() => readBoardToken(file, { STREAMFENCE_BOARD_TOKEN: 'x'.repeat(20) })).toThrow(/keep one/);
    expect(() => readBoardToken(join(dir, 'missing'), {})).toThrow(/no such file/);
  });
  it('checks the bearer token exactly', () => {
    expect(authorized(null, undefined)).toBe(true);
    expect(authorized('s3cret', undefined)).toBe(false);
    expect(authorized('s3cret', 'Bearer s3cre')).toBe(false);
    expect(authorized('s3cret', 'Basic s3cret')).toBe(false);
    expect(authorized('s3cret', 'Bearer s3cret')).toBe(true);
  });
});
