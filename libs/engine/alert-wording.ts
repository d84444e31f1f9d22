/**
 * The plain sentence an operator reads. It states the value against the fences, z, the share
 * of the window below the value and since when, with no jargon beyond those words.
 */
import type { AlertEvent } from '../schema/alert-event.js';
import { REASON_WORDS, type Reason } from '../schema/vocabulary.js';

export function fmt(x: number | null, digits = 4): string {
  if (x === null || !Number.isFinite(x)) return 'n/a';
  const a = Math.abs(x);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return x.toExponential(2);
  return String(Number(x.toPrecision(digits)));
}

export function describeReasons(reasons: readonly Reason[]): string {
  return reasons.map((reason) => REASON_WORDS[reason] ?? reason).join(', ');
}

type MessageInput = Omit<AlertEvent, 'message' | 'notice' | 'id'> & {
  min: number | null;
  max: number | null;
  stuckRun: number;
};

export function alertMessage(e: MessageInput): string {
  const b = e.baseline;
  const parts: string[] = [];
  if (e.state === 'cleared') {
    parts.push(
      `${e.sensor} is back to normal at ${fmt(e.value)} (${e.ts}); it had been abnormal since ${e.since}`,
    );
    if (b.lowerFence !== null && b.upperFence !== null) {
      parts.push(`normal range ${fmt(b.lowerFence)} to ${fmt(b.upperFence)}`);
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
    parts.push(`${fmt(e.percentileRank, 3)}% of the window (${b.count} readings) was lower`);
  }
  if (b.median !== null) parts.push(`median ${fmt(b.median)}`);
  parts.push(`abnormal since ${e.since}`);
  return parts.join('; ') + '.';
}

type QualityMessageInput = Pick<
  AlertEvent,
  'sensor' | 'state' | 'value' | 'ts' | 'since' | 'flaggedReadings'
> & {
  /** The quality of the reading behind the event (`good` for the one that clears). */
  quality: 'good' | 'uncertain' | 'bad';
  /** Readings of doubtful quality in a row, up to this one. */
  run: number;
};

/** The sentence of a bad_quality alert: how many doubtful readings, the newest, and what it means. */
export function qualityMessage(e: QualityMessageInput): string {
  if (e.state === 'cleared') {
    return `${e.sensor} sends good readings again: ${fmt(e.value)} at ${e.ts}; its readings had been of doubtful quality since ${e.since} (${e.flaggedReadings} of them).`;
  }
  return `${e.sensor} is ${REASON_WORDS.bad_quality} (warning): ${e.run} in a row, the newest ${e.quality}, ${fmt(e.value)} at ${e.ts}; they are neither judged nor learned until good readings return; since ${e.since}.`;
}
