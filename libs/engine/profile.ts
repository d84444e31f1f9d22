/**
 * The time-of-day profile of one sensor (`profile: daily`): its readings sorted into the 24 hourly
 * slots of local time (`timeZone`), one compact digest per slot and local day, kept for the last
 * `profileDays` days (held as their stored bytes, see profile-slots.ts).
 *
 * Baseline definition: a reading in local hour h of local day D is judged against slot h on days
 * D - profileDays .. D - 1 (never today, so a reading is never judged against itself). The day
 * being filled (the open entry) closes into its slot when local time moves on to another hour.
 * Daylight saving: a 23 h day has no entry in the skipped hour; on a 25 h day the repeated hour
 * feeds one entry, the slot's entry for that day.
 *
 * Warm-up: a slot judges once it holds at least PROFILE_WARM_DAYS days (fewer when profileDays is
 * smaller) and minSamples readings; until then the reading is judged by the rolling window, as an
 * unprofiled sensor would be.
 */
import { addValue, emptyMoments, mergeMoments, sampleStdDev, type Moments } from '../stats/moments.js';
import {
  compressToBins,
  FrozenDigest,
  OpenDigest,
  roundForStorage,
  type OpenDigestSnapshot,
} from '../stats/digest.js';
import { LocalClock, type LocalSlot } from './local-time.js';
import { HOURS_PER_DAY, ProfileSlots, type ProfileEntry } from './profile-slots.js';
import { SKETCH } from './sketch-params.js';
import type { Baseline } from './window.js';

/** Days of history a profiled slot needs before it judges (or profileDays, when smaller). */
export const PROFILE_WARM_DAYS = 3;

export type { ProfileEntry } from './profile-slots.js';

/** A baseline from a slot of the profile, with the local hour and the days it covers. */
export interface ProfileBaseline extends Baseline {
  hour: number;
  days: number;
}

/** Everything a profile holds, as the state encoding stores it. */
export interface ProfileSnapshot {
  zone: string;
  profileDays: number;
  openDay: number;
  openHour: number;
  /** Mean and variance of the open hour's readings. */
  openMoments: Moments;
  openFirstTs: number;
  openLastTs: number;
  open: OpenDigestSnapshot;
  /** The closed entries of the 24 slots. */
  slots: ProfileSlots;
}

const clocks = new Map<string, LocalClock>();
/** One LocalClock per zone, shared by every sensor of that zone (its cache is a pure memo). */
function clockFor(zone: string): LocalClock {
  let clock = clocks.get(zone);
  if (clock === undefined) {
    clock = new LocalClock(zone);
    clocks.set(zone, clock);
  }
  return clock;
}

/**
 * The hourly local-time profile of one sensor.
 *
 * @example
 * const profile = new DailyProfile('Europe/Berlin', 7);
 * const where = profile.advance(ts); // closes the previous hour's entry when local time moved on
 * const baseline = profile.baseline(minSamples); // null while the slot warms up
 * if (where !== null) profile.add(ts, value);
 */
export class DailyProfile {
  private readonly clock: LocalClock;
  /** Local day (days since 1970-01-01 of the local date) of the open entry; -1 before the first reading. */
  openDay = -1;
  /** Local hour (0-23) of the open entry; -1 before the first reading. */
  openHour = -1;
  /** Digest of the open hour's readings (not in any baseline yet). */
  open = new OpenDigest(SKETCH.profileBins, SKETCH.openCap);
  /** Mean and variance of the open hour's readings. */
  openMoments: Moments = emptyMoments();
  /** Time of the open hour's first reading. */
  openFirstTs = 0;
  /** Time of the open hour's newest reading. */
  openLastTs = 0;
  /** Closed hours per local hour of the day (0-23), oldest first. */
  closed = new ProfileSlots();
  private cached: { minSamples: number; baseline: ProfileBaseline | null } | null = null;

  constructor(
    readonly zone: string,
    readonly profileDays: number,
  ) {
    this.clock = clockFor(zone);
  }

  /** A profile from its snapshot; one written for another zone or depth starts empty. */
  static restore(zone: string, profileDays: number, saved: ProfileSnapshot): DailyProfile {
    const profile = new DailyProfile(zone, profileDays);
    if (saved.zone !== zone || saved.profileDays !== profileDays) return profile;
    profile.openDay = saved.openDay;
    profile.openHour = saved.openHour;
    profile.openMoments = saved.openMoments;
    profile.openFirstTs = saved.openFirstTs;
    profile.openLastTs = saved.openLastTs;
    profile.open = OpenDigest.restore(saved.open, SKETCH.profileBins, SKETCH.openCap);
    profile.closed = saved.slots;
    return profile;
  }

  /**
   * Move to the local hour of `ts`, closing the open entry when the hour changed. Returns the
   * slot, or null for a reading behind the open hour (out of order across local hours): such a
   * reading is neither judged by nor learned into the profile.
   */
  advance(ts: number): LocalSlot | null {
    const slot = this.clock.slotOf(ts);
    if (slot.day === this.openDay && slot.hour === this.openHour) return slot;
    const behind = slot.day * HOURS_PER_DAY + slot.hour < this.openDay * HOURS_PER_DAY + this.openHour;
    if (this.openDay >= 0 && behind) return null;
    this.close();
    if (slot.day !== this.openDay) this.expire(slot.day);
    this.openDay = slot.day;
    this.openHour = slot.hour;
    this.cached = null;
    return slot;
  }

  /** Learn a reading into the open entry (call after advance returned its slot). */
  add(ts: number, value: number): void {
    if (this.openMoments.n === 0) {
      this.openFirstTs = ts;
      this.openLastTs = ts;
    } else {
      if (ts < this.openFirstTs) this.openFirstTs = ts;
      if (ts > this.openLastTs) this.openLastTs = ts;
    }
    addValue(this.openMoments, value);
    this.open.push(value);
  }

  /** The open hour's slot on the previous profileDays days, or null while it warms up. */
  baseline(minSamples: number): ProfileBaseline | null {
    if (this.cached !== null && this.cached.minSamples === minSamples) return this.cached.baseline;
    const baseline = this.build(minSamples);
    this.cached = { minSamples, baseline };
    return baseline;
  }

  /** Readings held in closed entries (all slots). */
  get heldReadings(): number {
    return this.closed.heldReadings;
  }

  /** Every slot's closed entries, decoded, oldest first (for inspection; a copy). */
  get slots(): ProfileEntry[][] {
    return this.closed.allEntries();
  }

  private build(minSamples: number): ProfileBaseline | null {
    if (this.openHour < 0) return null;
    const entries = this.closed.entriesOf(this.openHour, this.openDay - this.profileDays, this.openDay);
    if (entries.length < Math.min(PROFILE_WARM_DAYS, this.profileDays)) return null;
    let moments = emptyMoments();
    let first = Infinity;
    let last = -Infinity;
    for (const entry of entries) {
      moments = mergeMoments(moments, entry.moments);
      if (entry.firstTs < first) first = entry.firstTs;
      if (entry.lastTs > last) last = entry.lastTs;
    }
    if (moments.n < minSamples) return null;
    const digest = new FrozenDigest(
      compressToBins(
        entries.map((entry) => entry.centroids),
        SKETCH.baselineBins,
      ),
    );
    const q1 = digest.quantile(0.25);
    const q3 = digest.quantile(0.75);
    return {
      digest,
      count: moments.n,
      mean: moments.mean,
      stdDev: sampleStdDev(moments),
      q1,
      median: digest.quantile(0.5),
      q3,
      iqr: q3 - q1,
      from: first,
      to: last,
      hour: this.openHour,
      days: this.profileDays,
    };
  }

  private close(): void {
    if (this.openMoments.n === 0) return;
    this.closed.append(this.openHour, {
      day: this.openDay,
      moments: this.openMoments,
      firstTs: this.openFirstTs,
      lastTs: this.openLastTs,
      centroids: roundForStorage(compressToBins([this.open.centroids()], SKETCH.profileBins)),
    });
    this.open.reset();
    this.openMoments = emptyMoments();
  }

  /** Drop entries older than any baseline from `day` on can use. */
  private expire(day: number): void {
    this.closed.dropBefore(day - this.profileDays);
  }
}
