/**
 * A fixed, plausible baseline for hand-made alert events in board and terminal-view tests
 * (values invented: Q1 1, median 2, Q3 3, so fences -2..6 and outer fences -5..9).
 */
import type { AlertBaseline } from '../../libs/schema/alert-event.js';

export const FIXTURE_BASELINE: AlertBaseline = Object.freeze({
  q1: 1,
  median: 2,
  q3: 3,
  iqr: 2,
  lowerFence: -2,
  upperFence: 6,
  lowerOuterFence: -5,
  upperOuterFence: 9,
  mean: 2,
  stdDev: 1,
  count: 100,
  from: null,
  to: null,
}) as AlertBaseline;
