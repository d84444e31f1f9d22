import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  AssetNamer,
  DEFAULT_GROUP_RULE,
  groupAlerts,
  groupRuleProblem,
  type GroupCandidate,
  type GroupRule,
} from '../../../libs/board/groups.js';

const MIN = 60_000;
const T0 = Date.parse('2026-03-02T08:00:00Z');
const at = (minutes: number) => new Date(T0 + minutes * MIN).toISOString();
const alert = (id: string, sensor: string, minutes: number, status: GroupCandidate['status'] = 'active') => ({
  id,
  sensor,
  since: at(minutes),
  status,
});
const rule = (r: Partial<GroupRule> = {}): GroupRule => ({ ...DEFAULT_GROUP_RULE, ...r });
const group = (alerts: GroupCandidate[], r: Partial<GroupRule> = {}) =>
  groupAlerts(alerts, new AssetNamer(rule(r)), rule(r).windowMs);

describe('asset of a sensor', () => {
  it('by prefix depth: the first segments; ids no longer than the depth belong to no asset', () => {
    const n = new AssetNamer(rule({ depth: 2 }));
    expect(n.assetOf('line-1/chiller/temp')).toBe('line-1/chiller');
    expect(n.assetOf('line-1/chiller/motor/current')).toBe('line-1/chiller');
    expect(n.assetOf('line-1/chiller')).toBeNull();
    expect(n.assetOf('flow')).toBeNull();
    expect(new AssetNamer(rule({ depth: 1 })).assetOf('line-1/chiller/temp')).toBe('line-1');
    expect(new AssetNamer(rule({ depth: 3 })).assetOf('line-1/chiller/motor/current')).toBe(
      'line-1/chiller/motor',
    );
  });

  it('by glob: leading segments before "**", or all but the last; globs win over the depth', () => {
    const n = new AssetNamer(rule({ depth: 1, globs: ['line-1/chiller/**', 'line-*/pump/*'] }));
    expect(n.assetOf('line-1/chiller/temp')).toBe('line-1/chiller');
    expect(n.assetOf('line-1/chiller/motor/current')).toBe('line-1/chiller');
    expect(n.assetOf('line-2/pump/flow')).toBe('line-2/pump');
    expect(n.assetOf('line-3/pump/flow')).toBe('line-3/pump');
    // No glob matches: the depth applies.
    expect(n.assetOf('line-2/chiller/temp')).toBe('line-2');
    expect(
      new AssetNamer(rule({ depth: null, globs: ['line-1/chiller/**'] })).assetOf('line-2/chiller/temp'),
    ).toBeNull();
  });

  it('refuses rules that cannot name an asset', () => {
    expect(groupRuleProblem(DEFAULT_GROUP_RULE)).toBeNull();
    expect(groupRuleProblem(rule({ depth: 0 }))).toMatch(/depth/);
    expect(groupRuleProblem(rule({ depth: 1.5 }))).toMatch(/whole number/);
    expect(groupRuleProblem(rule({ globs: ['**'] }))).toMatch(/names no asset/);
    expect(groupRuleProblem(rule({ globs: ['temp'] }))).toMatch(/names no asset/);
    expect(groupRuleProblem(rule({ windowMs: -1 }))).toMatch(/window/);
  });
});

describe('grouping open alerts', () => {
  it('marks the first raised as first-out and lists the others in raise order', () => {
    const groups = group([
      alert('c', 'line-1/chiller/pressure', 3),
      alert('a', 'line-1/chiller/temp', 1),
      alert('b', 'line-1/chiller/current', 2),
      alert('x', 'line-2/chiller/temp', 1),
    ]);
    expect(groups).toEqual([
      { id: 'a', asset: 'line-1/chiller', status: 'active', firstOut: 'a', members: ['a', 'b', 'c'] },
    ]);
  });

  it('window: exactly the window after the first-out joins; one ms later starts a new group', () => {
    const w = 5 * MIN;
    const base = [alert('a', 'line-1/chiller/temp', 0), alert('b', 'line-1/chiller/current', 5)];
    expect(group(base, { windowMs: w })[0].members).toEqual(['a', 'b']);
    const late = { ...alert('b', 'line-1/chiller/current', 0), since: new Date(T0 + w + 1).toISOString() };
    expect(group([base[0], late], { windowMs: w })).toEqual([]);
    // The window is measured from the first-out, not from the previous member.
    const chain = [
      alert('a', 'line-1/chiller/temp', 0),
      alert('b', 'line-1/chiller/current', 4),
      alert('c', 'line-1/chiller/pressure', 8),
      alert('d', 'line-1/chiller/flow', 9),
    ];
    expect(group(chain, { windowMs: w }).map((g) => g.members)).toEqual([
      ['a', 'b'],
      ['c', 'd'],
    ]);
  });

  it('same raise time: the id decides the first-out, so the result never depends on input order', () => {
    const same = [alert('m2', 'line-1/chiller/temp', 0), alert('m1', 'line-1/chiller/current', 0)];
    expect(group(same)[0].firstOut).toBe('m1');
    expect(group([...same].reverse())[0].firstOut).toBe('m1');
  });

  it('cleared alerts drop out; shelved and active alerts group apart', () => {
    const groups = group([
      alert('a', 'line-1/chiller/temp', 0, 'cleared'),
      alert('b', 'line-1/chiller/current', 1),
      alert('c', 'line-1/chiller/pressure', 2),
      alert('d', 'line-1/chiller/flow', 2, 'shelved'),
      alert('e', 'line-1/chiller/level', 3, 'shelved'),
    ]);
    expect(groups.map((g) => [g.status, g.firstOut, g.members])).toEqual([
      ['active', 'b', ['b', 'c']],
      ['shelved', 'd', ['d', 'e']],
    ]);
  });

  it('prefix depth decides what belongs together', () => {
    const alerts = [alert('a', 'line-1/chiller/temp', 0), alert('b', 'line-1/pump/flow', 1)];
    expect(group(alerts, { depth: 2 })).toEqual([]);
    expect(group(alerts, { depth: 1 })[0]).toMatchObject({ asset: 'line-1', members: ['a', 'b'] });
  });

  it('a glob groups only the sensors it names', () => {
    const alerts = [
      alert('a', 'line-1/chiller/temp', 0),
      alert('b', 'line-1/chiller/current', 1),
      alert('c', 'line-1/pump/flow', 1),
      alert('d', 'line-1/pump/pressure', 2),
    ];
    const groups = group(alerts, { depth: null, globs: ['line-1/chiller/**'] });
    expect(groups).toEqual([
      { id: 'a', asset: 'line-1/chiller', status: 'active', firstOut: 'a', members: ['a', 'b'] },
    ]);
  });

  it('property: every open alert is in at most one group, and input order never matters', () => {
    const arb = fc.uniqueArray(
      fc.record({
        id: fc.string({ minLength: 1, maxLength: 4 }),
        sensor: fc.constantFrom(
          'line-1/chiller/temp',
          'line-1/chiller/current',
          'line-1/pump/flow',
          'flow',
          'line-2/chiller/temp',
        ),
        minute: fc.integer({ min: 0, max: 30 }),
        status: fc.constantFrom('active' as const, 'shelved' as const, 'cleared' as const),
      }),
      { selector: (r) => r.id, maxLength: 25 },
    );
    fc.assert(
      fc.property(arb, fc.integer({ min: 0, max: 10 }), (rows, windowMinutes) => {
        const alerts = rows.map((r) => alert(r.id, r.sensor, r.minute, r.status));
        const r = { windowMs: windowMinutes * MIN };
        const forward = group(alerts, r);
        expect(group([...alerts].reverse(), r)).toEqual(forward);
        const seen = new Set<string>();
        for (const g of forward) {
          expect(g.members[0]).toBe(g.firstOut);
          const first = alerts.find((a) => a.id === g.firstOut)!;
          for (const id of g.members) {
            expect(seen.has(id)).toBe(false);
            seen.add(id);
            const m = alerts.find((a) => a.id === id)!;
            expect(m.status).toBe(g.status);
            expect(Date.parse(m.since) - Date.parse(first.since)).toBeGreaterThanOrEqual(0);
            expect(Date.parse(m.since) - Date.parse(first.since)).toBeLessThanOrEqual(r.windowMs);
          }
        }
      }),
    );
  });
});
