/**
 * Alert lifecycle of one sensor: debounce on the way up (raiseAfter of the last raiseWindow
 * readings flagged, the current one included, held for onDelay of event time), hysteresis on the
 * way down (clearAfter consecutive settled readings spanning clearDelay of event time; a reading
 * is settled when it is back inside the limits by the deadband), and `updated` when the severity
 * changes while raised:
 * at once when it worsens, but only after clearAfter readings in a row below the alert's
 * severity when it eases, so a reading hovering at the outer fence cannot flood the operator
 * with warning/critical flips.
 */
import type { SensorSettings } from '../config/settings.js';
import { alertId } from './alert-id.js';
import type { Verdict } from './judge.js';
import { severityRank, type AlertState, type Reason, type Severity } from '../schema/vocabulary.js';

/** A raised alert of one sensor, as its lifecycle tracks it. */
export interface ActiveAlert {
  id: string;
  severity: Severity;
  reasons: Reason[];
  raisedTs: number;
  flaggedReadings: number;
  clearRun: number;
  /** Event time of the first reading of the current clear run (NaN while clearRun is 0). */
  clearSinceTs: number;
  /** Consecutive readings below the alert's severity (unflagged or milder). */
  easeRun: number;
}

/** The debounce ring and the raised alert, if any, of one sensor (encoded with its state). */
export interface LifecycleState {
  /** Ring of the last raiseWindow flags (1 = flagged). */
  ring: Uint8Array;
  ringPos: number;
  ringFlagged: number;
  /**
   * Event time since when the raise rule has held on every reading, while no alert is raised
   * (NaN when it does not hold): onDelay is measured from it.
   */
  pendingSinceTs: number;
  active: ActiveAlert | null;
}

/** What one reading did to the alert: raised, updated or cleared it, or nothing (null). */
export type Transition = AlertState | null;

/** A sensor's lifecycle before its first reading: empty ring, no alert. */
export function newLifecycle(settings: SensorSettings): LifecycleState {
  return {
    ring: new Uint8Array(settings.raiseWindow),
    ringPos: 0,
    ringFlagged: 0,
    pendingSinceTs: NaN,
    active: null,
  };
}

/** One judged reading, as the lifecycle needs it. */
export interface LifecycleStep {
  sensor: string;
  /** Event time, epoch ms. */
  ts: number;
  /** The reading's lifetime position for its sensor (with sensor and ts, it makes the alert id). */
  seen: number;
  /** The sensor's event time (its newest reading time): what onDelay and clearDelay are measured in. */
  now: number;
  verdict: Pick<Verdict, 'flagged' | 'severity' | 'reasons'>;
  /**
   * For an unflagged reading: whether it is back inside the limits by the deadband (always true
   * without one). An unflagged reading that is not settled holds a raised alert: it neither
   * clears nor counts towards clearing.
   */
  settled: boolean;
}

/**
 * Advance the lifecycle by one judged reading. Returns the transition, if any; `life` is updated
 * in place.
 */
export function step(life: LifecycleState, settings: SensorSettings, reading: LifecycleStep): Transition {
  const { flagged, severity, reasons } = reading.verdict;
  const bit = flagged ? 1 : 0;
  life.ringFlagged += bit - life.ring[life.ringPos];
  life.ring[life.ringPos] = bit;
  life.ringPos = (life.ringPos + 1) % life.ring.length;

  const alert = life.active;
  if (alert === null) {
    if (!flagged || life.ringFlagged < settings.raiseAfter) {
      life.pendingSinceTs = NaN;
      return null;
    }
    if (Number.isNaN(life.pendingSinceTs)) life.pendingSinceTs = reading.now;
    if (reading.now - life.pendingSinceTs >= settings.onDelay) {
      life.pendingSinceTs = NaN;
      life.active = {
        id: alertId(reading.sensor, reading.ts, reading.seen),
        severity: severity!,
        reasons,
        raisedTs: reading.ts,
        flaggedReadings: life.ringFlagged,
        clearRun: 0,
        clearSinceTs: NaN,
        easeRun: 0,
      };
      return 'raised';
    }
    return null;
  }
  if (flagged) {
    alert.clearRun = 0;
    alert.clearSinceTs = NaN;
    alert.flaggedReadings += 1;
    const worse = severityRank(severity) > severityRank(alert.severity);
    const milder = severityRank(severity) < severityRank(alert.severity);
    alert.easeRun = milder ? alert.easeRun + 1 : 0;
    if (worse || (milder && alert.easeRun >= settings.clearAfter)) {
      alert.severity = severity!;
      alert.reasons = reasons;
      alert.easeRun = 0;
      return 'updated';
    }
    if (!milder) alert.reasons = reasons;
    return null;
  }
  alert.easeRun += 1;
  if (!reading.settled) {
    // Inside the limits but not by the deadband: the alert holds, and the clear run starts over.
    alert.clearRun = 0;
    alert.clearSinceTs = NaN;
    return null;
  }
  alert.clearRun += 1;
  if (alert.clearRun === 1) alert.clearSinceTs = reading.now;
  if (alert.clearRun >= settings.clearAfter && reading.now - alert.clearSinceTs >= settings.clearDelay) {
    // Forget the debounce history so flags from before the clear cannot re-raise at once.
    life.ring.fill(0);
    life.ringFlagged = 0;
    life.active = null;
    return 'cleared';
  }
  return null;
}
