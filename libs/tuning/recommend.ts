/**
 * The recommendation rule, counting noise as well as catches. Among grid points whose raised-alert
 * rate is within the budget:
 *   1. points without a flood (some 10 minutes with more than 10 raised), when any is flood-free;
 *   2. of those, points whose recall is within {@link RECALL_SLACK} of the best recall among them
 *      (a near-equal catch rate; trading more recall away would hide real incidents);
 *   3. of those, the fewest raises per caught incident: points whose raised alerts per caught
 *      incident (every raise, repeated or false, over the incidents caught) are within
 *      {@link REPEAT_SLACK} of the lowest among them (a few hundredths never outweigh precision),
 *      then the fewest raises in chattering runs;
 *   4. then the best precision, the fewest raised alerts, grid order.
 * When no point is within budget: the lowest alert rate, then the best recall, then grid order; the
 * reason says so. Null figures (no incidents, no alerts, nothing caught) rank below any number.
 *
 * {@link recallFirst} is the rule tune used before (best recall, then precision): kept to show
 * what the noise-aware rule trades, in the report and in the tests.
 */
export interface Scored {
  recall: number | null;
  precision: number | null;
  alertsPerHour: number | null;
  raised: number;
  /** Some 10 minutes held more than the flood level (absent: no flood). */
  flood?: boolean;
  /** Every raised alert per caught incident, raised / caught (null: nothing caught; absent: not measured). */
  alertsPerCaught?: number | null;
  /** Raises that belong to a chattering run (absent: not measured). */
  chatteringRaises?: number;
}

/** The recommended grid point, whether it is within the budget, and why it was picked. */
export interface Recommendation {
  index: number;
  withinBudget: boolean;
  reason: string;
}

/** How far below the best recall a point may be and still compete on fewer repeated raises. */
export const RECALL_SLACK = 0.02;
/** Raised alerts per caught incident this close to the lowest count as equally few. */
export const REPEAT_SLACK = 0.1;
/** Binary noise in the slack comparisons (0.97 - 0.02 is not exactly 0.95). */
const EPSILON = 1e-9;

interface Entry {
  p: Scored;
  i: number;
}

const num = (x: number | null): number => (x === null ? -1 : x);
/** Lower is better; null and absent rank last. */
const fewest = (x: number | null | undefined): number => (x === null || x === undefined ? Infinity : x);
const pct = (x: number | null): string => (x === null ? 'n/a' : `${(x * 100).toFixed(1)}%`);
const rate = (x: number | null): string => (x === null ? 'n/a' : x.toFixed(2));
const ratio = (x: number | null | undefined): string =>
  x === null || x === undefined ? 'n/a' : x.toFixed(2);

const withinBudgetOf = (points: readonly Scored[], budgetPerHour: number): Entry[] =>
  points.map((p, i) => ({ p, i })).filter(({ p }) => (p.alertsPerHour ?? 0) <= budgetPerHour);

/** Nothing within budget: the quietest point, ties by recall. */
function quietest(points: readonly Scored[], budgetPerHour: number): Recommendation {
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

/** Pick the recommended point by the noise-aware rule above; null for an empty grid. */
export function recommend(points: readonly Scored[], budgetPerHour: number): Recommendation | null {
  if (points.length === 0) return null;
  const within = withinBudgetOf(points, budgetPerHour);
  if (within.length === 0) return quietest(points, budgetPerHour);
  const calm = within.filter(({ p }) => p.flood !== true);
  const pool = calm.length > 0 ? calm : within;
  const bestRecall = Math.max(...pool.map(({ p }) => num(p.recall)));
  const near = pool.filter(({ p }) => num(p.recall) >= bestRecall - RECALL_SLACK - EPSILON);
  const leastRepeats = Math.min(...near.map(({ p }) => fewest(p.alertsPerCaught)));
  const fewRepeats = near.filter(
    ({ p }) =>
      leastRepeats === Infinity || fewest(p.alertsPerCaught) <= leastRepeats + REPEAT_SLACK + EPSILON,
  );
  fewRepeats.sort(
    (a, b) =>
      fewest(a.p.chatteringRaises) - fewest(b.p.chatteringRaises) ||
      num(b.p.precision) - num(a.p.precision) ||
      a.p.raised - b.p.raised ||
      a.i - b.i,
  );
  const best = fewRepeats[0].p;
  const floodText =
    calm.length > 0
      ? `${calm.length} of them without a flood`
      : 'every one of them has a flood (none can be avoided on this grid)';
  return {
    index: fewRepeats[0].i,
    withinBudget: true,
    reason:
      `${within.length} of ${points.length} points are within the budget of ${budgetPerHour} raised alerts/hour, ` +
      `${floodText}; of the ${near.length} with recall within ${RECALL_SLACK * 100} points of the best ` +
      `(${pct(bestRecall < 0 ? null : bestRecall)}), ${fewRepeats.length} ${fewRepeats.length === 1 ? 'comes' : 'come'} within ${REPEAT_SLACK} of the fewest ` +
      `raised alerts per caught incident (${ratio(leastRepeats === Infinity ? null : leastRepeats)}); this one has ` +
      `${ratio(best.alertsPerCaught)} and ${best.chatteringRaises ?? 'n/a'} chattering raises, the fewest of those, then the best precision; ` +
      `recall ${pct(best.recall)}, precision ${pct(best.precision)}, ${rate(best.alertsPerHour)} alerts/hour`,
  };
}

/**
 * The earlier rule (best recall within the budget, then precision, then fewest raised, then grid
 * order; the quietest point when none is within budget), for comparison with {@link recommend}.
 */
export function recallFirst(points: readonly Scored[], budgetPerHour: number): number | null {
  if (points.length === 0) return null;
  const within = withinBudgetOf(points, budgetPerHour);
  if (within.length === 0) return quietest(points, budgetPerHour).index;
  within.sort(
    (a, b) =>
      num(b.p.recall) - num(a.p.recall) ||
      num(b.p.precision) - num(a.p.precision) ||
      a.p.raised - b.p.raised ||
      a.i - b.i,
  );
  return within[0].i;
}
