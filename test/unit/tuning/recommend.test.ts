import { describe, expect, it } from 'vitest';
import { ALERT_BUDGET_PER_HOUR } from '../../../libs/schema/vocabulary.js';
import { recallFirst, recommend, type Scored } from '../../../libs/tuning/recommend.js';

const p = (recall: number | null, precision: number | null, alertsPerHour: number, raised = 10): Scored => ({
  recall,
  precision,
  alertsPerHour,
  raised,
});

/** A point with health figures: flood, raised alerts per caught incident, chattering raises. */
const h = (
  recall: number,
  precision: number,
  extra: { flood?: boolean; alertsPerCaught?: number | null; chatteringRaises?: number },
  alertsPerHour = 3,
): Scored => ({ recall, precision, alertsPerHour, raised: 10, ...extra });

describe('recommendation rule', () => {
  it('default budget: 6 raised alerts per hour (about one per 10 minutes; ISA-18.2 guidance, see reference-values.md)', () => {
    expect(ALERT_BUDGET_PER_HOUR).toBe(6);
  });

  it('within budget: best recall first, over-budget points ignored', () => {
    const r = recommend([p(0.8, 0.9, 2), p(0.99, 0.9, 7), p(0.9, 0.5, 6)], 6)!;
    expect(r.index).toBe(2); // exactly at the budget counts as within it
    expect(r.withinBudget).toBe(true);
    expect(r.reason).toMatch(
      /^2 of 3 points are within the budget of 6 raised alerts\/hour, 2 of them without a flood/,
    );
  });

  it('ties by precision, then fewer alerts, then grid order', () => {
    expect(recommend([p(0.9, 0.7, 1), p(0.9, 0.8, 3)], 6)!.index).toBe(1);
    expect(recommend([p(0.9, 0.8, 3, 30), p(0.9, 0.8, 2, 20)], 6)!.index).toBe(1);
    expect(recommend([p(0.9, 0.8, 2, 20), p(0.9, 0.8, 2, 20)], 6)!.index).toBe(0);
  });

  it('null recall or precision ranks below any number', () => {
    expect(recommend([p(null, 1, 1), p(0, 0.5, 1)], 6)!.index).toBe(1);
    expect(recommend([p(0.5, null, 0, 0), p(0.5, 0, 1)], 6)!.index).toBe(1);
  });

  it('nothing within budget: the quietest point, ties by recall, and the reason says so', () => {
    const r = recommend([p(0.9, 0.9, 9), p(0.5, 0.9, 8), p(0.7, 0.9, 8)], 6)!;
    expect(r.index).toBe(2);
    expect(r.withinBudget).toBe(false);
    expect(r.reason).toMatch(
      /^no point is within the budget of 6 raised alerts\/hour; this is the quietest \(8.00 alerts\/hour, recall 70.0%\)/,
    );
  });

  it('empty grid -> null', () => {
    expect(recommend([], 6)).toBeNull();
  });
});

describe('the rule counts noise', () => {
  it('a flood point loses to a flood-free one within the budget, even with a higher recall', () => {
    const points = [h(0.99, 0.9, { flood: true, alertsPerCaught: 1 }), h(0.9, 0.8, { alertsPerCaught: 2 })];
    expect(recommend(points, 6)!.index).toBe(1);
    expect(recallFirst(points, 6)).toBe(0);
  });

  it('when every point within the budget floods, the flood is kept and the reason says none can be avoided', () => {
    const r = recommend([h(0.9, 0.9, { flood: true }), h(0.8, 0.9, { flood: true })], 6)!;
    expect(r.index).toBe(0);
    expect(r.reason).toMatch(/every one of them has a flood \(none can be avoided on this grid\)/);
  });

  it('recall within 0.02 of the best competes on repeated raises; 0.03 below does not', () => {
    const best = h(0.95, 0.9, { alertsPerCaught: 1.8 });
    expect(recommend([best, h(0.93, 0.9, { alertsPerCaught: 1.0 })], 6)!.index).toBe(1);
    expect(recommend([best, h(0.92, 0.9, { alertsPerCaught: 1.0 })], 6)!.index).toBe(0);
  });

  it('raises per caught incident within 0.1 of the fewest count as equal: then chattering, then precision', () => {
    const few = h(0.9, 0.6, { alertsPerCaught: 1.0, chatteringRaises: 0 });
    const nearlyFew = h(0.9, 0.95, { alertsPerCaught: 1.08, chatteringRaises: 0 });
    const many = h(0.9, 0.99, { alertsPerCaught: 1.2, chatteringRaises: 0 });
    expect(recommend([few, nearlyFew, many], 6)!.index).toBe(1);
    const chattering = h(0.9, 0.99, { alertsPerCaught: 1.0, chatteringRaises: 3 });
    expect(recommend([chattering, few], 6)!.index).toBe(1);
  });

  it('nothing caught (null raises per caught incident) ranks below any number; the reason names the figures', () => {
    const r = recommend([h(0.9, 0.9, { alertsPerCaught: null }), h(0.9, 0.5, { alertsPerCaught: 3 })], 6)!;
    expect(r.index).toBe(1);
    expect(r.reason).toMatch(
      /within 0.1 of the fewest raised alerts per caught incident \(3.00\); this one has 3.00 and/,
    );
  });

  it('recallFirst is the earlier rule: best recall, then precision, then fewer raised', () => {
    expect(recallFirst([p(0.8, 0.9, 2), p(0.9, 0.5, 6), p(0.9, 0.6, 5)], 6)).toBe(2);
    expect(recallFirst([p(0.9, 0.9, 9)], 6)).toBe(0);
    expect(recallFirst([], 6)).toBeNull();
  });
});
