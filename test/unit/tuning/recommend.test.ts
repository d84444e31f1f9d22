import { describe, expect, it } from 'vitest';
import { ALERT_BUDGET_PER_HOUR } from '../../../libs/schema/vocabulary.js';
import { recommend, type Scored } from '../../../libs/tuning/recommend.js';

const p = (recall: number | null, precision: number | null, alertsPerHour: number, raised = 10): Scored => ({
  recall,
  precision,
  alertsPerHour,
  raised,
});

describe('recommendation rule', () => {
  it('default budget: 6 raised alerts per hour (about one per 10 minutes; ISA-18.2 guidance, see reference-values.md)', () => {
    expect(ALERT_BUDGET_PER_HOUR).toBe(6);
  });

  it('within budget: best recall first, over-budget points ignored', () => {
    const r = recommend([p(0.8, 0.9, 2), p(0.99, 0.9, 7), p(0.9, 0.5, 6)], 6)!;
    expect(r.index).toBe(2); // exactly at the budget counts as within it
    expect(r.withinBudget).toBe(true);
    expect(r.reason).toMatch(/best recall \(90.0%\) among 2 of 3 points within the budget of 6/);
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
