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
export function fmt(value: number | null, digits = 4): string {
  if (value === null || !Number.isFinite(value)) return 'n/a';
  const magnitude = Math.abs(value);
  if (magnitude !== 0 && (magnitude >= 1e6 || magnitude < 1e-3)) return value.toExponential(2);
  return String(Number(value.toPrecision(digits)));
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
export function alertMessage(input: MessageInput): string {
  const baseline = input.baseline;
  const parts: string[] = [];
  if (input.state === 'cleared') {
    parts.push(
      `${input.sensor} is back to normal at ${fmt(input.value)} (${input.ts}); it had been abnormal since ${input.since}`,
    );
    if (baseline.lowerFence !== null && baseline.upperFence !== null) {
      const span = input.profileSpan ? ` ${input.profileSpan}` : '';
      parts.push(`normal range ${fmt(baseline.lowerFence)} to ${fmt(baseline.upperFence)}${span}`);
    }
    return parts.join('; ') + '.';
  }
  const verb =
    input.state === 'raised' ? 'reads' : input.severity === 'critical' ? 'worsened to' : 'eased to';
  parts.push(
    `${input.sensor} ${verb} ${fmt(input.value)}, ${describeReasons(input.reasons)} (${input.severity})`,
  );
  const has = (reason: Reason) => input.reasons.includes(reason);
  if ((has('fence_high') || has('outer_fence_high')) && baseline.upperFence !== null) {
    parts.push(`${fmt(input.value - baseline.upperFence)} above the upper fence ${fmt(baseline.upperFence)}`);
  } else if ((has('fence_low') || has('outer_fence_low')) && baseline.lowerFence !== null) {
    parts.push(`${fmt(baseline.lowerFence - input.value)} below the lower fence ${fmt(baseline.lowerFence)}`);
  } else if (
    baseline.lowerFence !== null &&
    baseline.upperFence !== null &&
    baseline.iqr !== null &&
    baseline.iqr > 0
  ) {
    parts.push(`fences ${fmt(baseline.lowerFence)} to ${fmt(baseline.upperFence)}`);
  }
  if (has('limit_high') && input.max !== null) parts.push(`physical maximum ${fmt(input.max)}`);
  if (has('limit_low') && input.min !== null) parts.push(`physical minimum ${fmt(input.min)}`);
  if (has('flatline')) parts.push(`the same value ${input.stuckRun} readings in a row`);
  if (input.z !== null) parts.push(`z = ${fmt(input.z, 3)}`);
  if (input.percentileRank !== null) {
    const of = input.profileSpan ? `the readings ${input.profileSpan}` : 'the window';
    parts.push(`${fmt(input.percentileRank, 3)}% of ${of} (${baseline.count} readings) was lower`);
  }
  if (baseline.median !== null) parts.push(`median ${fmt(baseline.median)}`);
  parts.push(`abnormal since ${input.since}`);
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
export function qualityMessage(input: QualityMessageInput): string {
  if (input.state === 'cleared') {
    return `${input.sensor} sends good readings again: ${fmt(input.value)} at ${input.ts}; its readings had been of doubtful quality since ${input.since} (${input.flaggedReadings} of them).`;
  }
  return `${input.sensor} is ${REASON_WORDS.bad_quality} (warning): ${input.run} in a row, the newest ${input.quality}, ${fmt(input.value)} at ${input.ts}; they are neither judged nor learned until good readings return; since ${input.since}.`;
}

/** A span of event time in plain words: "45 s", "25 min", "3 h 5 min", "2 d 4 h". */
export function silenceWords(ms: number): string {
  const seconds = Math.floor(ms / 1000);
  if (seconds < 60) return `${seconds} s`;
  const minutes = Math.floor(seconds / 60);
  if (minutes < 60) return `${minutes} min`;
  const hours = Math.floor(minutes / 60);
  if (hours < 24) return minutes % 60 === 0 ? `${hours} h` : `${hours} h ${minutes % 60} min`;
  const days = Math.floor(hours / 24);
  return hours % 24 === 0 ? `${days} d` : `${days} d ${hours % 24} h`;
}

type StaleMessageInput = Pick<AlertEvent, 'sensor' | 'state' | 'value' | 'ts' | 'since'> & {
  /** Event time from the sensor's newest reading to the event. */
  silentMs: number;
  /** ISO time of the sensor's newest reading before the event. */
  lastTs: string;
};

/** The sentence of a stale alert: how long the sensor has been silent and what it last said. */
export function staleMessage(input: StaleMessageInput): string {
  if (input.state === 'cleared') {
    return `${input.sensor} reports again: ${fmt(input.value)} at ${input.ts}; it had been silent since ${input.since}.`;
  }
  return `${input.sensor} is ${REASON_WORDS.stale} (warning): no reading for ${silenceWords(input.silentMs)}; last ${fmt(input.value)} at ${input.lastTs}.`;
}
