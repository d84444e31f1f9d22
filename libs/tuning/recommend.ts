/**
 * The recommendation rule. Among grid points whose raised-alert rate is within the budget: the
 * best recall, then the best precision, then the fewest raised alerts, then grid order. When no
 * point is within budget: the lowest alert rate, then the best recall, then grid order; the reason
 * says so. Null recall/precision (no incidents / no alerts) rank below any number.
 */
export interface Scored {
  recall: number | null;
  precision: number | null;
  alertsPerHour: number | null;
  raised: number;
}

/** The recommended grid point, whether it is within the budget, and why it was picked. */
export interface Recommendation {
  index: number;
  withinBudget: boolean;
  reason: string;
}

const num = (x: number | null): number => (x === null ? -1 : x);
const pct = (x: number | null): string => (x === null ? 'n/a' : `${(x * 100).toFixed(1)}%`);
const rate = (x: number | null): string => (x === null ? 'n/a' : x.toFixed(2));

/** Pick the recommended point by the rule above; null for an empty grid. */
export function recommend(points: readonly Scored[], budgetPerHour: number): Recommendation | null {
  if (points.length === 0) return null;
  const within = points.map((p, i) => ({ p, i })).filter(({ p }) => (p.alertsPerHour ?? 0) <= budgetPerHour);
  if (within.length > 0) {
    within.sort(
      (a, b) =>
        num(b.p.recall) - num(a.p.recall) ||
        num(b.p.precision) - num(a.p.precision) ||
        a.p.raised - b.p.raised ||
        a.i - b.i,
    );
    const best = within[0];
    return {
      index: best.i,
      withinBudget: true,
      reason:
        `best recall (${pct(best.p.recall)}) among ${within.length} of ${points.length} points within the budget of ` +
        `${budgetPerHour} raised alerts/hour; precision ${pct(best.p.precision)}, ${rate(best.p.alertsPerHour)} alerts/hour`,
    };
  }
  const order = points.map((p, i) => ({ p, i }));
  order.sort(
    (a, b) =>
      (a.p.alertsPerHour ?? 0) - (b.p.alertsPerHour ?? 0) || num(b.p.recall) - num(a.p.recall) || a.i - b.i,
  );
  const best = order[0];
  return {
    index: best.i,
    withinBudget: false,
    reason:
      `no point is within the budget of ${budgetPerHour} raised alerts/hour; this is the quietest ` +
      `(${rate(best.p.alertsPerHour)} alerts/hour, recall ${pct(best.p.recall)}): raise the budget or widen the grid`,
  };
}
