/**
 * The closed entries of a daily profile (one per local hour and day), held compactly: all 24
 * slots' entries in one byte buffer, in exactly the bytes the state encoding stores (see
 * sensor-state.ts, "the profile section"), slot 0 first, each slot's entries oldest first.
 *
 * Why bytes and not objects: a profiled sensor keeps 24 slots x (profileDays + 1) entries of up
 * to 48 centroids. As objects with two Float64Arrays each that was about 240 KB of heap per
 * sensor (six times the window); as the stored bytes it is about the state size (5 to 6 bytes a
 * centroid), encoding is one copy, and restoring is one copy. Entries are decoded only when an
 * hour's baseline is built (once per local hour) and decode to the same doubles the state reader
 * gives, so a restored profile and an uninterrupted one are the same numbers.
 */
import { ByteReader, ByteWriter } from './bytes.js';
import type { Centroids } from '../stats/digest.js';
import type { Moments } from '../stats/moments.js';

/** Slots of a daily profile: the local hours of the day. */
export const HOURS_PER_DAY = 24;
const EMPTY_BYTES = new Uint8Array(0);

/** One local day's readings in one hourly slot, decoded. */
export interface ProfileEntry {
  day: number;
  moments: Moments;
  firstTs: number;
  lastTs: number;
  centroids: Centroids;
}

// Scratch writer for one entry's bytes (appends run while processing, never while encoding).
const entryWriter = new ByteWriter();

/** Writes one entry as the state stores it: its head, then its centroids (first mean, then steps). */
function writeEntry(out: ByteWriter, entry: ProfileEntry): void {
  out.f64(entry.day);
  out.f64(entry.moments.n);
  out.f64(entry.moments.mean);
  out.f64(entry.moments.m2);
  out.f64(entry.firstTs);
  out.f64(entry.lastTs);
  const { means, counts } = entry.centroids;
  out.uvar(means.length);
  for (let index = 0; index < means.length; index++) {
    if (index === 0) out.f64(means[0]);
    else out.f32(means[index] - means[index - 1]);
    out.uvar(counts[index]);
  }
}

/**
 * Reads one entry; its centroids are decoded only when its day is in [fromDay, toDay), else
 * skipped (left empty).
 */
function readEntry(input: ByteReader, fromDay = Infinity, toDay = -Infinity): ProfileEntry {
  const day = input.f64();
  const moments = { n: input.f64(), mean: input.f64(), m2: input.f64() };
  const firstTs = input.f64();
  const lastTs = input.f64();
  const length = input.uvar();
  const wanted = day >= fromDay && day < toDay;
  const means = new Float64Array(wanted ? length : 0);
  const counts = new Float64Array(wanted ? length : 0);
  let mean = 0;
  for (let index = 0; index < length; index++) {
    // The same additions in the same order as the state reader always did: identical doubles.
    mean = index === 0 ? input.f64() : mean + input.f32();
    const count = input.uvar();
    if (wanted) {
      means[index] = mean;
      counts[index] = count;
    }
  }
  return { day, moments, firstTs, lastTs, centroids: { means, counts } };
}

/**
 * The 24 hourly slots of one profile, as bytes.
 *
 * @example
 * const slots = new ProfileSlots();
 * slots.append(3, entry); // entry for local hour 03:00-04:00 of entry.day
 * const recent = slots.entriesOf(3, today - 7, today); // decoded, oldest first
 * slots.dropBefore(today - 7);
 */
export class ProfileSlots {
  /** Slot 0's entries, then slot 1's, ... slot 23's; bytes past `used` are room to grow. */
  private buffer: Uint8Array = EMPTY_BYTES;
  private used = 0;
  /** Where each slot's entries start in `buffer`; slotStarts[24] is where slot 23's end. */
  private readonly slotStarts = new Uint32Array(HOURS_PER_DAY + 1);
  /** Entries each slot holds. */
  private readonly entryCounts = new Uint32Array(HOURS_PER_DAY);

  /** Add a closed entry at the end of slot `hour` (its newest). */
  append(hour: number, entry: ProfileEntry): void {
    entryWriter.reset();
    writeEntry(entryWriter, entry);
    const bytes = entryWriter.bytes();
    const at = this.slotStarts[hour + 1];
    this.makeRoom(bytes.length);
    this.buffer.copyWithin(at + bytes.length, at, this.used);
    this.buffer.set(bytes, at);
    this.used += bytes.length;
    for (let later = hour + 1; later <= HOURS_PER_DAY; later++) this.slotStarts[later] += bytes.length;
    this.entryCounts[hour]++;
  }

  /** Drop, in every slot, the oldest entries while their day is before `oldestDay`. */
  dropBefore(oldestDay: number): void {
    let removed = 0;
    for (let hour = 0; hour < HOURS_PER_DAY; hour++) {
      const input = this.reader(hour);
      let expired = 0;
      let expiredBytes = 0;
      while (expired < this.entryCounts[hour] && readEntry(input).day < oldestDay) {
        expired++;
        expiredBytes = input.offset;
      }
      // Slots before this one already moved down by `removed` bytes.
      const start = this.slotStarts[hour] - removed;
      this.buffer.copyWithin(start, this.slotStarts[hour] + expiredBytes, this.slotStarts[hour + 1]);
      this.slotStarts[hour] = start;
      this.entryCounts[hour] -= expired;
      removed += expiredBytes;
    }
    if (removed === 0) return;
    this.used -= removed;
    this.slotStarts[HOURS_PER_DAY] = this.used;
  }

  /** Decoded entries of slot `hour` whose day is in [fromDay, toDay), oldest first. */
  entriesOf(hour: number, fromDay: number, toDay: number): ProfileEntry[] {
    const input = this.reader(hour);
    const entries: ProfileEntry[] = [];
    for (let index = 0; index < this.entryCounts[hour]; index++) {
      const entry = readEntry(input, fromDay, toDay);
      if (entry.day >= fromDay && entry.day < toDay) entries.push(entry);
    }
    return entries;
  }

  /** Every slot's entries, decoded (for inspection and tests; the profile never needs them all). */
  allEntries(): ProfileEntry[][] {
    return Array.from({ length: HOURS_PER_DAY }, (_, hour) => this.entriesOf(hour, -Infinity, Infinity));
  }

  /** Readings held in all entries. */
  get heldReadings(): number {
    let readings = 0;
    for (let hour = 0; hour < HOURS_PER_DAY; hour++) {
      const input = this.reader(hour);
      for (let index = 0; index < this.entryCounts[hour]; index++) readings += readEntry(input).moments.n;
    }
    return readings;
  }

  /** Bytes held for entries (the state's share of them, without the slots' entry counts). */
  get byteLength(): number {
    return this.used;
  }

  /** The state's slot part: per slot its entry count, then its entries' bytes. */
  write(out: ByteWriter): void {
    for (let hour = 0; hour < HOURS_PER_DAY; hour++) {
      out.uvar(this.entryCounts[hour]);
      out.raw(this.buffer.subarray(this.slotStarts[hour], this.slotStarts[hour + 1]));
    }
  }

  /** Slots read from the state's slot part (each entry parsed, so a damaged one throws RangeError). */
  static read(input: ByteReader): ProfileSlots {
    const slots = new ProfileSlots();
    const parts: Uint8Array[] = [];
    for (let hour = 0; hour < HOURS_PER_DAY; hour++) {
      const count = input.uvar();
      const start = input.offset;
      for (let index = 0; index < count; index++) readEntry(input);
      parts.push(input.copy(start, input.offset));
      slots.entryCounts[hour] = count;
      slots.slotStarts[hour + 1] = slots.slotStarts[hour] + parts[hour].length;
    }
    slots.used = slots.slotStarts[HOURS_PER_DAY];
    slots.buffer = new Uint8Array(slots.used);
    for (let hour = 0; hour < HOURS_PER_DAY; hour++) slots.buffer.set(parts[hour], slots.slotStarts[hour]);
    return slots;
  }

  /** A reader over slot `hour`'s entries. */
  private reader(hour: number): ByteReader {
    return new ByteReader(this.buffer.subarray(this.slotStarts[hour], this.slotStarts[hour + 1]));
  }

  /** Grow the buffer for `extra` more bytes, with an eighth to spare so appends rarely copy it. */
  private makeRoom(extra: number): void {
    const needed = this.used + extra;
    if (needed <= this.buffer.length) return;
    const grown = new Uint8Array(needed + (needed >> 3));
    grown.set(this.buffer.subarray(0, this.used));
    this.buffer = grown;
  }
}
