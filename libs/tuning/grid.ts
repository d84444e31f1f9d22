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
 * A key left out keeps the base config's value. The grid is the cross product of all lists.
 */
import { StreamfenceError } from '../errors/index.js';
import type { SensorSettings, Trigger } from '../config/settings.js';

/** The values tried per setting (`--grid`); the grid is every combination. */
export interface GridSpec {
  fenceK?: number[];
  zLimit?: number[];
  trigger?: Trigger[];
  debounce?: [number, number][];
  clearAfter?: number[];
  flatlineAfter?: number[];
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
};

/** The settings a grid may vary. */
export const GRID_KEYS = ['fenceK', 'zLimit', 'trigger', 'debounce', 'clearAfter', 'flatlineAfter'] as const;
const TRIGGERS: readonly Trigger[] = ['fence', 'z', 'either', 'both'];
/** Refuse grids that would take hours by mistake. */
export const MAX_GRID_POINTS = 5000;

/** The grid tune tries without `--grid`. */
export const DEFAULT_GRID_SPEC =
  'fenceK=1.5,2,2.5,3;zLimit=3,4,5;trigger=either,both,fence;debounce=1/1,2/3,3/5;clearAfter=3,10';

function bad(part: string, msg: string): never {
  throw new StreamfenceError('ARGS_INVALID', `grid: "${part}": ${msg}`);
}

function numbers(part: string, text: string, opts: { integer: boolean; min: number }): number[] {
  const out: number[] = [];
  for (const item of text.split(',')) {
    const t = item.trim();
    if (t === '') bad(part, 'empty value in the list');
    const range = t.split(':');
    let vals: number[];
    if (range.length === 3) {
      const [a, b, s] = range.map((x) => Number(x.trim()));
      if (![a, b, s].every(Number.isFinite) || range.some((x) => x.trim() === '')) {
        bad(part, `range "${t}" must be from:to:step with numbers`);
      }
      if (s <= 0) bad(part, `range "${t}" needs a positive step`);
      if (b < a) bad(part, `range "${t}" ends before it starts`);
      const n = Math.floor((b - a) / s + 1e-9) + 1;
      if (n > MAX_GRID_POINTS) bad(part, `range "${t}" has too many values`);
      // Round away binary noise (0.1 steps) so values print and compare cleanly.
      vals = Array.from({ length: n }, (_, i) => Number((a + i * s).toPrecision(12)));
    } else if (range.length === 1) {
      const v = Number(t);
      if (!Number.isFinite(v)) bad(part, `"${t}" is not a number`);
      vals = [v];
    } else {
      bad(part, `"${t}" is neither a number nor a from:to:step range`);
    }
    for (const v of vals!) {
      if (opts.integer && !Number.isInteger(v)) bad(part, `${v} must be a whole number`);
      if (v < opts.min) bad(part, `${v} is below the smallest allowed value ${opts.min}`);
      if (!out.includes(v)) out.push(v);
    }
  }
  return out;
}

/** Parse `--grid` (`key=v1,v2;key=...`); an unknown key or a bad value is an ARGS_INVALID error naming it. */
export function parseGridSpec(text: string): GridSpec {
  const spec: GridSpec = {};
  const parts = text
    .split(';')
    .map((p) => p.trim())
    .filter((p) => p !== '');
  if (parts.length === 0) bad(text, `empty grid; example: ${DEFAULT_GRID_SPEC}`);
  for (const part of parts) {
    const eq = part.indexOf('=');
    if (eq <= 0) bad(part, 'each part must be key=values, e.g. fenceK=1.5,2,3');
    const key = part.slice(0, eq).trim();
    const values = part.slice(eq + 1).trim();
    if (values === '') bad(part, 'no values after "="');
    if (!(GRID_KEYS as readonly string[]).includes(key))
      bad(part, `unknown key "${key}"; known keys: ${GRID_KEYS.join(', ')}`);
    if (spec[key as keyof GridSpec] !== undefined) bad(part, `key "${key}" is given twice`);
    switch (key as (typeof GRID_KEYS)[number]) {
      case 'fenceK':
        spec.fenceK = numbers(part, values, { integer: false, min: Number.MIN_VALUE });
        break;
      case 'zLimit':
        spec.zLimit = numbers(part, values, { integer: false, min: Number.MIN_VALUE });
        break;
      case 'clearAfter':
        spec.clearAfter = numbers(part, values, { integer: true, min: 1 });
        break;
      case 'flatlineAfter':
        spec.flatlineAfter = numbers(part, values, { integer: true, min: 0 });
        break;
      case 'trigger': {
        const list: Trigger[] = [];
        for (const t of values.split(',').map((x) => x.trim())) {
          if (!(TRIGGERS as readonly string[]).includes(t))
            bad(part, `"${t}" is not one of ${TRIGGERS.join(', ')}`);
          if (!list.includes(t as Trigger)) list.push(t as Trigger);
        }
        spec.trigger = list;
        break;
      }
      case 'debounce': {
        const list: [number, number][] = [];
        for (const t of values.split(',').map((x) => x.trim())) {
          const m = /^(\d+)\/(\d+)$/.exec(t);
          if (!m) bad(part, `"${t}" must be raiseAfter/raiseWindow, e.g. 2/3`);
          const a = Number(m![1]);
          const w = Number(m![2]);
          if (a < 1 || w < a || w > 64) bad(part, `"${t}" needs 1 <= raiseAfter <= raiseWindow <= 64`);
          if (!list.some(([x, y]) => x === a && y === w)) list.push([a, w]);
        }
        spec.debounce = list;
        break;
      }
    }
  }
  return spec;
}

/** The grid spec as text in the same syntax (for reports). */
export function formatGridSpec(spec: GridSpec): string {
  const parts: string[] = [];
  if (spec.fenceK) parts.push(`fenceK=${spec.fenceK.join(',')}`);
  if (spec.zLimit) parts.push(`zLimit=${spec.zLimit.join(',')}`);
  if (spec.trigger) parts.push(`trigger=${spec.trigger.join(',')}`);
  if (spec.debounce) parts.push(`debounce=${spec.debounce.map(([a, w]) => `${a}/${w}`).join(',')}`);
  if (spec.clearAfter) parts.push(`clearAfter=${spec.clearAfter.join(',')}`);
  if (spec.flatlineAfter) parts.push(`flatlineAfter=${spec.flatlineAfter.join(',')}`);
  return parts.join(';');
}

/**
 * Every combination, in a stable order (fenceK slowest, flatlineAfter fastest). Keys not in the
 * spec take the base settings. outerK = max(base outerK, 2 * fenceK) and zCritical =
 * max(base zCritical, zLimit + 2), so the critical levels always sit above the warning levels.
 */
export function expandGrid(spec: GridSpec, base: SensorSettings): GridPoint[] {
  const fk = spec.fenceK ?? [base.fenceK];
  const zl = spec.zLimit ?? [base.zLimit];
  const tr = spec.trigger ?? [base.trigger];
  const db = spec.debounce ?? [[base.raiseAfter, base.raiseWindow]];
  const ca = spec.clearAfter ?? [base.clearAfter];
  const fl = spec.flatlineAfter ?? [base.flatlineAfter];
  const total = fk.length * zl.length * tr.length * db.length * ca.length * fl.length;
  if (total > MAX_GRID_POINTS) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `grid: ${total} points is more than ${MAX_GRID_POINTS}; give fewer values`,
    );
  }
  const out: GridPoint[] = [];
  for (const fenceK of fk)
    for (const zLimit of zl)
      for (const trigger of tr)
        for (const [raiseAfter, raiseWindow] of db)
          for (const clearAfter of ca)
            for (const flatlineAfter of fl) {
              out.push({
                fenceK,
                outerK: Math.max(base.outerK, fenceK * 2),
                zLimit,
                zCritical: Math.max(base.zCritical, zLimit + 2),
                trigger,
                raiseAfter,
                raiseWindow,
                clearAfter,
                flatlineAfter,
              });
            }
  return out;
}
