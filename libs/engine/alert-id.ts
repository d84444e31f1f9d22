/**
 * Alert ids are a pure function of the sensor and the raising reading (its event time and its
 * position in the sensor's lifetime), so replays, live runs and restarts give the same id.
 */
import { createHash } from 'node:crypto';

/**
 * The id of an alert raised by the `seen`-th reading of `sensor`, at event time `ts`: 24 hex
 * characters of SHA-256. `kind` tells a sensor condition's alert (e.g. "bad_quality") from a
 * judged reading's (none), so the two can never share an id.
 */
export function alertId(sensor: string, ts: number, seen: number, kind?: string): string {
  const key =
    kind === undefined
      ? `${sensor}\u0000${ts}\u0000${seen}`
      : `${sensor}\u0000${ts}\u0000${seen}\u0000${kind}`;
  return createHash('sha256').update(key).digest('hex').slice(0, 24);
}
