/**
 * The plain sentence an operator reads. It states the value against the fences, z, the share
 * of the window below the value and since when, with no jargon beyond those words.
 */
import type { AlertEvent } from '../schema/alert-event.js';
import { REASON_WORDS, type Reason } from '../schema/vocabulary.js';

/**
 * A number as an alert message writes it: 4 significant digits, exponent form when very large or
 * small, `n/a` for none.
 */
export function fmt(x: number | null, digits = 4): string {
  if (x === null || !Number.isFinite(x)) return 'n/a';
  const a = Math.abs(x);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return x.toExponential(2);
  return String(Number(x.toPrecision(digits)));
}

/** The reasons in plain words (REASON_WORDS), comma-separated. */
export function describeReasons(reasons: readonly Reason[]): string {
  return reasons.map((reason) => REASON_WORDS[reason] ?? reason).join(', ');
}

type MessageInput = Omit<AlertEvent, 'message' | 'notice' | 'id'> & {
  min: number | null;
  max: number | null;
  stuckRun: number;
  /** Set when a time-of-day profile judged: "for 03:00-04:00 on the last 7 days". */
  profileSpan?: string | null;
};

/** The plain sentence of an alert event: the value against the fences, z, percentile and since when. */
export function alertMessage(e: MessageInput): string {
  const b = e.baseline;
  const parts: string[] = [];
  if (e.state === 'cleared') {
    parts.push(
      `${e.sensor} is back to normal at ${fmt(e.value)} (${e.ts}); it had been abnormal since ${e.since}`,
    );
    if (b.lowerFence !== null && b.upperFence !== null) {
      const span = e.profileSpan ? ` ${e.profileSpan}` : '';
      parts.push(`normal range ${fmt(b.lowerFence)} to ${fmt(b.upperFence)}${span}`);
    }
    return parts.join('; ') + '.';
  }
  const verb = e.state === 'raised' ? 'reads' : e.severity === 'critical' ? 'worsened to' : 'eased to';
  parts.push(`${e.sensor} ${verb} ${fmt(e.value)}, ${describeReasons(e.reasons)} (${e.severity})`);
  const has = (reason: Reason) => e.reasons.includes(reason);
  if ((has('fence_high') || has('outer_fence_high')) && b.upperFence !== null) {
    parts.push(`${fmt(e.value - b.upperFence)} above the upper fence ${fmt(b.upperFence)}`);
  } else if ((has('fence_low') || has('outer_fence_low')) && b.lowerFence !== null) {
    parts.push(`${fmt(b.lowerFence - e.value)} below the lower fence ${fmt(b.lowerFence)}`);
  } else if (b.lowerFence !== null && b.upperFence !== null && b.iqr !== null && b.iqr > 0) {
    parts.push(`fences ${fmt(b.lowerFence)} to ${fmt(b.upperFence)}`);
  }
  if (has('limit_high') && e.max !== null) parts.push(`physical maximum ${fmt(e.max)}`);
  if (has('limit_low') && e.min !== null) parts.push(`physical minimum ${fmt(e.min)}`);
  if (has('flatline')) parts.push(`the same value ${e.stuckRun} readings in a row`);
  if (e.z !== null) parts.push(`z = ${fmt(e.z, 3)}`);
  if (e.percentileRank !== null) {
    const of = e.profileSpan ? `the readings ${e.profileSpan}` : 'the window';
    parts.push(`${fmt(e.percentileRank, 3)}% of ${of} (${b.count} readings) was lower`);
  }
  if (b.median !== null) parts.push(`median ${fmt(b.median)}`);
  parts.push(`abnormal since ${e.since}`);
  return parts.join('; ') + '.';
}
