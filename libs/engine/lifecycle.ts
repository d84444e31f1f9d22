/**
 * Alert lifecycle of one sensor: debounce on the way up (raiseAfter of the last raiseWindow
 * readings flagged, the current one included), hysteresis on the way down (clearAfter
 * consecutive unflagged readings), and `updated` when the severity changes while raised:
 * at once when it worsens, but only after clearAfter readings in a row below the alert's
 * severity when it eases, so a reading hovering at the outer fence cannot flood the operator
 * with warning/critical flips.
 */
import type { SensorSettings } from '../config/settings.js';
import { alertId } from './alert-id.js';
import { severityRank, type AlertState, type Reason, type Severity } from '../schema/vocabulary.js';

export interface ActiveAlert {
  id: string;
  severity: Severity;
  reasons: Reason[];
  raisedTs: number;
  flaggedReadings: number;
  clearRun: number;
  /** Consecutive readings below the alert's severity (unflagged or milder). */
  easeRun: number;
}

export interface LifecycleState {
  /** Ring of the last raiseWindow flags (1 = flagged). */
  ring: Uint8Array;
  ringPos: number;
  ringFlagged: number;
  active: ActiveAlert | null;
}

export type Transition = AlertState | null;

export function newLifecycle(s: SensorSettings): LifecycleState {
  return { ring: new Uint8Array(s.raiseWindow), ringPos: 0, ringFlagged: 0, active: null };
}

/**
 * Advance the lifecycle by one judged reading (`seen` is its lifetime position, part of the id).
 * Returns the transition, if any; the state is updated in place.
 */
export function step(
  st: LifecycleState,
  s: SensorSettings,
  flagged: boolean,
  severity: Severity | null,
  reasons: Reason[],
  sensor: string,
  ts: number,
  seen: number,
): Transition {
  const bit = flagged ? 1 : 0;
  st.ringFlagged += bit - st.ring[st.ringPos];
  st.ring[st.ringPos] = bit;
  st.ringPos = (st.ringPos + 1) % st.ring.length;

  const a = st.active;
  if (a === null) {
    if (flagged && st.ringFlagged >= s.raiseAfter) {
      st.active = {
        id: alertId(sensor, ts, seen),
        severity: severity!,
        reasons,
        raisedTs: ts,
        flaggedReadings: st.ringFlagged,
        clearRun: 0,
        easeRun: 0,
      };
      return 'raised';
    }
    return null;
  }
  if (flagged) {
    a.clearRun = 0;
    a.flaggedReadings += 1;
    const worse = severityRank(severity) > severityRank(a.severity);
    const milder = severityRank(severity) < severityRank(a.severity);
    a.easeRun = milder ? a.easeRun + 1 : 0;
    if (worse || (milder && a.easeRun >= s.clearAfter)) {
      a.severity = severity!;
      a.reasons = reasons;
      a.easeRun = 0;
      return 'updated';
    }
    if (!milder) a.reasons = reasons;
    return null;
  }
  a.easeRun += 1;
  a.clearRun += 1;
  if (a.clearRun >= s.clearAfter) {
    // Forget the debounce history so flags from before the clear cannot re-raise at once.
    st.ring.fill(0);
    st.ringFlagged = 0;
    st.active = null;
    return 'cleared';
  }
  return null;
}
