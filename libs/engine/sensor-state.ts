/** Everything the engine knows about one sensor, and its compact versioned encoding. */
import { StreamfenceError } from '../errors/index.js';
import type { SensorSettings } from '../config/settings.js';
import { OpenDigest } from '../stats/digest.js';
import { ByteReader, ByteWriter } from './bytes.js';
import type { Fences } from './judge.js';
import { isReason, SEVERITIES, type Reason } from '../schema/vocabulary.js';
import { newLifecycle, type LifecycleState } from './lifecycle.js';
import { openBins, SKETCH } from './sketch-params.js';
import { SensorWindow, type Baseline } from './window.js';

export class SensorState {
  /** Lifetime accepted readings. */
  seen = 0;
  lastValue = NaN;
  /** Length of the current run of identical values. */
  stuckRun = 0;
  readonly window: SensorWindow;
  life: LifecycleState;
  /** Fences cached for the baseline object they were computed from. */
  fencesFor: Baseline | null = null;
  fences: Fences | null = null;

  constructor(
    readonly sensor: string,
    readonly settings: SensorSettings,
  ) {
    this.window = new SensorWindow(settings.window, settings.buckets);
    this.life = newLifecycle(settings);
  }
}

const MAGIC_0 = 0x53; // 'S'
const MAGIC_1 = 0x46; // 'F'
export const STATE_VERSION = 3;

// Reused across calls: encoding is synchronous, and checkpoints encode thousands of sensors at once.
const writer = new ByteWriter();

export function encodeSensorState(st: SensorState): Uint8Array {
  const w = writer;
  w.reset();
  w.u8(MAGIC_0);
  w.u8(MAGIC_1);
  w.u8(STATE_VERSION);
  w.str(st.sensor);
  w.uvar(st.seen);
  w.f64(st.lastValue);
  w.uvar(st.stuckRun);

  const win = st.window;
  w.f64(win.windowMs);
  w.uvar(win.buckets);
  w.f64(win.newestTs);
  w.f64(win.openIndex);
  w.f64(win.openMoments.n);
  w.f64(win.openMoments.mean);
  w.f64(win.openMoments.m2);
  w.f64(win.openFirstTs);
  w.f64(win.openLastTs);
  const snap = win.open.snapshot();
  w.uvar(snap.means.length);
  for (let i = 0; i < snap.means.length; i++) {
    w.f64(snap.means[i]);
    w.uvar(snap.counts[i]);
  }
  w.uvar(snap.buffer.length);
  for (let i = 0; i < snap.buffer.length; i++) w.f64(snap.buffer[i]);
  w.uvar(win.closed.length);
  for (const b of win.closed) {
    w.f64(b.index);
    w.f64(b.moments.n);
    w.f64(b.moments.mean);
    w.f64(b.moments.m2);
    w.f64(b.firstTs);
    w.f64(b.lastTs);
    // Closed means were rounded by roundForStorage: the first as a double, then single-precision steps.
    const { means, counts } = b.centroids;
    w.uvar(means.length);
    for (let i = 0; i < means.length; i++) {
      if (i === 0) w.f64(means[0]);
      else w.f32(means[i] - means[i - 1]);
      w.uvar(counts[i]);
    }
  }

  const life = st.life;
  w.uvar(life.ring.length);
  for (let i = 0; i < life.ring.length; i++) w.u8(life.ring[i]);
  w.uvar(life.ringPos);
  w.uvar(life.ringFlagged);
  const a = life.active;
  w.u8(a ? 1 : 0);
  if (a) {
    w.str(a.id);
    w.u8(SEVERITIES.indexOf(a.severity));
    w.uvar(a.reasons.length);
    for (const r of a.reasons) w.str(r);
    w.f64(a.raisedTs);
    w.uvar(a.flaggedReadings);
    w.uvar(a.clearRun);
    w.uvar(a.easeRun);
  }
  return w.bytes();
}

/**
 * Decode a sensor's state. When the sensor's window or bucket count changed in the config since
 * the state was written, the baseline is restarted (it cannot be re-bucketed) while the lifetime
 * count and any raised alert are kept. Likewise a changed raiseWindow restarts the debounce ring.
 */
export function decodeSensorState(
  bytes: Uint8Array,
  resolve: (sensor: string) => SensorSettings,
): SensorState {
  try {
    const r = new ByteReader(bytes);
    if (r.u8() !== MAGIC_0 || r.u8() !== MAGIC_1)
      throw new StreamfenceError('STATE_CORRUPT', 'not a streamfence sensor state');
    const version = r.u8();
    if (version !== STATE_VERSION) {
      throw new StreamfenceError(
        'STATE_VERSION',
        `sensor state version ${version} is not supported by this build (expects ${STATE_VERSION})`,
      );
    }
    const sensor = r.str();
    const settings = resolve(sensor);
    const st = new SensorState(sensor, settings);
    st.seen = r.uvar();
    st.lastValue = r.f64();
    st.stuckRun = r.uvar();

    const windowMs = r.f64();
    const buckets = r.uvar();
    const win = st.window;
    const sameShape = windowMs === settings.window && buckets === settings.buckets;
    const newestTs = r.f64();
    const openIndex = r.f64();
    const om = { n: r.f64(), mean: r.f64(), m2: r.f64() };
    const openFirstTs = r.f64();
    const openLastTs = r.f64();
    const size = r.uvar();
    const snap = {
      means: new Float64Array(size),
      counts: new Float64Array(size),
      buffer: new Float64Array(0),
    };
    for (let i = 0; i < size; i++) {
      snap.means[i] = r.f64();
      snap.counts[i] = r.uvar();
    }
    const buffered = r.uvar();
    snap.buffer = new Float64Array(buffered);
    for (let i = 0; i < buffered; i++) snap.buffer[i] = r.f64();
    const closedCount = r.uvar();
    const closed = [];
    for (let k = 0; k < closedCount; k++) {
      const index = r.f64();
      const moments = { n: r.f64(), mean: r.f64(), m2: r.f64() };
      const firstTs = r.f64();
      const lastTs = r.f64();
      const len = r.uvar();
      const means = new Float64Array(len);
      const counts = new Float64Array(len);
      for (let i = 0; i < len; i++) {
        means[i] = i === 0 ? r.f64() : means[i - 1] + r.f32();
        counts[i] = r.uvar();
      }
      closed.push({ index, moments, firstTs, lastTs, centroids: { means, counts } });
    }
    if (sameShape) {
      win.newestTs = newestTs;
      win.openIndex = openIndex;
      win.openMoments = om;
      win.openFirstTs = openFirstTs;
      win.openLastTs = openLastTs;
      win.open = OpenDigest.restore(snap, openBins(buckets), SKETCH.openCap);
      win.closed = closed;
      win.rebuildBaseline();
    } else {
      win.newestTs = newestTs;
    }

    const ringLen = r.uvar();
    const ring = new Uint8Array(ringLen);
    for (let i = 0; i < ringLen; i++) ring[i] = r.u8();
    const ringPos = r.uvar();
    const ringFlagged = r.uvar();
    if (ringLen === settings.raiseWindow) {
      st.life.ring = ring;
      st.life.ringPos = ringPos;
      st.life.ringFlagged = ringFlagged;
    }
    if (r.u8() === 1) {
      const id = r.str();
      const severity = SEVERITIES[r.u8()];
      const reasonCount = r.uvar();
      const reasons: Reason[] = [];
      for (let i = 0; i < reasonCount; i++) {
        const reason = r.str();
        if (!isReason(reason))
          throw new StreamfenceError(
            'STATE_CORRUPT',
            `sensor state for "${sensor}" has an unknown reason "${reason}"`,
          );
        reasons.push(reason);
      }
      st.life.active = {
        id,
        severity,
        reasons,
        raisedTs: r.f64(),
        flaggedReadings: r.uvar(),
        clearRun: r.uvar(),
        easeRun: r.uvar(),
      };
    }
    if (!r.done)
      throw new StreamfenceError('STATE_CORRUPT', `sensor state for "${sensor}" has trailing bytes`);
    return st;
  } catch (e) {
    if (e instanceof StreamfenceError) throw e;
    throw new StreamfenceError('STATE_CORRUPT', `sensor state could not be decoded: ${(e as Error).message}`);
  }
}
