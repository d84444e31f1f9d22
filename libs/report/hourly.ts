/**
 * Alerts raised per clock hour (UTC hour boundaries) over the whole data span, for the report's
 * alert-rate chart. Counting per clock hour means a bar is a real hourly count: one alert is one
 * per hour, never scaled up from a shorter bin into an apparent breach of an hourly budget.
 * Memory is one entry per hour that holds an alert (at most one per alert, at most one per hour).
 */

/** Length of one clock hour in ms. */
export const HOUR_MS = 3_600_000;

/** Counts of raised alerts keyed by clock hour (floor(ts / HOUR_MS)). */
export class HourlyCounts {
  private readonly counts = new Map<number, number>();

  /** Count one raised alert at event time ts (epoch ms). */
  add(ts: number): void {
    const hour = Math.floor(ts / HOUR_MS);
    this.counts.set(hour, (this.counts.get(hour) ?? 0) + 1);
  }

  /** Alerts counted in the clock hour starting at hourStart (epoch ms, a multiple of HOUR_MS). */
  get(hourStart: number): number {
    return this.counts.get(Math.floor(hourStart / HOUR_MS)) ?? 0;
  }

  /** Hours with at least one alert (hour index to count). */
  entries(): IterableIterator<[number, number]> {
    return this.counts.entries();
  }
}

/** One bar of the rate chart: one or more whole clock hours. */
export interface HourBar {
  /** Start of the first hour (epoch ms). */
  start: number;
  /** End of the last hour (epoch ms, exclusive). */
  end: number;
  /** Alerts raised in all hours of the bar. */
  total: number;
  /** The highest count of any single clock hour in the bar (what is compared with an hourly budget). */
  maxPerHour: number;
}

/**
 * Bars covering every clock hour from the hour holding `from` to the hour holding `to`
 * (inclusive), including hours without alerts. When there are more hours than `maxBars`, each bar
 * groups a whole number of consecutive hours and keeps the busiest single hour, so a short burst
 * stays visible and a bar never shows more per hour than any real clock hour had.
 */
export function hourBars(counts: HourlyCounts, from: number, to: number, maxBars: number): HourBar[] {
  if (!(Number.isFinite(from) && Number.isFinite(to)) || to < from) return [];
  if (!(Number.isInteger(maxBars) && maxBars >= 1)) throw new RangeError('maxBars must be an integer >= 1');
  const firstHour = Math.floor(from / HOUR_MS);
  const lastHour = Math.floor(to / HOUR_MS);
  const hours = lastHour - firstHour + 1;
  const perBar = Math.ceil(hours / maxBars);
  const bars: HourBar[] = [];
  for (let hour = firstHour; hour <= lastHour; hour += perBar) {
    const endHour = Math.min(hour + perBar, lastHour + 1);
    bars.push({ start: hour * HOUR_MS, end: endHour * HOUR_MS, total: 0, maxPerHour: 0 });
  }
  for (const [hour, count] of counts.entries()) {
    if (hour < firstHour || hour > lastHour) continue;
    const bar = bars[Math.floor((hour - firstHour) / perBar)];
    bar.total += count;
    if (count > bar.maxPerHour) bar.maxPerHour = count;
  }
  return bars;
}
