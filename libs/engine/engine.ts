/**
 * The detection engine: one instance judges a stream of readings, keeping per-sensor state in
 * memory. Pure and deterministic: the same readings in the same order give the same events,
 * whether in a replay, a live run or after a restore from encoded state.
 */
import { SettingsResolver, type EngineConfig } from '../config/config.js';
import { formatDuration } from '../config/duration.js';
import type { SensorSettings } from '../config/settings.js';
import type { AlertEvent } from '../schema/alert-event.js';
import type { AlertState } from '../schema/vocabulary.js';
import { NOTICE } from '../schema/notice.js';
import { fencesOf, judge, NORMAL_COLD, robustZ, settled, zScore, type Verdict } from './judge.js';
import { step, type ActiveAlert } from './lifecycle.js';
import { alertId } from './alert-id.js';
import { alertMessage, qualityMessage, staleMessage } from './alert-wording.js';
import { DeadlineHeap } from './deadline-heap.js';
import type { DoubtfulQuality, Quality, Reading } from './reading.js';
import { PROFILED_SENSOR_WEIGHT, sensorWeight, type SensorBudget } from './sensor-budget.js';
import { decodeSensorState, encodeSensorState, SensorState, type ConditionAlert } from './sensor-state.js';
import type { ProfileBaseline } from './profile.js';
import { hourSpan } from './local-time.js';
import type { Baseline } from './window.js';

/** Version of the judging semantics, written into replay and tune summaries. */
export const ENGINE_VERSION = '1.0.0';

/** Lifetime counts of one Engine: readings, late refusals, evaluated and flagged readings, alert events. */
export interface EngineCounters {
  /** Readings accepted, of every quality. */
  readings: number;
  /** Accepted readings by quality: only `good` ones are judged and learned. */
  quality: Record<Quality, number>;
  late: number;
  evaluated: number;
  flagged: { fence: number; outerFence: number; z: number; any: number };
  alerts: { raised: number; updated: number; cleared: number };
}

const NO_EVENTS: readonly AlertEvent[] = Object.freeze([]);

/** What one reading did: accepted with its verdict and alert events, or refused (`late`, `sensor_limit`). */
export type ProcessOutcome =
  | {
      accepted: true;
      /** The reading's quality (`good` when it carried none). */
      quality: Quality;
      /** NORMAL_COLD (not evaluated) for a reading that was not judged (quality other than good). */
      verdict: Verdict;
      /** Whether the reading's value went into its sensor's baseline window. */
      learned: boolean;
      events: readonly AlertEvent[];
    }
  | { accepted: false; reason: 'late' | 'sensor_limit'; detail: string; events: readonly AlertEvent[] };

/** Counters at zero. */
export function newCounters(): EngineCounters {
  return {
    readings: 0,
    quality: { good: 0, uncertain: 0, bad: 0 },
    late: 0,
    evaluated: 0,
    flagged: { fence: 0, outerFence: 0, z: 0, any: 0 },
    alerts: { raised: 0, updated: 0, cleared: 0 },
  };
}

const iso = (ts: number): string => new Date(ts).toISOString();

/** "for 03:00-04:00 on the last 7 days" (the zone named when it is not UTC). */
/** Places a held sensor takes in the sensor limit (by whether it holds a profile). */
function weightOf(state: SensorState): number {
  return sensorWeight(state.profile !== null);
}

function profileSpan(profiled: ProfileBaseline, zone: string): string {
  const where = zone === 'UTC' ? '' : ` ${zone} time`;
  return `for ${hourSpan(profiled.hour)}${where} on the last ${profiled.days} days`;
}

/**
 * Event time of one input partition for the silent-sensor rule: the newest reading time seen in
 * it, and the sensors of it queued by the time they fall silent (newest reading + staleAfter).
 */
interface PartitionClock {
  watermark: number;
  silentAt: DeadlineHeap<SensorState>;
}

/**
 * Judges a stream of readings, keeping each sensor's state in memory (one per replay, per
 * partition, per worker).
 */
export class Engine {
  /** Picks each sensor's settings from the config rules. */
  readonly resolver: SettingsResolver;
  private readonly states = new Map<string, SensorState>();
  /** Running totals (readings, rejects, flags, alerts) for summaries and metrics. */
  readonly counters: EngineCounters = newCounters();
  /** Newest event time accepted by this engine: the clock idle sensors are measured against. */
  private watermark = -Infinity;
  /** Watermark of the last idle sweep (a full budget sweeps again only once time has moved on). */
  private sweptAt = -Infinity;
  /** Sensors evicted since the last takeEvicted() (the monitor deletes them from Redis). */
  private evicted: string[] = [];
  /** Lifetime count of evicted sensors. */
  evictedTotal = 0;
  /** Whether any sensor can have a staleAfter (saves the silence check otherwise). */
  private readonly silenceOn: boolean;
  /** Per input partition: its event time and its sensors' silence deadlines. */
  private readonly clocks = new Map<number, PartitionClock>();

  constructor(
    readonly config: EngineConfig,
    /** Shared cap on sensors with state; none = unbounded (tests, tools). */
    readonly budget: SensorBudget | null = null,
  ) {
    this.resolver = new SettingsResolver(config);
    this.silenceOn =
      config.defaults.staleAfter !== null ||
      config.sensors.some(
        (rule) => rule.overrides.staleAfter !== undefined && rule.overrides.staleAfter !== null,
      );
  }

  /** The settings the engine applies to this sensor. */
  settingsFor(sensor: string): SensorSettings {
    return this.resolver.resolve(sensor);
  }

  /**
   * Judge one validated reading and advance its sensor's state. The only path from a reading to
   * alert events: replay, the live monitor, tune workers and the demo all call it.
   *
   * @example
   * const engine = new Engine(validateConfig({ defaults: { window: '1h' } }));
   * const outcome = engine.process({ sensor: 'line-1/pump/temp', ts: Date.parse('2026-03-01T08:00:00Z'), value: 71.4 });
   * if (outcome.accepted) for (const event of outcome.events) publish(event); // raised/updated/cleared
   * else keepRejected(outcome.reason, outcome.detail); // 'late' or 'sensor_limit'
   *
   * `partition` is the input partition the reading came from (a sensor always comes from the
   * same one): the silent-sensor rule measures event time per partition, as a live monitor sees it.
   */
  process(reading: Reading, partition = 0): ProcessOutcome {
    let state = this.states.get(reading.sensor);
    const isNew = state === undefined;
    if (state === undefined) {
      const settings = this.resolver.resolve(reading.sensor);
      if (!this.admit(sensorWeight(settings.profile === 'daily'))) {
        return {
          accepted: false,
          reason: 'sensor_limit',
          detail: `sensor "${reading.sensor}" is new, and state is already held for the limit of ${this.budget!.limit} sensors (a profiled one counts ${PROFILED_SENSOR_WEIGHT}; raise --max-sensors, or find the producer that puts changing values into sensor ids)`,
          events: NO_EVENTS,
        };
      }
      state = new SensorState(reading.sensor, settings);
      this.states.set(reading.sensor, state);
    }
    const settings = state.settings;
    const window = state.window;
    if (window.isLate(reading.ts)) {
      this.counters.late++;
      return {
        accepted: false,
        reason: 'late',
        detail: `reading at ${iso(reading.ts)} is older than the ${formatDuration(settings.window)} window before the sensor's newest reading ${iso(window.newestTs)}`,
        events: NO_EVENTS,
      };
    }
    if (reading.ts >= window.newestTs) state.newestValue = reading.value;
    window.advance(reading.ts);
    if (reading.ts > this.watermark) this.watermark = reading.ts;
    // A profiled sensor is judged by its local hour on previous days once that slot is warm.
    const profile = state.profile;
    const profileSlot = profile === null ? null : profile.advance(reading.ts);
    const profiled = profileSlot === null ? null : profile!.baseline(settings.minSamples);
    const baseline: Baseline | null = profiled ?? window.baseline();
    if (baseline !== state.fencesFor) {
      state.fencesFor = baseline;
      state.fences = baseline === null ? null : fencesOf(baseline, settings);
    }
    // Time moves on with every reading; only good ones are judged and learned.
    const outcome =
      reading.quality !== undefined
        ? this.doubtful(state, reading, reading.quality)
        : this.judged(state, reading, baseline, profiled, profileSlot !== null);
    return this.silenceOn ? this.silence(state, reading, partition, isNew, outcome) : outcome;
  }

  /** A good reading: judged against the baseline, stepped through the lifecycle, maybe learned. */
  private judged(
    state: SensorState,
    reading: Reading,
    baseline: Baseline | null,
    profiled: ProfileBaseline | null,
    learnsProfile: boolean,
  ): ProcessOutcome {
    const settings = state.settings;
    const window = state.window;
    let events: AlertEvent[] | null = null;
    if (state.doubtfulRun > 0) {
      state.doubtfulRun = 0;
      const alert = state.qualityAlert;
      if (alert !== null) {
        state.qualityAlert = null;
        this.counters.alerts.cleared++;
        events = [this.conditionEvent(state, reading, 'cleared', alert, 'bad_quality')];
      }
    }
    this.counters.quality.good++;
    if (reading.value === state.lastValue) state.stuckRun++;
    else {
      state.stuckRun = 1;
      state.lastValue = reading.value;
    }
    state.seen++;
    const counters = this.counters;
    counters.readings++;

    const verdict = judge(reading.value, settings, baseline, state.fences, state.stuckRun);
    if (verdict.evaluated) counters.evaluated++;
    if (verdict.flagged || verdict.fenceHit || verdict.zHit) {
      if (verdict.fenceHit) counters.flagged.fence++;
      if (verdict.outerHit) counters.flagged.outerFence++;
      if (verdict.zHit) counters.flagged.z++;
      if (verdict.flagged) counters.flagged.any++;
    }

    const life = state.life;
    const before = life.active;
    const transition = step(life, settings, {
      sensor: reading.sensor,
      ts: reading.ts,
      seen: state.seen,
      now: window.newestTs,
      verdict,
      // Only an unflagged reading under a raised alert needs the deadband check.
      settled: before === null || verdict.flagged || settled(reading.value, settings, baseline, state.fences),
    });

    // Readings that raise, continue or clear an alert feed the baseline only when configured to.
    const learned = settings.learnWhileRaised || (before === null && life.active === null);
    if (learned) {
      window.add(reading.ts, reading.value);
      if (learnsProfile) state.profile!.add(reading.ts, reading.value);
    }

    if (transition !== null) {
      counters.alerts[transition]++;
      const alert = transition === 'cleared' ? before! : life.active!;
      const judgedBy = { baseline, profiled, zone: settings.timeZone };
      (events ??= []).push(this.makeEvent(state, reading, transition, alert, judgedBy));
    }
    return { accepted: true, quality: 'good', verdict, learned, events: events ?? NO_EVENTS };
  }

  /**
   * A reading of quality other than good: counted, neither judged nor learned. `badQualityAfter`
   * of them in a row raise the sensor's bad_quality alert (the next good reading clears it).
   */
  private doubtful(state: SensorState, reading: Reading, quality: DoubtfulQuality): ProcessOutcome {
    state.seen++;
    const counters = this.counters;
    counters.readings++;
    counters.quality[quality]++;
    state.doubtfulRun++;
    let events: readonly AlertEvent[] = NO_EVENTS;
    const alert = state.qualityAlert;
    const after = state.settings.badQualityAfter;
    if (alert !== null) alert.readings++;
    else if (after > 0 && state.doubtfulRun >= after) {
      const raised: ConditionAlert = {
        id: alertId(reading.sensor, reading.ts, state.seen, 'bad_quality'),
        raisedTs: reading.ts,
        readings: state.doubtfulRun,
      };
      state.qualityAlert = raised;
      counters.alerts.raised++;
      events = [this.conditionEvent(state, reading, 'raised', raised, 'bad_quality', quality)];
    }
    return { accepted: true, quality, verdict: NORMAL_COLD, learned: false, events };
  }

  private clockOf(partition: number): PartitionClock {
    let clock = this.clocks.get(partition);
    if (clock === undefined) {
      clock = { watermark: -Infinity, silentAt: new DeadlineHeap<SensorState>() };
      this.clocks.set(partition, clock);
    }
    return clock;
  }

  /**
   * The silent-sensor rule, after a reading was taken: the reading's own sensor clears its stale
   * alert (it reports again), and when the reading moves its partition's event time on, every
   * sensor of the partition now silent for more than its staleAfter raises one. The order of
   * several raised at once is fixed (by the time they fell silent, then sensor id), so a restore
   * gives the same events as never stopping.
   */
  private silence(
    state: SensorState,
    reading: Reading,
    partition: number,
    isNew: boolean,
    outcome: ProcessOutcome,
  ): ProcessOutcome {
    const clock = this.clockOf(partition);
    const advanced = reading.ts > clock.watermark;
    if (advanced) clock.watermark = reading.ts;
    const after = state.settings.staleAfter;
    let cleared: AlertEvent | null = null;
    const stale = state.staleAlert;
    if (stale !== null && (after === null || clock.watermark - state.window.newestTs <= after)) {
      state.staleAlert = null;
      this.counters.alerts.cleared++;
      cleared = this.staleEvent(state, 'cleared', stale, reading.ts, reading.value);
      if (after !== null) clock.silentAt.push(state.window.newestTs + after, state);
    } else if (isNew && after !== null) clock.silentAt.push(state.window.newestTs + after, state);
    const raised = advanced ? this.raiseSilent(clock) : NO_EVENTS;
    if (cleared === null && raised.length === 0) return outcome;
    const events = cleared === null ? [] : [cleared];
    events.push(...outcome.events, ...raised);
    return { ...outcome, events };
  }

  /**
   * Raise a stale alert for each sensor of the partition silent for more than its staleAfter.
   * Queued deadlines can be older than the sensor's real one (it has read since): those are
   * queued again at the real one, so each sensor is in the queue once.
   */
  private raiseSilent(clock: PartitionClock): readonly AlertEvent[] {
    const due: { at: number; state: SensorState }[] = [];
    const queue = clock.silentAt;
    for (let next = queue.peek(); next !== undefined && next.at < clock.watermark; next = queue.peek()) {
      queue.pop();
      const state = next.item;
      const after = state.settings.staleAfter;
      // Gone (evicted, forgotten, replaced by a restore) or already stale: not queued any more.
      if (this.states.get(state.sensor) !== state || state.staleAlert !== null || after === null) continue;
      const at = state.window.newestTs + after;
      if (at < clock.watermark) due.push({ at, state });
      else queue.push(at, state);
    }
    if (due.length === 0) return NO_EVENTS;
    due.sort(
      (a, b) =>
        a.at - b.at || (a.state.sensor < b.state.sensor ? -1 : a.state.sensor > b.state.sensor ? 1 : 0),
    );
    return due.map(({ state }) => {
      const alert: ConditionAlert = {
        id: alertId(state.sensor, clock.watermark, state.seen, 'stale'),
        raisedTs: clock.watermark,
        readings: 0,
      };
      state.staleAlert = alert;
      this.counters.alerts.raised++;
      return this.staleEvent(state, 'raised', alert, clock.watermark, state.newestValue);
    });
  }

  /** An event of a stale alert: raised with the newest value it had, cleared with the reading that ends it. */
  private staleEvent(
    state: SensorState,
    transition: 'raised' | 'cleared',
    alert: ConditionAlert,
    ts: number,
    value: number,
  ): AlertEvent {
    const lastTs = state.window.newestTs;
    const body = {
      sensor: state.sensor,
      state: transition,
      severity: 'warning' as const,
      reasons: transition === 'cleared' ? [] : ['stale' as const],
      value,
      ts: iso(ts),
      since: iso(alert.raisedTs),
      flaggedReadings: 0,
      baseline: this.baselineOf(state),
      z: null,
      robustZ: null,
      percentileRank: null,
    };
    const message = staleMessage({ ...body, silentMs: ts - lastTs, lastTs: iso(lastTs) });
    return { id: alert.id, ...body, message, notice: NOTICE };
  }

  private makeEvent(
    state: SensorState,
    reading: Reading,
    transition: AlertState,
    alert: ActiveAlert,
    judgedBy: { baseline: Baseline | null; profiled: ProfileBaseline | null; zone: string },
  ): AlertEvent {
    const baseline = judgedBy.baseline;
    const warm = baseline !== null;
    const body = {
      sensor: state.sensor,
      state: transition,
      severity: alert.severity,
      reasons: transition === 'cleared' ? [] : [...alert.reasons],
      value: reading.value,
      ts: iso(reading.ts),
      since: iso(alert.raisedTs),
      flaggedReadings: alert.flaggedReadings,
      baseline: this.baselineOf(state, baseline),
      z: warm ? zScore(reading.value, baseline) : null,
      robustZ: warm ? robustZ(reading.value, baseline) : null,
      percentileRank: warm ? baseline.digest.rank(reading.value) * 100 : null,
    };
    const message = alertMessage({
      ...body,
      min: state.settings.min,
      max: state.settings.max,
      stuckRun: state.stuckRun,
      profileSpan: judgedBy.profiled === null ? null : profileSpan(judgedBy.profiled, judgedBy.zone),
    });
    return { id: alert.id, ...body, message, notice: NOTICE };
  }

  /** The baseline part of an event: the sensor's baseline and fences now (nulls before warm-up). */
  private baselineOf(
    state: SensorState,
    baseline: Baseline | null = state.window.baseline(),
  ): AlertEvent['baseline'] {
    // The cached fences are for the baseline of the sensor's last reading (none after a restore).
    const fences =
      baseline === null
        ? null
        : state.fencesFor === baseline
          ? state.fences
          : fencesOf(baseline, state.settings);
    const warm = baseline !== null;
    return {
      q1: warm ? baseline.q1 : null,
      median: warm ? baseline.median : null,
      q3: warm ? baseline.q3 : null,
      iqr: warm ? baseline.iqr : null,
      lowerFence: fences ? fences.lower : null,
      upperFence: fences ? fences.upper : null,
      lowerOuterFence: fences ? fences.lowerOuter : null,
      upperOuterFence: fences ? fences.upperOuter : null,
      mean: warm ? baseline.mean : null,
      stdDev: warm ? baseline.stdDev : null,
      count: warm ? baseline.count : 0,
      from: warm ? iso(baseline.from) : null,
      to: warm ? iso(baseline.to) : null,
    };
  }

  /**
   * An event of a sensor condition's alert (bad_quality). The value is the reading's; z and the
   * percentile rank are null, because the reading was not judged.
   */
  private conditionEvent(
    state: SensorState,
    reading: Reading,
    transition: 'raised' | 'cleared',
    alert: ConditionAlert,
    reason: 'bad_quality',
    quality?: DoubtfulQuality,
  ): AlertEvent {
    const body = {
      sensor: state.sensor,
      state: transition,
      severity: 'warning' as const,
      reasons: transition === 'cleared' ? [] : [reason],
      value: reading.value,
      ts: iso(reading.ts),
      since: iso(alert.raisedTs),
      flaggedReadings: alert.readings,
      baseline: this.baselineOf(state),
      z: null,
      robustZ: null,
      percentileRank: null,
    };
    const message = qualityMessage({ ...body, quality: quality ?? 'good', run: state.doubtfulRun });
    return { id: alert.id, ...body, message, notice: NOTICE };
  }

  /** Sensors with state in this engine. */
  get sensorCount(): number {
    return this.states.size;
  }

  /** Ids of the sensors the engine holds state for. */
  sensors(): IterableIterator<string> {
    return this.states.keys();
  }

  /** The sensor's state, or undefined when the engine has none. */
  get(sensor: string): SensorState | undefined {
    return this.states.get(sensor);
  }

  /** Raised alerts in this engine: reading alerts and sensor-condition alerts alike. */
  activeAlertCount(): number {
    let active = 0;
    for (const state of this.states.values()) {
      if (state.life.active !== null) active++;
      if (state.qualityAlert !== null) active++;
      if (state.staleAlert !== null) active++;
    }
    return active;
  }

  /** The sensor's state as bytes for the checkpoint store (see sensor-state.ts), or null when unknown. */
  encode(sensor: string): Uint8Array | null {
    const state = this.states.get(sensor);
    return state === undefined ? null : encodeSensorState(state);
  }

  /**
   * Install a sensor's state decoded from `encode` output (replacing what was there), from input
   * `partition` (as process() was told). Its partition's event time is the newest of its sensors'.
   */
  restore(bytes: Uint8Array, partition = 0): SensorState {
    const state = decodeSensorState(bytes, (sensor) => this.resolver.resolve(sensor));
    // Restored state is never refused (that would lose it); it counts against the budget all the same.
    const replaced = this.states.get(state.sensor);
    if (replaced !== undefined) this.budget?.release(weightOf(replaced));
    this.budget?.add(weightOf(state));
    this.states.set(state.sensor, state);
    const newest = state.window.newestTs;
    if (newest > this.watermark) this.watermark = newest;
    if (this.silenceOn) {
      const clock = this.clockOf(partition);
      if (newest > clock.watermark) clock.watermark = newest;
      const after = state.settings.staleAfter;
      if (after !== null && state.staleAlert === null) clock.silentAt.push(newest + after, state);
    }
    return state;
  }

  /** Drop a sensor's in-memory state (e.g. when its partition is revoked). */
  forget(sensor: string): void {
    const state = this.states.get(sensor);
    if (state === undefined) return;
    this.states.delete(sensor);
    this.budget?.release(weightOf(state));
  }

  /** Give back this engine's share of the budget (its partition is dropped as a whole). */
  releaseAll(): void {
    let places = 0;
    for (const state of this.states.values()) places += weightOf(state);
    this.budget?.release(places);
    this.states.clear();
    this.clocks.clear();
  }

  /** Room for one more sensor of `weight`: from the budget, or after evicting this engine's idle sensors. */
  private admit(weight: number): boolean {
    if (this.budget === null || this.budget.tryTake(weight)) return true;
    if (this.watermark <= this.sweptAt) return false;
    return this.evictIdle() > 0 && this.budget.tryTake(weight);
  }

  /**
   * Evict sensors with no reading for longer than their window before this engine's newest event
   * time: their window holds nothing, so their baseline would be empty anyway. A sensor with any
   * raised alert is kept (its clear must still be published). Returns how many were evicted; their
   * ids wait in takeEvicted().
   */
  evictIdle(): number {
    this.sweptAt = this.watermark;
    let evicted = 0;
    let places = 0;
    for (const [sensor, state] of this.states) {
      if (state.life.active !== null || state.qualityAlert !== null || state.staleAlert !== null) continue;
      // A profiled sensor keeps its days of history (a silent day must not wipe its profile).
      const keep =
        state.profile === null
          ? state.settings.window
          : Math.max(state.settings.window, state.settings.profileDays * 86_400_000);
      if (this.watermark - state.window.newestTs <= keep) continue;
      this.states.delete(sensor);
      this.evicted.push(sensor);
      evicted++;
      places += weightOf(state);
    }
    this.budget?.release(places);
    this.evictedTotal += evicted;
    return evicted;
  }

  /** Ids evicted since the last call. */
  takeEvicted(): string[] {
    const out = this.evicted;
    this.evicted = [];
    return out;
  }
}
