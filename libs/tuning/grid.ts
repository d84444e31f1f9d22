/**
 * The tuning grid: which detection settings to try.
 *
 * Grid spec syntax (our own): `key=values` parts separated by `;`. Values are a comma list; a
 * numeric key also takes an inclusive range `from:to:step` (e.g. `zLimit=3:5:1` is 3, 4, 5).
 * Keys:
 *   fenceK=1.5,2,3        inner fence multiplier
 *   zLimit=3:5:1          z limit
 *   trigger=either,fence  which rules flag (fence, z, either, both)
 *   debounce=1/1,2/3      raiseAfter/raiseWindow pairs
 *   clearAfter=3,10       unflagged readings needed to clear
 *   flatlineAfter=10,30   identical readings that make a stuck sensor
 *   deadband=0,0.5        clear margin in spreads (points where it leaves no way to clear are skipped)
 *   clearDelay=0,30s,10readings  event time the clear run must span: a duration, or a number of
 *                         reading intervals (resolved against the data's median reading interval)
 * A key left out keeps the base config's value. The grid is the cross product of all lists.
 */
import { StreamfenceError } from '../errors/index.js';
import { formatDuration, parseDuration } from '../config/duration.js';
import type { SensorSettings, Trigger } from '../config/settings.js';

/** A delay in a grid spec: a fixed duration, or a number of the data's reading intervals. */
export type GridDelay = { ms: number } | { readings: number };

/** The values tried per setting (`--grid`); the grid is every combination. */
export interface GridSpec {
  fenceK?: number[];
  zLimit?: number[];
  trigger?: Trigger[];
  debounce?: [number, number][];
  clearAfter?: number[];
  flatlineAfter?: number[];
  deadband?: number[];
  clearDelay?: GridDelay[];
}

/** The settings one grid point changes. outerK and zCritical follow fenceK and zLimit so the config stays valid. */
export type GridPoint = {
  fenceK: number;
  outerK: number;
  zLimit: number;
  zCritical: number;
  trigger: Trigger;
  raiseAfter: number;
  raiseWindow: number;
  clearAfter: number;
  flatlineAfter: number;
  deadband: number;
  /** Milliseconds (a config file writes it as a duration). */
  clearDelay: number;
};

/** The settings a grid may vary. */
export const GRID_KEYS = [
  'fenceK',
  'zLimit',
  'trigger',
  'debounce',
  'clearAfter',
  'flatlineAfter',
  'deadband',
  'clearDelay',
] as const;
type GridKey = (typeof GRID_KEYS)[number];
const TRIGGERS: readonly Trigger[] = ['fence', 'z', 'either', 'both'];
/** Refuse grids that would take hours by mistake. */
export const MAX_GRID_POINTS = 5000;
/** The longest clear delay a grid may try (the config's bound for durations). */
const MAX_DELAY_MS = 31 * 86_400_000;

/**
 * The grid tune tries without `--grid`: 4 x 3 x 3 x 3 x 2 x 2 = 432 points. The clear delay is
 * counted in reading intervals so it suits the data's rate (10 readings: 10 s at 1 Hz, 10 minutes
 * at one a minute).
 */
export const DEFAULT_GRID_SPEC =
  'fenceK=1.5,2,2.5,3;zLimit=3,4,5;trigger=either,both,fence;debounce=1/1,2/3,3/5;clearAfter=3;' +
  'deadband=0,0.5;clearDelay=0,10readings';

function bad(part: string, msg: string): never {
  throw new StreamfenceError('ARGS_INVALID', `grid: "${part}": ${msg}`);
}

/** One `from:to:step` range as its values (binary noise of 0.1 steps rounded away). */
function rangeValues(part: string, item: string, range: string[]): number[] {
  const [from, to, step] = range.map((x) => Number(x.trim()));
  if (![from, to, step].every(Number.isFinite) || range.some((x) => x.trim() === '')) {
    bad(part, `range "${item}" must be from:to:step with numbers`);
  }
  if (step <= 0) bad(part, `range "${item}" needs a positive step`);
  if (to < from) bad(part, `range "${item}" ends before it starts`);
  const count = Math.floor((to - from) / step + 1e-9) + 1;
  if (count > MAX_GRID_POINTS) bad(part, `range "${item}" has too many values`);
  return Array.from({ length: count }, (_, i) => Number((from + i * step).toPrecision(12)));
}

function numbers(part: string, text: string, opts: { integer: boolean; min: number }): number[] {
  const out: number[] = [];
  for (const item of text.split(',')) {
    const entry = item.trim();
    if (entry === '') bad(part, 'empty value in the list');
    const range = entry.split(':');
    let vals: number[] = [];
    if (range.length === 3) vals = rangeValues(part, entry, range);
    else if (range.length === 1) {
      const value = Number(entry);
      if (!Number.isFinite(value)) bad(part, `"${entry}" is not a number`);
      vals = [value];
    } else bad(part, `"${entry}" is neither a number nor a from:to:step range`);
    for (const value of vals) {
      if (opts.integer && !Number.isInteger(value)) bad(part, `${value} must be a whole number`);
      if (value < opts.min) bad(part, `${value} is below the smallest allowed value ${opts.min}`);
      if (!out.includes(value)) out.push(value);
    }
  }
  return out;
}

function triggers(part: string, values: string): Trigger[] {
  const list: Trigger[] = [];
  for (const entry of values.split(',').map((x) => x.trim())) {
    if (!(TRIGGERS as readonly string[]).includes(entry))
      bad(part, `"${entry}" is not one of ${TRIGGERS.join(', ')}`);
    if (!list.includes(entry as Trigger)) list.push(entry as Trigger);
  }
  return list;
}

function debounces(part: string, values: string): [number, number][] {
  const list: [number, number][] = [];
  for (const entry of values.split(',').map((x) => x.trim())) {
    const match = /^(\d+)\/(\d+)$/.exec(entry);
    if (!match) bad(part, `"${entry}" must be raiseAfter/raiseWindow, e.g. 2/3`);
    const after = Number(match[1]);
    const window = Number(match[2]);
    if (after < 1 || window < after || window > 64)
      bad(part, `"${entry}" needs 1 <= raiseAfter <= raiseWindow <= 64`);
    if (!list.some(([x, y]) => x === after && y === window)) list.push([after, window]);
  }
  return list;
}

const sameDelay = (a: GridDelay, b: GridDelay): boolean =>
  'ms' in a ? 'ms' in b && a.ms === b.ms : 'readings' in b && a.readings === b.readings;

/** Clear delays: durations ("30s", "2m", 0) or whole numbers of reading intervals ("10readings"). */
function delays(part: string, values: string): GridDelay[] {
  const list: GridDelay[] = [];
  for (const entry of values.split(',').map((x) => x.trim())) {
    const counted = /^(\d+)\s*readings?$/.exec(entry);
    let delay: GridDelay;
    if (counted) delay = { readings: Number(counted[1]) };
    else {
      const ms = parseDuration(entry);
      if (ms === null || ms > MAX_DELAY_MS)
        bad(
          part,
          `"${entry}" must be a duration up to 31d (e.g. 30s, 2m, 0) or a count of readings (e.g. 10readings)`,
        );
      delay = { ms };
    }
    if (!list.some((d) => sameDelay(d, delay))) list.push(delay);
  }
  return list;
}

/** Parse one `key=values` part into the spec. */
function parsePart(spec: GridSpec, part: string): void {
  const equals = part.indexOf('=');
  if (equals <= 0) bad(part, 'each part must be key=values, e.g. fenceK=1.5,2,3');
  const key = part.slice(0, equals).trim();
  const values = part.slice(equals + 1).trim();
  if (values === '') bad(part, 'no values after "="');
  if (!(GRID_KEYS as readonly string[]).includes(key))
    bad(part, `unknown key "${key}"; known keys: ${GRID_KEYS.join(', ')}`);
  if (spec[key as GridKey] !== undefined) bad(part, `key "${key}" is given twice`);
  const positive = { integer: false, min: Number.MIN_VALUE };
  switch (key as GridKey) {
    case 'fenceK':
      spec.fenceK = numbers(part, values, positive);
      break;
    case 'zLimit':
      spec.zLimit = numbers(part, values, positive);
      break;
    case 'clearAfter':
      spec.clearAfter = numbers(part, values, { integer: true, min: 1 });
      break;
    case 'flatlineAfter':
      spec.flatlineAfter = numbers(part, values, { integer: true, min: 0 });
      break;
    case 'deadband':
      spec.deadband = numbers(part, values, { integer: false, min: 0 });
      break;
    case 'trigger':
      spec.trigger = triggers(part, values);
      break;
    case 'debounce':
      spec.debounce = debounces(part, values);
      break;
    case 'clearDelay':
      spec.clearDelay = delays(part, values);
      break;
  }
}

/** Parse `--grid` (`key=v1,v2;key=...`); an unknown key or a bad value is an ARGS_INVALID error naming it. */
export function parseGridSpec(text: string): GridSpec {
  const spec: GridSpec = {};
  const parts = text
    .split(';')
    .map((p) => p.trim())
    .filter((p) => p !== '');
  if (parts.length === 0) bad(text, `empty grid; example: ${DEFAULT_GRID_SPEC}`);
  for (const part of parts) parsePart(spec, part);
  return spec;
}

/** A grid delay in spec syntax: `10readings` or a duration. */
const delayText = (d: GridDelay): string =>
  'readings' in d ? `${d.readings}readings` : formatDuration(d.ms);

/** The grid spec as text in the same syntax (for reports). */
export function formatGridSpec(spec: GridSpec): string {
  const parts: string[] = [];
  if (spec.fenceK) parts.push(`fenceK=${spec.fenceK.join(',')}`);
  if (spec.zLimit) parts.push(`zLimit=${spec.zLimit.join(',')}`);
  if (spec.trigger) parts.push(`trigger=${spec.trigger.join(',')}`);
  if (spec.debounce) parts.push(`debounce=${spec.debounce.map(([a, w]) => `${a}/${w}`).join(',')}`);
  if (spec.clearAfter) parts.push(`clearAfter=${spec.clearAfter.join(',')}`);
  if (spec.flatlineAfter) parts.push(`flatlineAfter=${spec.flatlineAfter.join(',')}`);
  if (spec.deadband) parts.push(`deadband=${spec.deadband.join(',')}`);
  if (spec.clearDelay) parts.push(`clearDelay=${spec.clearDelay.map(delayText).join(',')}`);
  return parts.join(';');
}

/**
 * A delay in milliseconds: a count of readings times the reading interval, in whole seconds from
 * one second up (so it prints as a short duration), capped at the config's 31 days.
 */
export function delayMs(delay: GridDelay, readingIntervalMs: number | undefined): number {
  if ('ms' in delay) return delay.ms;
  if (readingIntervalMs === undefined)
    throw new Error('grid: a clear delay counted in readings needs the reading interval');
  const raw = delay.readings * readingIntervalMs;
  const rounded = raw >= 1000 ? Math.round(raw / 1000) * 1000 : Math.round(raw);
  return Math.min(rounded, MAX_DELAY_MS);
}

/**
 * True when a point's deadband leaves no reading that could clear an alert: at or above the fence
 * multiplier (for the fence rule) or the z limit (for the z rule), where the config refuses it.
 */
export function deadbandLeavesNoClear(point: GridPoint): boolean {
  if (point.deadband <= 0) return false;
  const fence = point.trigger !== 'z' && point.deadband >= point.fenceK;
  const zRule = point.trigger !== 'fence' && point.deadband >= point.zLimit;
  return fence || zRule;
}

/** Every combination of the lists, the first list slowest (the grid's stable order). */
function crossProduct<T extends unknown[]>(lists: { [K in keyof T]: readonly T[K][] }): T[] {
  let rows: unknown[][] = [[]];
  for (const list of lists as readonly (readonly unknown[])[]) {
    rows = rows.flatMap((row) => list.map((value) => [...row, value]));
  }
  return rows as T[];
}

/** The number of combinations a spec names (before points without a way to clear are skipped). */
export function gridSize(spec: GridSpec): number {
  return (
    (spec.fenceK?.length ?? 1) *
    (spec.zLimit?.length ?? 1) *
    (spec.trigger?.length ?? 1) *
    (spec.debounce?.length ?? 1) *
    (spec.clearAfter?.length ?? 1) *
    (spec.flatlineAfter?.length ?? 1) *
    (spec.deadband?.length ?? 1) *
    (spec.clearDelay?.length ?? 1)
  );
}

/**
 * Every combination, in a stable order (fenceK slowest, clearDelay fastest), leaving out points
 * whose deadband leaves no way to clear ({@link deadbandLeavesNoClear}). Keys not in the spec take
 * the base settings. outerK = max(base outerK, 2 * fenceK) and zCritical = max(base zCritical,
 * zLimit + 2), so the critical levels always sit above the warning levels. Clear delays counted in
 * readings are resolved with `readingIntervalMs` (tune passes the data's median interval).
 */
export function expandGrid(spec: GridSpec, base: SensorSettings, readingIntervalMs?: number): GridPoint[] {
  const total = gridSize(spec);
  if (total > MAX_GRID_POINTS) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `grid: ${total} points is more than ${MAX_GRID_POINTS}; give fewer values`,
    );
  }
  const clearDelays = spec.clearDelay?.map((d) => delayMs(d, readingIntervalMs)) ?? [base.clearDelay];
  const combos = crossProduct<[number, number, Trigger, [number, number], number, number, number, number]>([
    spec.fenceK ?? [base.fenceK],
    spec.zLimit ?? [base.zLimit],
    spec.trigger ?? [base.trigger],
    spec.debounce ?? [[base.raiseAfter, base.raiseWindow]],
    spec.clearAfter ?? [base.clearAfter],
    spec.flatlineAfter ?? [base.flatlineAfter],
    spec.deadband ?? [base.deadband],
    // Two counts can round to the same duration at a coarse rate: try each duration once.
    [...new Set(clearDelays)],
  ]);
  return combos
    .map(
      ([
        fenceK,
        zLimit,
        trigger,
        [raiseAfter, raiseWindow],
        clearAfter,
        flatlineAfter,
        deadband,
        clearDelay,
      ]) => ({
        fenceK,
        outerK: Math.max(base.outerK, fenceK * 2),
        zLimit,
        zCritical: Math.max(base.zCritical, zLimit + 2),
        trigger,
        raiseAfter,
        raiseWindow,
        clearAfter,
        flatlineAfter,
        deadband,
        clearDelay,
      }),
    )
    .filter((point) => !deadbandLeavesNoClear(point));
}
