import { describe, expect, it } from 'vitest';
import { BoardStore, checkAction, UNNAMED, type OperatorAction } from '../../../libs/board/store.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';

const T0 = Date.parse('2026-03-02T08:00:00Z');
const MIN = 60_000;

function ev(
  id: string,
  state: AlertEvent['state'],
  severity: AlertEvent['severity'],
  sinceMin: number,
  extra: Partial<AlertEvent> = {},
): AlertEvent {
  return {
    id,
    sensor: `unit-9/${id}`,
    state,
    severity,
    reasons: state === 'cleared' ? [] : ['fence_high'],
    value: 10,
    ts: new Date(T0 + sinceMin * MIN).toISOString(),
    since: new Date(T0 + sinceMin * MIN).toISOString(),
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 8,
    robustZ: 5,
    percentileRank: 100,
    message: `${id} is high`,
    notice: NOTICE,
    ...extra,
  };
}

function act(kind: OperatorAction['kind'], id: string, body: unknown, now: number): OperatorAction {
  const c = checkAction(kind, id, body, now);
  if (!c.ok) throw new Error(c.message);
  return c.action;
}

describe('BoardStore ordering', () => {
  it('lists active alerts most severe first, then oldest first, then shelved, then cleared newest first', () => {
    const b = new BoardStore();
    b.applyEvent(ev('w-old', 'raised', 'warning', 0), T0);
    b.applyEvent(ev('c-new', 'raised', 'critical', 20), T0);
    b.applyEvent(ev('c-old', 'raised', 'critical', 10), T0);
    b.applyEvent(ev('w-new', 'raised', 'warning', 30), T0);
    b.applyEvent(ev('gone1', 'raised', 'warning', 1), T0);
    b.applyEvent(ev('gone2', 'raised', 'warning', 2), T0);
    b.applyEvent(ev('gone1', 'cleared', 'warning', 1), T0);
    b.applyEvent(ev('gone2', 'cleared', 'warning', 2), T0);
    b.applyAction(act('shelve', 'w-new', { reason: 'maintenance on the pump', minutes: 15 }, T0), T0);
    expect(b.list().map((a) => `${a.status}:${a.id}`)).toEqual([
      'active:c-old',
      'active:c-new',
      'active:w-old',
      'shelved:w-new',
      'cleared:gone2',
      'cleared:gone1',
    ]);
  });

  it('keeps the last event fields and the reasons of a cleared alert', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyEvent(ev('a', 'updated', 'critical', 0, { value: 99, message: 'worse' }), T0);
    const c = b.applyEvent(
      ev('a', 'cleared', 'critical', 0, { value: 3, message: 'back to normal' }),
      T0 + MIN,
    )!;
    expect(c.status).toBe('cleared');
    expect(c.value).toBe(3);
    expect(c.message).toBe('back to normal');
    expect(c.reasons).toEqual(['fence_high']);
    expect(b.openCount).toBe(0);
  });

  it('bounds the recently cleared list and ignores replayed duplicates', () => {
    const b = new BoardStore({ clearedKeep: 3 });
    for (let i = 0; i < 6; i++) {
      b.applyEvent(ev(`x${i}`, 'raised', 'warning', i), T0);
      b.applyEvent(ev(`x${i}`, 'cleared', 'warning', i), T0);
    }
    expect(b.list().map((a) => a.id)).toEqual(['x5', 'x4', 'x3']);
    // A replayed raise of a cleared alert must not bring it back.
    expect(b.applyEvent(ev('x5', 'raised', 'warning', 5), T0)).toBeNull();
    b.applyEvent(ev('x5', 'cleared', 'warning', 5), T0);
    expect(b.list().map((a) => a.id)).toEqual(['x5', 'x4', 'x3']);
  });
});

describe('BoardStore actions', () => {
  it('acknowledge records who and when and keeps the alert listed until it clears', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    const r = b.applyAction(act('acknowledge', 'a', { by: '  Rhea Okonkwo-Lind ' }, T0 + MIN), T0 + MIN);
    expect(r.ok).toBe(true);
    const a = b.get('a')!;
    expect(a).toMatchObject({ status: 'active', acknowledged: true, acknowledgedBy: 'Rhea Okonkwo-Lind' });
    expect(a.acknowledgedAt).toBe(new Date(T0 + MIN).toISOString());
    b.applyEvent(ev('a', 'cleared', 'warning', 0), T0 + 2 * MIN);
    expect(b.get('a')).toMatchObject({ status: 'cleared', acknowledged: true });
  });

  it('keeps the first acknowledgement; a later one does not overwrite who and when', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyAction(act('acknowledge', 'a', { by: 'first shift' }, T0 + MIN), T0 + MIN);
    const again = b.applyAction(act('acknowledge', 'a', { by: 'second shift' }, T0 + 2 * MIN), T0 + 2 * MIN);
    expect(again.ok).toBe(true);
    expect(b.get('a')).toMatchObject({ acknowledged: true, acknowledgedBy: 'first shift' });
    expect(b.get('a')!.acknowledgedAt).toBe(new Date(T0 + MIN).toISOString());
  });

  it('records an unnamed operator as "unnamed"', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyAction(act('acknowledge', 'a', {}, T0), T0);
    expect(b.get('a')!.acknowledgedBy).toBe(UNNAMED);
  });

  it('an escalation to critical withdraws an earlier acknowledgement; a milder update keeps it', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyAction(act('acknowledge', 'a', { by: 'op' }, T0), T0);
    b.applyEvent(ev('a', 'updated', 'critical', 0), T0);
    expect(b.get('a')!.acknowledged).toBe(false);
    b.applyAction(act('acknowledge', 'a', { by: 'op' }, T0), T0);
    b.applyEvent(ev('a', 'updated', 'warning', 0), T0);
    expect(b.get('a')!.acknowledged).toBe(true);
  });

  it('shelve hides the alert until the shelf ends, then it returns as active', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'critical', 0), T0);
    b.applyAction(act('shelve', 'a', { by: 'op', reason: 'sensor being recalibrated', minutes: 15 }, T0), T0);
    expect(b.get('a')).toMatchObject({
      status: 'shelved',
      shelveReason: 'sensor being recalibrated',
      shelvedBy: 'op',
    });
    expect(b.get('a')!.shelvedUntil).toBe(new Date(T0 + 15 * MIN).toISOString());
    expect(b.expireShelves(T0 + 15 * MIN - 1)).toEqual([]);
    // Updates while shelved keep it shelved.
    b.applyEvent(ev('a', 'updated', 'warning', 0), T0 + 5 * MIN);
    expect(b.get('a')!.status).toBe('shelved');
    const back = b.expireShelves(T0 + 15 * MIN);
    expect(back.map((a) => a.id)).toEqual(['a']);
    expect(b.get('a')).toMatchObject({ status: 'active', shelvedUntil: null });
  });

  it('unshelve returns at once; unshelving an active alert is a conflict', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    expect(b.applyAction(act('unshelve', 'a', {}, T0), T0)).toMatchObject({ ok: false, error: 'conflict' });
    b.applyAction(act('shelve', 'a', { reason: 'known', minutes: 60 }, T0), T0);
    expect(b.applyAction(act('unshelve', 'a', {}, T0 + MIN), T0 + MIN).ok).toBe(true);
    expect(b.get('a')!.status).toBe('active');
  });

  it('a shelved alert that clears goes to the cleared list', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyAction(act('shelve', 'a', { reason: 'known', minutes: 60 }, T0), T0);
    b.applyEvent(ev('a', 'cleared', 'warning', 0), T0 + MIN);
    expect(b.get('a')).toMatchObject({ status: 'cleared', shelvedUntil: null });
    expect(b.expireShelves(T0 + 2 * 60 * MIN)).toEqual([]);
  });

  it('a replayed shelf that already ran out changes nothing', () => {
    const b = new BoardStore();
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    const old = act('shelve', 'a', { reason: 'old', minutes: 15 }, T0 - 60 * MIN);
    expect(b.applyAction(old, T0).ok).toBe(true);
    expect(b.get('a')!.status).toBe('active');
  });

  it('unknown ids are not_found and cleared ids are conflicts', () => {
    const b = new BoardStore();
    expect(b.applyAction(act('acknowledge', 'nope', {}, T0), T0)).toMatchObject({
      ok: false,
      error: 'not_found',
    });
    b.applyEvent(ev('a', 'raised', 'warning', 0), T0);
    b.applyEvent(ev('a', 'cleared', 'warning', 0), T0);
    expect(b.applyAction(act('acknowledge', 'a', {}, T0), T0)).toMatchObject({
      ok: false,
      error: 'conflict',
    });
  });
});

describe('checkAction validation', () => {
  const bad = (kind: 'acknowledge' | 'shelve' | 'unshelve', body: unknown) => {
    const c = checkAction(kind, 'a', body, T0);
    expect(c.ok).toBe(false);
    return c.ok ? '' : c.message;
  };
  it('refuses non-object bodies, unknown fields and a non-string or over-long name', () => {
    expect(bad('acknowledge', [1])).toMatch(/JSON object/);
    expect(bad('acknowledge', { who: 'x' })).toMatch(/unknown field "who"/);
    expect(bad('acknowledge', { by: 5 })).toMatch(/"by"/);
    expect(bad('acknowledge', { by: 'x'.repeat(81) })).toMatch(/at most 80/);
  });
  it('shelve needs a non-empty reason up to 500 characters and minutes from 0.05 to 1440', () => {
    expect(bad('shelve', { minutes: 15 })).toMatch(/"reason" is required/);
    expect(bad('shelve', { reason: '   ', minutes: 15 })).toMatch(/"reason" is required/);
    expect(bad('shelve', { reason: 'x'.repeat(501), minutes: 15 })).toMatch(/at most 500/);
    expect(bad('shelve', { reason: 'ok' })).toMatch(/"minutes"/);
    expect(bad('shelve', { reason: 'ok', minutes: 0 })).toMatch(/"minutes"/);
    expect(bad('shelve', { reason: 'ok', minutes: 1441 })).toMatch(/"minutes"/);
    expect(bad('shelve', { reason: 'ok', minutes: '15' })).toMatch(/"minutes"/);
    const ok = checkAction('shelve', 'a', { reason: 'x'.repeat(500), minutes: 1440 }, T0);
    expect(ok.ok && ok.action.until).toBe(new Date(T0 + 1440 * MIN).toISOString());
    const short = checkAction('shelve', 'a', { reason: 'test', minutes: 0.05 }, T0);
    expect(short.ok && short.action.until).toBe(new Date(T0 + 3000).toISOString());
  });
  it('acknowledge accepts an empty body', () => {
    const c = checkAction('acknowledge', 'a', undefined, T0);
    expect(c).toMatchObject({
      ok: true,
      action: { kind: 'acknowledge', by: UNNAMED, at: new Date(T0).toISOString() },
    });
  });
});
