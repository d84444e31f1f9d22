/**
 * The detection engine: one instance judges a stream of readings, keeping per-sensor state in
 * memory. Pure and deterministic: the same readings in the same order give the same events,
 * whether in a replay, a live run or after a restore from encoded state.
 */
import { SettingsResolver, type EngineConfig } from '../config/config.js';
import { formatDuration } from '../config/duration.js';
import type { SensorSettings } from '../config/settings.js';
import type { AlertEvent } from '../schema/alert-event.js';
import type { AlertState, Reason, Severity } from '../schema/vocabulary.js';
import { NOTICE } from '../schema/notice.js';
import { fencesOf, judge, robustZ, zScore, type Verdict } from './judge.js';
import { step } from './lifecycle.js';
import { alertMessage } from './alert-wording.js';
import type { Reading } from './reading.js';
import type { SensorBudget } from './sensor-budget.js';
import { decodeSensorState, encodeSensorState, SensorState } from './sensor-state.js';

export const ENGINE_VERSION = '1.0.0';

export interface EngineCounters {
  readings: number;
  late: number;
  evaluated: number;
  flagged: { fence: number; outerFence: number; z: number; any: number };
  alerts: { raised: number; updated: number; cleared: number };
}

const NO_EVENTS: readonly AlertEvent[] = Object.freeze([]);

export type ProcessOutcome =
  | { accepted: true; verdict: Verdict; events: readonly AlertEvent[] }
  | { accepted: false; reason: 'late' | 'sensor_limit'; detail: string; events: readonly AlertEvent[] };

export function newCounters(): EngineCounters {
  return {
    readings: 0,
    late: 0,
    evaluated: 0,
    flagged: { fence: 0, outerFence: 0, z: 0, any: 0 },
    alerts: { raised: 0, updated: 0, cleared: 0 },
  };
}

const iso = (ts: number): string => new Date(ts).toISOString();

export class Engine {
  readonly resolver: SettingsResolver;
  private readonly states = new Map<string, SensorState>();
  readonly counters: EngineCounters = newCounters();
  /** Newest event time accepted by this engine: the clock idle sensors are measured against. */
  private watermark = -Infinity;
  /** Watermark of the last idle sweep (a full budget sweeps again only once time has moved on). */
  private sweptAt = -Infinity;
  /** Sensors evicted since the last takeEvicted() (the monitor deletes them from Redis). */
  private evicted: string[] = [];
  /** Lifetime count of evicted sensors. */
  evictedTotal = 0;

  constructor(
    readonly config: EngineConfig,
    /** Shared cap on sensors with state; none = unbounded (tests, tools). */
    readonly budget: SensorBudget | null = null,
  ) {
    this.resolver = new SettingsResolver(config);
  }

  settingsFor(sensor: string): SensorSettings {
    return this.resolver.resolve(sensor);
  }

  /** Judge one validated reading and advance its sensor's state. */
  process(r: Reading): ProcessOutcome {
    let st = this.states.get(r.sensor);
    if (st === undefined) {
      if (!this.admit()) {
        return {
          accepted: false,
          reason: 'sensor_limit',
          detail: `sensor "${r.sensor}" is new, and state is already held for the limit of ${this.budget!.limit} sensors (raise --max-sensors, or find the producer that puts changing values into sensor ids)`,
          events: NO_EVENTS,
        };
      }
      st = new SensorState(r.sensor, this.resolver.resolve(r.sensor));
      this.states.set(r.sensor, st);
    }
    const s = st.settings;
    const w = st.window;
    if (w.isLate(r.ts)) {
      this.counters.late++;
      return {
        accepted: false,
        reason: 'late',
        detail: `reading at ${iso(r.ts)} is older than the ${formatDuration(s.window)} window before the sensor's newest reading ${iso(w.newestTs)}`,
        events: NO_EVENTS,
      };
    }
    w.advance(r.ts);
    if (r.ts > this.watermark) this.watermark = r.ts;
    const b = w.baseline();
    if (b !== st.fencesFor) {
      st.fencesFor = b;
      st.fences = b === null ? null : fencesOf(b, s);
    }
    if (r.value === st.lastValue) st.stuckRun++;
    else {
      st.stuckRun = 1;
      st.lastValue = r.value;
    }
    st.seen++;
    const c = this.counters;
    c.readings++;

    const v = judge(r.value, s, b, st.fences, st.stuckRun);
    if (v.evaluated) c.evaluated++;
    if (v.flagged || v.fenceHit || v.zHit) {
      if (v.fenceHit) c.flagged.fence++;
      if (v.outerHit) c.flagged.outerFence++;
      if (v.zHit) c.flagged.z++;
      if (v.flagged) c.flagged.any++;
    }

    const life = st.life;
    const before = life.active;
    const t = step(life, s, v.flagged, v.severity, v.reasons, r.sensor, r.ts, st.seen);

    // Readings that raise, continue or clear an alert feed the baseline only when configured to.
    if (s.learnWhileRaised || (before === null && life.active === null)) w.add(r.ts, r.value);

    if (t === null) return { accepted: true, verdict: v, events: NO_EVENTS };
    c.alerts[t]++;
    const alert = t === 'cleared' ? before! : life.active!;
    return { accepted: true, verdict: v, events: [this.makeEvent(st, r, t, alert)] };
  }

  private makeEvent(
    st: SensorState,
    r: Reading,
    state: AlertState,
    a: {
      id: string;
      severity: Severity;
      reasons: Reason[];
      raisedTs: number;
      flaggedReadings: number;
    },
  ): AlertEvent {
    const b = st.window.baseline();
    const f = st.fences;
    const warm = b !== null;
    const body = {
      sensor: st.sensor,
      state,
      severity: a.severity,
      reasons: state === 'cleared' ? [] : [...a.reasons],
      value: r.value,
      ts: iso(r.ts),
      since: iso(a.raisedTs),
      flaggedReadings: a.flaggedReadings,
      baseline: {
        q1: warm ? b.q1 : null,
        median: warm ? b.median : null,
        q3: warm ? b.q3 : null,
        iqr: warm ? b.iqr : null,
        lowerFence: f ? f.lower : null,
        upperFence: f ? f.upper : null,
        lowerOuterFence: f ? f.lowerOuter : null,
        upperOuterFence: f ? f.upperOuter : null,
        mean: warm ? b.mean : null,
        stdDev: warm ? b.stdDev : null,
        count: warm ? b.count : 0,
        from: warm ? iso(b.from) : null,
        to: warm ? iso(b.to) : null,
      },
      z: warm ? zScore(r.value, b) : null,
      robustZ: warm ? robustZ(r.value, b) : null,
      percentileRank: warm ? b.digest.rank(r.value) * 100 : null,
    };
    const message = alertMessage({
      ...body,
      min: st.settings.min,
      max: st.settings.max,
      stuckRun: st.stuckRun,
    });
    return { id: a.id, ...body, message, notice: NOTICE };
  }

  /** Sensors with state in this engine. */
  get sensorCount(): number {
    return this.states.size;
  }

  sensors(): IterableIterator<string> {
    return this.states.keys();
  }

  get(sensor: string): SensorState | undefined {
    return this.states.get(sensor);
  }

  activeAlertCount(): number {
    let n = 0;
    for (const st of this.states.values()) if (st.life.active !== null) n++;
    return n;
  }

  encode(sensor: string): Uint8Array | null {
    const st = this.states.get(sensor);
    return st === undefined ? null : encodeSensorState(st);
  }

  /** Install a sensor's state decoded from `encode` output (replacing what was there). */
  restore(bytes: Uint8Array): SensorState {
    const st = decodeSensorState(bytes, (sensor) => this.resolver.resolve(sensor));
    // Restored state is never refused (that would lose it); it counts against the budget all the same.
    if (!this.states.has(st.sensor)) this.budget?.add(1);
    this.states.set(st.sensor, st);
    if (st.window.newestTs > this.watermark) this.watermark = st.window.newestTs;
    return st;
  }

  /** Drop a sensor's in-memory state (e.g. when its partition is revoked). */
  forget(sensor: string): void {
    if (this.states.delete(sensor)) this.budget?.release();
  }

  /** Give back this engine's share of the budget (its partition is dropped as a whole). */
  releaseAll(): void {
    this.budget?.release(this.states.size);
    this.states.clear();
  }

  /** Room for one more sensor: from the budget, or after evicting this engine's idle sensors. */
  private admit(): boolean {
    if (this.budget === null || this.budget.tryTake()) return true;
    if (this.watermark <= this.sweptAt) return false;
    return this.evictIdle() > 0 && this.budget.tryTake();
  }

  /**
   * Evict sensors with no reading for longer than their window before this engine's newest event
   * time: their window holds nothing, so their baseline would be empty anyway. A sensor with a
   * raised alert is kept (its clear must still be published). Returns how many were evicted; their
   * ids wait in takeEvicted().
   */
  evictIdle(): number {
    this.sweptAt = this.watermark;
    let n = 0;
    for (const [sensor, st] of this.states) {
      if (st.life.active !== null) continue;
      if (this.watermark - st.window.newestTs <= st.settings.window) continue;
      this.states.delete(sensor);
      this.evicted.push(sensor);
      n++;
    }
    this.budget?.release(n);
    this.evictedTotal += n;
    return n;
  }

  /** Ids evicted since the last call. */
  takeEvicted(): string[] {
    const out = this.evicted;
    this.evicted = [];
    return out;
  }
}
