/**
 * The target beside each alert-system health figure, with where it comes from. The ISA-18.2 and
 * EEMUA 191 figures are as secondary sources state them (the standards' own tables were not at
 * hand: the numbers are from memory of those sources, marked so); they are meant per operator
 * position over at least 30 days. A site's alarm philosophy decides its own targets.
 */

/** Where a target value comes from. */
export const KPI_SOURCES = {
  isa: 'ISA-18.2 / IEC 62682 performance metrics, as secondary sources state them (from memory)',
  eemua: 'EEMUA 191 and ISA-18.2 alarm-rate guidance, as secondary sources state them (from memory)',
  ours: 'streamfence aim, no standard figure',
} as const;

/** Short names of the sources, for a table column (the full wording stays in {@link KPI_SOURCES}). */
export const KPI_SOURCE_NAMES: Readonly<Record<string, string>> = Object.freeze({
  [KPI_SOURCES.isa]: 'ISA-18.2 / IEC 62682',
  [KPI_SOURCES.eemua]: 'EEMUA 191 / ISA-18.2',
  [KPI_SOURCES.ours]: 'streamfence',
});

/** One target: the figure it applies to, the limit in words, a test against a value, the source. */
export interface KpiTarget {
  /** Which AlertKpis figure (a dotted path, e.g. "flood.share"). */
  figure: string;
  /** The target in words, as shown beside the figure. */
  text: string;
  /** True when the value meets the target (null values are not judged). */
  met: (value: number) => boolean;
  source: string;
}

/** The targets shown beside the figures (report health section, board). */
export const KPI_TARGETS: readonly KpiTarget[] = Object.freeze([
  {
    figure: 'perHour.average',
    text: 'about 6/h very likely acceptable; 12/h most that is manageable',
    met: (v) => v <= 6,
    source: KPI_SOURCES.eemua,
  },
  {
    figure: 'per10Min.average',
    text: 'about 1 per 10 min very likely acceptable; 2 most that is manageable',
    met: (v) => v <= 1,
    source: KPI_SOURCES.eemua,
  },
  {
    figure: 'per10Min.peak',
    text: 'at most about 10 in any 10 minutes',
    met: (v) => v <= 10,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'worst10min',
    text: 'at most about 10 in any 10 minutes',
    met: (v) => v <= 10,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'flood.share',
    text: 'below about 1 % of 10-minute periods with more than 10',
    met: (v) => v < 0.01,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'top.share',
    text: 'ten most frequent below about 1-5 % of all alerts (meant for systems of hundreds of alarms)',
    met: (v) => v <= 0.05,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'chattering.sensors',
    text: 'zero (each one gets an action plan)',
    met: (v) => v === 0,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'fleeting',
    text: 'zero (each one gets an action plan)',
    met: (v) => v === 0,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'stale.count',
    text: 'fewer than 5 on any day (compared here with the whole span, which is stricter)',
    met: (v) => v < 5,
    source: KPI_SOURCES.isa,
  },
  {
    figure: 'raisesPerCaught',
    text: '1: one raise per incident',
    met: (v) => v <= 1,
    source: KPI_SOURCES.ours,
  },
]);

/** The target for a figure, if one is set. */
export function targetFor(figure: string): KpiTarget | undefined {
  return KPI_TARGETS.find((t) => t.figure === figure);
}

/** How a figure stands against its target: met, not met, or not judged (no target, or no value). */
export type KpiVerdict = 'met' | 'not-met' | 'not-judged';

/** The verdict for one figure's value (null or non-finite values and figures without a target are not judged). */
export function verdictFor(figure: string, value: number | null): KpiVerdict {
  const target = targetFor(figure);
  if (target === undefined || value === null || !Number.isFinite(value)) return 'not-judged';
  return target.met(value) ? 'met' : 'not-met';
}
