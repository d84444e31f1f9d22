/**
 * Fault schedule of one simulated sensor: which faults happen when, and how big. Drawn once per
 * sensor from its own seeded stream, so the schedule of one sensor does not depend on how many
 * other sensors are simulated.
 */
import type { Prng } from './prng.js';

/**
 * The kinds of fault the simulator plants. `timeshift`: the sensor reads what is normal for
 * another time of day (the daytime level at night: a pump left on its day schedule, a missed
 * setback), so its values stay inside the range of the whole day.
 */
export type FaultKind = 'spike' | 'step' | 'drift' | 'stuck' | 'noise' | 'dropout' | 'timeshift';

/** Every fault kind, in plan order. */
export const FAULT_KINDS: readonly FaultKind[] = [
  'spike',
  'step',
  'drift',
  'stuck',
  'noise',
  'dropout',
  'timeshift',
];

/**
 * The kinds every sensor can have. `timeshift` is planned only where a scenario asks for it and
 * only on sensors with a strong daily cycle (elsewhere it would change nothing visible).
 */
export const COMMON_FAULT_KINDS: readonly FaultKind[] = FAULT_KINDS.filter((k) => k !== 'timeshift');

/** One planned fault, in reading slots of its sensor (both ends inclusive). */
export interface PlannedFault {
  kind: FaultKind;
  startSlot: number;
  endSlot: number;
  /** Size in units of the sensor's typical spread (spike/step: offset; drift: offset at the end; noise: extra sd). */
  size: number;
  /** +1 or -1: which way the fault pushes. */
  sign: number;
  /** timeshift only: how far ahead in the day the sensor reads, ms (set by the plant, which knows the cycle). */
  shiftMs?: number;
}

const MIN = 60_000;
const HOUR = 3_600_000;

/** Relative frequency of each kind. */
const KIND_WEIGHTS: Record<FaultKind, number> = {
  spike: 2,
  step: 2,
  drift: 1.5,
  stuck: 1.5,
  noise: 1.5,
  dropout: 1,
  timeshift: 2,
};

/** Length of each kind as [shortest, longest] in ms, and a floor in readings so a fault is never invisible. */
const KIND_LENGTH: Record<FaultKind, { ms: [number, number]; minSlots: number }> = {
  spike: { ms: [0, 0], minSlots: 1 },
  step: { ms: [30 * MIN, 120 * MIN], minSlots: 3 },
  drift: { ms: [60 * MIN, 180 * MIN], minSlots: 5 },
  stuck: { ms: [40 * MIN, 90 * MIN], minSlots: 25 },
  noise: { ms: [20 * MIN, 60 * MIN], minSlots: 10 },
  dropout: { ms: [30 * MIN, 120 * MIN], minSlots: 3 },
  timeshift: { ms: [60 * MIN, 180 * MIN], minSlots: 10 },
};

/** Sizes in typical spreads: plausible upsets, not absurd ones. */
const KIND_SIZE: Record<FaultKind, [number, number]> = {
  spike: [7, 11],
  step: [6, 9],
  drift: [9, 13],
  stuck: [0, 0],
  noise: [3, 4],
  dropout: [0, 0],
  timeshift: [0, 0],
};

/** Quiet time between two faults of one sensor, so its baseline settles in between. */
const GAP_MS: [number, number] = [3 * HOUR, 9 * HOUR];

/**
 * Plan one sensor's faults over `slots` readings after the warm-up, from its own seeded stream.
 * `kinds` (default COMMON_FAULT_KINDS) are the kinds this sensor can have; the same list always
 * draws the same plan.
 */
export function planFaults(
  rng: Prng,
  opts: {
    slots: number;
    intervalMs: number;
    warmupMs: number;
    oneSided: 'high' | 'low' | null;
    kinds?: readonly FaultKind[];
  },
): PlannedFault[] {
  const kinds = opts.kinds ?? COMMON_FAULT_KINDS;
  const weights = kinds.map((k) => KIND_WEIGHTS[k]);
  const out: PlannedFault[] = [];
  let slot =
    Math.ceil(opts.warmupMs / opts.intervalMs) + Math.round(rng.uniform(0, GAP_MS[0]) / opts.intervalMs);
  for (;;) {
    const kind = rng.pick(kinds, weights);
    const len = KIND_LENGTH[kind];
    const slots =
      kind === 'spike'
        ? rng.int(1, 3)
        : Math.max(len.minSlots, Math.round(rng.uniform(len.ms[0], len.ms[1]) / opts.intervalMs));
    const [minSize, maxSize] = KIND_SIZE[kind];
    const size = rng.uniform(minSize, maxSize);
    const coin = rng.next() < 0.5 ? -1 : 1;
    const sign = opts.oneSided === 'high' ? 1 : opts.oneSided === 'low' ? -1 : coin;
    const endSlot = slot + slots - 1;
    if (endSlot >= opts.slots) break;
    out.push({ kind, startSlot: slot, endSlot, size, sign });
    slot = endSlot + 1 + Math.max(1, Math.round(rng.uniform(GAP_MS[0], GAP_MS[1]) / opts.intervalMs));
  }
  return out;
}
