/** Everything the engine knows about one sensor, and its compact versioned encoding. */
import { StreamfenceError } from '../errors/index.js';
import type { SensorSettings } from '../config/settings.js';
import { ByteReader, ByteWriter } from './bytes.js';
import type { Fences } from './judge.js';
import { isReason, SEVERITIES, type Reason } from '../schema/vocabulary.js';
import { newLifecycle, type LifecycleState } from './lifecycle.js';
import { SensorWindow, type Baseline, type ClosedBucket, type WindowSnapshot } from './window.js';
import { DailyProfile, type ProfileSnapshot } from './profile.js';
import { ProfileSlots } from './profile-slots.js';
import type { Moments } from '../stats/moments.js';
import type { OpenDigestSnapshot } from '../stats/digest.js';

/**
 * An alert about the sensor itself rather than a judged reading (its readings of doubtful
 * quality): raised and cleared by its own rule, beside the sensor's reading alert.
 */
export interface ConditionAlert {
  id: string;
  /** Event time it was raised at. */
  raisedTs: number;
  /** Readings that kept the condition up since it was raised (the raising one included). */
  readings: number;
}

/** Everything the engine knows about one sensor: counters, its rolling window, its alert lifecycle. */
export class SensorState {
  /** Lifetime accepted readings. */
  seen = 0;
  /** The newest value (for the stuck-sensor rule). */
  lastValue = NaN;
  /** Length of the current run of identical values. */
  stuckRun = 0;
  /** The rolling event-time window of bucket digests. */
  readonly window: SensorWindow;
  /** Where the sensor is in the alert lifecycle (debounce counts, the raised alert). */
  life: LifecycleState;
  /** Consecutive readings of quality other than good, up to the newest. */
  doubtfulRun = 0;
  /** The raised bad_quality alert, if any. */
  qualityAlert: ConditionAlert | null = null;
  /** Value of the newest reading by event time, of any quality (what a stale alert quotes). */
  newestValue = NaN;
  /** The raised stale alert, if any. */
  staleAlert: ConditionAlert | null = null;
  /** Fences cached for the baseline object they were computed from. */
  fencesFor: Baseline | null = null;
  /** The fences of the current baseline, cached until the baseline changes. */
  fences: Fences | null = null;
  /** The time-of-day profile (`profile: daily`), or null. */
  profile: DailyProfile | null;

  /** A new sensor, or (decodeSensorState) one whose window was restored from its encoding. */
  constructor(
    readonly sensor: string,
    readonly settings: SensorSettings,
    window: SensorWindow = new SensorWindow(settings.window, settings.buckets),
  ) {
    this.window = window;
    this.life = newLifecycle(settings);
    this.profile =
      settings.profile === 'daily' ? new DailyProfile(settings.timeZone, settings.profileDays) : null;
  }
}

const MAGIC_0 = 0x53; // 'S'
const MAGIC_1 = 0x46; // 'F'
/**
 * Bump whenever the encoding changes: a state of another version is refused, never misread.
 * 4 added the doubtful-quality run and the bad_quality alert after the lifecycle; 5 the newest
 * reading's value and the stale alert; 6 the time-of-day profile section at the end; 7 the
 * lifecycle's onDelay and clearDelay start times. Versions 3 to 6 are still read (no run, no such
 * alerts, the newest value taken as the last judged one, the profile empty; an on-delay starts
 * afresh and a clear run in progress is timed from the newest reading, so a restored alert never
 * clears earlier than it would have).
 */
export const STATE_VERSION = 7;
/** The first version with the time-of-day profile section at the end. */
const PROFILE_VERSION = 6;
/** Older encodings this build still reads. */
const READABLE_VERSIONS = [3, 4, 5, 6, STATE_VERSION];
/** The first version with the lifecycle's start times (pendingSinceTs, clearSinceTs). */
const DELAY_VERSION = 7;

// Reused across calls: encoding is synchronous, and checkpoints encode thousands of sensors at once.
const sharedWriter = new ByteWriter();

/**
 * The state's bytes: magic 'SF', STATE_VERSION, the sensor's counters, its window, its lifecycle.
 * Encoding never changes the state, and decoding the bytes then continuing gives the same events
 * as never stopping (the exact-state invariant).
 */
export function encodeSensorState(state: SensorState): Uint8Array {
  const out = sharedWriter;
  out.reset();
  out.u8(MAGIC_0);
  out.u8(MAGIC_1);
  out.u8(STATE_VERSION);
  out.str(state.sensor);
  out.uvar(state.seen);
  out.f64(state.lastValue);
  out.uvar(state.stuckRun);
  writeWindow(out, state.window);
  writeLifecycle(out, state.life);
  out.uvar(state.doubtfulRun);
  writeCondition(out, state.qualityAlert);
  out.f64(state.newestValue);
  writeCondition(out, state.staleAlert);
  writeProfile(out, state.profile);
  return out.bytes();
}

function writeCondition(out: ByteWriter, alert: ConditionAlert | null): void {
  out.u8(alert ? 1 : 0);
  if (alert === null) return;
  out.str(alert.id);
  out.f64(alert.raisedTs);
  out.uvar(alert.readings);
}

function readCondition(input: ByteReader): ConditionAlert | null {
  if (input.u8() !== 1) return null;
  return { id: input.str(), raisedTs: input.f64(), readings: input.uvar() };
}

/**
 * An open bucket (the window's, or the profile's open entry): its moments, first and last reading
 * time as doubles, then its centroids (mean as a double, count as an integer) and its unmerged
 * buffer. The window and the profile write the same layout, so one pair of functions keeps it.
 */
function writeOpenBucket(
  out: ByteWriter,
  moments: Moments,
  firstTs: number,
  lastTs: number,
  open: OpenDigestSnapshot,
): void {
  out.f64(moments.n);
  out.f64(moments.mean);
  out.f64(moments.m2);
  out.f64(firstTs);
  out.f64(lastTs);
  out.uvar(open.means.length);
  for (let i = 0; i < open.means.length; i++) {
    out.f64(open.means[i]);
    out.uvar(open.counts[i]);
  }
  out.uvar(open.buffer.length);
  for (let i = 0; i < open.buffer.length; i++) out.f64(open.buffer[i]);
}

/** The open bucket `writeOpenBucket` wrote, in the fields both snapshots name alike. */
function readOpenBucket(input: ByteReader): {
  openMoments: Moments;
  openFirstTs: number;
  openLastTs: number;
  open: OpenDigestSnapshot;
} {
  const openMoments = { n: input.f64(), mean: input.f64(), m2: input.f64() };
  const openFirstTs = input.f64();
  const openLastTs = input.f64();
  const centroidCount = input.uvar();
  const means = new Float64Array(centroidCount);
  const counts = new Float64Array(centroidCount);
  for (let i = 0; i < centroidCount; i++) {
    means[i] = input.f64();
    counts[i] = input.uvar();
  }
  const buffer = new Float64Array(input.uvar());
  for (let i = 0; i < buffer.length; i++) buffer[i] = input.f64();
  return { openMoments, openFirstTs, openLastTs, open: { means, counts, buffer } };
}

function writeWindow(out: ByteWriter, window: SensorWindow): void {
  out.f64(window.windowMs);
  out.uvar(window.buckets);
  out.f64(window.newestTs);
  out.f64(window.openIndex);
  writeOpenBucket(out, window.openMoments, window.openFirstTs, window.openLastTs, window.open.snapshot());
  out.uvar(window.closed.length);
  for (const bucket of window.closed) {
    out.f64(bucket.index);
    out.f64(bucket.moments.n);
    out.f64(bucket.moments.mean);
    out.f64(bucket.moments.m2);
    out.f64(bucket.firstTs);
    out.f64(bucket.lastTs);
    // Packed in memory as they are stored: the first mean as a double, then single-precision steps.
    const { first, steps, counts } = bucket.centroids;
    out.uvar(steps.length);
    for (let i = 0; i < steps.length; i++) {
      if (i === 0) out.f64(first);
      else out.f32(steps[i]);
      out.uvar(counts[i]);
    }
  }
}

/**
 * The profile section: 0 for none, else 1, zone, depth, the open entry (as the window's open
 * bucket) and per slot its entry count and entries (day, moments, first and last time as doubles;
 * centroids as the first mean, then single-precision steps, each with its integer count).
 */
function writeProfile(out: ByteWriter, profile: DailyProfile | null): void {
  out.u8(profile ? 1 : 0);
  if (profile === null) return;
  out.str(profile.zone);
  out.uvar(profile.profileDays);
  out.f64(profile.openDay);
  out.f64(profile.openHour);
  writeOpenBucket(out, profile.openMoments, profile.openFirstTs, profile.openLastTs, profile.open.snapshot());
  // Held as these very bytes (profile-slots.ts).
  profile.closed.write(out);
}

function readProfile(input: ByteReader): ProfileSnapshot | null {
  if (input.u8() !== 1) return null;
  const zone = input.str();
  const profileDays = input.uvar();
  const openDay = input.f64();
  const openHour = input.f64();
  const openBucket = readOpenBucket(input);
  const slots = ProfileSlots.read(input);
  return {
    zone,
    profileDays,
    openDay,
    openHour,
    ...openBucket,
    slots,
  };
}

function writeLifecycle(out: ByteWriter, life: LifecycleState): void {
  out.uvar(life.ring.length);
  for (let i = 0; i < life.ring.length; i++) out.u8(life.ring[i]);
  out.uvar(life.ringPos);
  out.uvar(life.ringFlagged);
  out.f64(life.pendingSinceTs);
  const active = life.active;
  out.u8(active ? 1 : 0);
  if (active) {
    out.str(active.id);
    out.u8(SEVERITIES.indexOf(active.severity));
    out.uvar(active.reasons.length);
    for (const reason of active.reasons) out.str(reason);
    out.f64(active.raisedTs);
    out.uvar(active.flaggedReadings);
    out.uvar(active.clearRun);
    out.f64(active.clearSinceTs);
    out.uvar(active.easeRun);
  }
}

/**
 * Decode a sensor's state. When the sensor's window or bucket count changed in the config since
 * the state was written, the baseline is restarted (it cannot be re-bucketed) while the lifetime
 * count and any raised alert are kept. Likewise a changed raiseWindow restarts the debounce ring.
 *
 * @throws StreamfenceError STATE_CORRUPT (not a state, trailing bytes, unknown reason) or
 *   STATE_VERSION (written by a build with another encoding).
 */
export function decodeSensorState(
  bytes: Uint8Array,
  resolve: (sensor: string) => SensorSettings,
): SensorState {
  try {
    const input = new ByteReader(bytes);
    if (input.u8() !== MAGIC_0 || input.u8() !== MAGIC_1)
      throw new StreamfenceError('STATE_CORRUPT', 'not a streamfence sensor state');
    const version = input.u8();
    if (!READABLE_VERSIONS.includes(version)) {
      throw new StreamfenceError(
        'STATE_VERSION',
        `sensor state version ${version} is not supported by this build (it reads versions ${READABLE_VERSIONS.join(', ')}); run the build that wrote it, or delete the state to start the sensor afresh`,
      );
    }
    const sensor = input.str();
    const settings = resolve(sensor);
    const seen = input.uvar();
    const lastValue = input.f64();
    const stuckRun = input.uvar();
    const window = SensorWindow.restore(settings.window, settings.buckets, readWindow(input));
    const state = new SensorState(sensor, settings, window);
    state.seen = seen;
    state.lastValue = lastValue;
    state.stuckRun = stuckRun;
    readLifecycle(input, state.life, settings, sensor, version, window.newestTs);
    if (version >= 4) {
      state.doubtfulRun = input.uvar();
      state.qualityAlert = readCondition(input);
    }
    if (version >= 5) {
      state.newestValue = input.f64();
      state.staleAlert = readCondition(input);
    } else state.newestValue = lastValue;
    if (version >= PROFILE_VERSION) {
      const saved = readProfile(input);
      // A profile written under another zone or depth restarts (DailyProfile.restore); one
      // written while the sensor was unprofiled, or for a sensor no longer profiled, is dropped.
      if (saved !== null && state.profile !== null)
        state.profile = DailyProfile.restore(settings.timeZone, settings.profileDays, saved);
    }
    if (!input.done)
      throw new StreamfenceError('STATE_CORRUPT', `sensor state for "${sensor}" has trailing bytes`);
    return state;
  } catch (error) {
    if (error instanceof StreamfenceError) throw error;
    throw new StreamfenceError(
      'STATE_CORRUPT',
      `sensor state could not be decoded: ${(error as Error).message}`,
    );
  }
}

function readWindow(input: ByteReader): WindowSnapshot {
  const windowMs = input.f64();
  const buckets = input.uvar();
  const newestTs = input.f64();
  const openIndex = input.f64();
  const openBucket = readOpenBucket(input);
  const closedCount = input.uvar();
  const closed: ClosedBucket[] = [];
  for (let bucket = 0; bucket < closedCount; bucket++) closed.push(readClosedBucket(input));
  return {
    windowMs,
    buckets,
    newestTs,
    openIndex,
    ...openBucket,
    closed,
  };
}

function readClosedBucket(input: ByteReader): ClosedBucket {
  const index = input.f64();
  const moments = { n: input.f64(), mean: input.f64(), m2: input.f64() };
  const firstTs = input.f64();
  const lastTs = input.f64();
  const length = input.uvar();
  const store = new ArrayBuffer(length * 8);
  const steps = new Float32Array(store, 0, length);
  const counts = new Uint32Array(store, length * 4, length);
  let first = 0;
  for (let i = 0; i < length; i++) {
    if (i === 0) first = input.f64();
    else steps[i] = input.f32();
    counts[i] = input.uvar();
  }
  return { index, moments, firstTs, lastTs, centroids: { first, steps, counts } };
}

/**
 * Read the lifecycle into `life` (fresh from the settings); a ring of another length is dropped
 * (with its on-delay start). Before DELAY_VERSION there are no start times: see STATE_VERSION.
 */
function readLifecycle(
  input: ByteReader,
  life: LifecycleState,
  settings: SensorSettings,
  sensor: string,
  version: number,
  newestTs: number,
): void {
  const ringLength = input.uvar();
  const ring = new Uint8Array(ringLength);
  for (let i = 0; i < ringLength; i++) ring[i] = input.u8();
  const ringPos = input.uvar();
  const ringFlagged = input.uvar();
  const pendingSinceTs = version >= DELAY_VERSION ? input.f64() : NaN;
  if (ringLength === settings.raiseWindow) {
    life.ring = ring;
    life.ringPos = ringPos;
    life.ringFlagged = ringFlagged;
    life.pendingSinceTs = pendingSinceTs;
  }
  if (input.u8() !== 1) return;
  const id = input.str();
  const severity = SEVERITIES[input.u8()];
  const reasonCount = input.uvar();
  const reasons: Reason[] = [];
  for (let i = 0; i < reasonCount; i++) {
    const reason = input.str();
    if (!isReason(reason))
      throw new StreamfenceError(
        'STATE_CORRUPT',
        `sensor state for "${sensor}" has an unknown reason "${reason}"`,
      );
    reasons.push(reason);
  }
  const raisedTs = input.f64();
  const flaggedReadings = input.uvar();
  const clearRun = input.uvar();
  const clearSinceTs = version >= DELAY_VERSION ? input.f64() : clearRun > 0 ? newestTs : NaN;
  life.active = {
    id,
    severity,
    reasons,
    raisedTs,
    flaggedReadings,
    clearRun,
    clearSinceTs,
    easeRun: input.uvar(),
  };
}
