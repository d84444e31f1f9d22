/**
 * What the board page gets from `GET /api/board` in one response: the alerts, the rate meter, the
 * alert-system health figures, the
 * recent readings of the charted sensors and the two clocks. BoardHub.snapshot() builds it; the
 * page script (services/board/page/browser/board.ts) is type-checked against it.
 */
import type { RateReading } from './rate.js';
import type { BoardAlert } from './store.js';
import type { AlertGroup } from './groups.js';
import type { BoardHealth } from './health.js';

/** One recent reading on a card's chart: [event time (epoch ms), value, 1 if flagged else 0]. */
export type SnapshotPoint = [number, number, number];

/** The board page's whole state in one response (`GET /api/board`). */
export interface BoardSnapshot {
  mode: 'demo' | 'live';
  /** Plant time runs `speed` times the wall clock (1 in live mode). */
  speed: number;
  /** ISO-8601 server wall clock (actions, shelves). */
  wallNow: string;
  /** ISO-8601 plant clock (event time "now": the rate meter and relative times). */
  plantNow: string;
  rate: RateReading;
  /** Alert-system health figures of the last day of plant time, with their verdicts (libs/board/health.ts). */
  health: BoardHealth;
  alerts: BoardAlert[];
  /** Groups of two or more open alerts of one asset (libs/board/groups.ts), first-out first. */
  groups: AlertGroup[];
  /** The grouping rule in force, so the page can say what a group means. */
  grouping: { depth: number | null; globs: readonly string[]; windowMinutes: number };
  /** Recent readings per sensor with an alert that is not cleared. */
  series: Record<string, SnapshotPoint[]>;
  /** Current flagged-reading count of open alerts, by alert id, when the board runs the engine (demo). */
  flaggedNow: Record<string, number>;
  /** The caution (libs/schema/notice.ts); the server adds it. */
  notice?: string;
  /** Whether actions need the board token; the server adds it. */
  tokenRequired?: boolean;
  /**
   * While a live board does not follow its topics yet: what it waits for (the retry line, e.g.
   * "redis 127.0.0.1:6399: connection refused; retrying in 5 s"); null once it does. The server adds it.
   */
  waiting?: string | null;
}
