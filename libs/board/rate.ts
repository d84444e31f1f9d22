/**
 * Alert-rate meter: how many alerts were raised in the last 10 minutes and the last hour, against
 * an operator budget. The defaults are the shared budget and flood mark of libs/schema/vocabulary.
 */
import { ALERT_BUDGET_PER_HOUR, FLOOD_LIMIT } from '../schema/vocabulary.js';

/** The meter's default budget (alerts raised per hour) and flood mark (more than N in 10 minutes). */
export const RATE_DEFAULTS = { budgetPerHour: ALERT_BUDGET_PER_HOUR, floodPer10Min: FLOOD_LIMIT } as const;

const TEN_MIN = 10 * 60_000;
const HOUR = 60 * 60_000;

/** What the rate meter reads at one moment: raises in the last 10 minutes and hour, against the budget. */
export interface RateReading {
  last10Min: number;
  lastHour: number;
  budgetPerHour: number;
  /** lastHour over the budget (1 = at budget). */
  budgetUse: number;
  overBudget: boolean;
  flood: boolean;
  floodPer10Min: number;
}

/** Counts raised alerts over the last hour of plant time against the budget and the flood mark. */
export class RateMeter {
  /** Raise times (epoch ms), ascending; only the last hour is kept so memory stays bounded. */
  private times: number[] = [];

  constructor(
    readonly budgetPerHour: number = RATE_DEFAULTS.budgetPerHour,
    readonly floodPer10Min: number = RATE_DEFAULTS.floodPer10Min,
  ) {}

  /** Counts a raise at event time `ts`. */
  record(ts: number): void {
    const times = this.times;
    // Keep ascending order even if a raise arrives slightly out of order.
    let insertAt = times.length;
    while (insertAt > 0 && times[insertAt - 1] > ts) insertAt--;
    times.splice(insertAt, 0, ts);
    // Bounded even when nobody reads the meter: nothing older than an hour before the newest raise.
    const newest = times[times.length - 1];
    let drop = 0;
    while (drop < times.length && times[drop] <= newest - HOUR) drop++;
    if (drop > 0) times.splice(0, drop);
  }

  /** Raise times held (for tests of the bound). */
  get held(): number {
    return this.times.length;
  }

  /** Raises in the hour before `now`, and whether that is a flood; drops older times. */
  read(now: number): RateReading {
    const times = this.times;
    let drop = 0;
    while (drop < times.length && times[drop] <= now - HOUR) drop++;
    if (drop > 0) times.splice(0, drop);
    let hour = 0;
    let ten = 0;
    for (const raisedAt of times) {
      if (raisedAt > now) continue; // not yet happened at `now`
      hour++;
      if (raisedAt > now - TEN_MIN) ten++;
    }
    return {
      last10Min: ten,
      lastHour: hour,
      budgetPerHour: this.budgetPerHour,
      budgetUse: hour / this.budgetPerHour,
      overBudget: hour > this.budgetPerHour,
      flood: ten > this.floodPer10Min,
      floodPer10Min: this.floodPer10Min,
    };
  }
}
