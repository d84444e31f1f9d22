/**
 * Local calendar day and hour of an instant in an IANA time zone, for time-of-day profiles.
 * Pure: Intl reads only the time zone database built into the runtime, so the same instant and
 * zone always give the same answer on one build. Daylight saving is handled by the database: a
 * 23 h day has no 02:00-03:00 hour (Europe/Berlin in March), a 25 h day has it twice (October),
 * and both of its readings fall into that one local hour.
 */
const HOUR_MS = 3_600_000;

/** Where an instant falls in local time: the local date as a day number and the local hour. */
export interface LocalSlot {
  /** Days since 1970-01-01 of the local calendar date. */
  day: number;
  /** Local hour of day, 0-23. */
  hour: number;
}

/**
 * Maps instants to local (day, hour) in one zone. Remembers the UTC span of the last local hour
 * it resolved, so readings within the same hour cost no Intl call (one or two per hour).
 */
export class LocalClock {
  private readonly format: Intl.DateTimeFormat;
  private spanFrom = 1;
  private spanTo = 0;
  private spanSlot: LocalSlot = { day: 0, hour: 0 };

  constructor(readonly zone: string) {
    this.format = new Intl.DateTimeFormat('en-US', {
      timeZone: zone,
      hourCycle: 'h23',
      year: 'numeric',
      month: 'numeric',
      day: 'numeric',
      hour: 'numeric',
      minute: 'numeric',
      second: 'numeric',
    });
  }

  /** The local day and hour of `ts` (ms since the epoch). */
  slotOf(ts: number): LocalSlot {
    if (ts >= this.spanFrom && ts < this.spanTo) return this.spanSlot;
    const here = this.offsetOf(ts);
    const local = ts + here;
    const slot = { day: Math.floor(local / 86_400_000), hour: Math.floor(local / HOUR_MS) % 24 };
    // The UTC span of this local hour, if no offset change falls inside it (changes are months apart).
    const from = Math.floor(local / HOUR_MS) * HOUR_MS - here;
    const to = from + HOUR_MS;
    if (this.offsetOf(from) === here && this.offsetOf(to - 1) === here) {
      this.spanFrom = from;
      this.spanTo = to;
      this.spanSlot = slot;
    }
    return slot;
  }

  /** Local time minus UTC at `ts`, in ms (whole seconds; sub-second parts are the same in both). */
  offsetOf(ts: number): number {
    const parts = this.format.formatToParts(ts);
    let year = 0;
    let month = 0;
    let day = 0;
    let hour = 0;
    let minute = 0;
    let second = 0;
    for (const part of parts) {
      const value = Number(part.value);
      switch (part.type) {
        case 'year':
          year = value;
          break;
        case 'month':
          month = value;
          break;
        case 'day':
          day = value;
          break;
        case 'hour':
          hour = value;
          break;
        case 'minute':
          minute = value;
          break;
        case 'second':
          second = value;
          break;
      }
    }
    const wallAsUtc = Date.UTC(year, month - 1, day, hour, minute, second);
    const wholeSecond = ts - (((ts % 1000) + 1000) % 1000);
    return wallAsUtc - wholeSecond;
  }
}

/** "03:00-04:00": a local hour as the alert message writes it. */
export function hourSpan(hour: number): string {
  const twoDigits = (value: number) => String(value).padStart(2, '0');
  return `${twoDigits(hour)}:00-${twoDigits((hour + 1) % 24 === 0 ? 24 : hour + 1)}:00`;
}
