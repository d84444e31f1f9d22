/**
 * The "Alert-system health" section of a report: each alert-system health figure (libs/kpi) with
 * its target beside it, where the target comes from, and whether it is met, in words and a shape
 * (never colour alone); then the ten most frequent sensors with their share of all raises. Pure
 * HTML text from an AlertKpis value: the replay report and the tune report both call it.
 */
import type { AlertKpis } from '../kpi/alert-kpis.js';
import { KPI_SOURCE_NAMES, KPI_SOURCES, targetFor, verdictFor, type KpiVerdict } from '../kpi/kpi-targets.js';
import { esc } from './escape.js';
import { table, type Cell } from './html.js';
import { fmtNum } from './svg.js';

/** One line of the health table: a figure, its value in words, and the number judged against the target. */
export interface HealthRow {
  /** What the figure is, in words. */
  label: string;
  /** The AlertKpis figure (dotted path, as in KPI_TARGETS). */
  figure: string;
  /** The number the target is checked against (null: not measured). */
  value: number | null;
  /** The value as shown. */
  shown: string;
  verdict: KpiVerdict;
}

const percent = (share: number | null): string =>
  share === null ? '–' : `${fmtNum(Math.round(share * 1000) / 10)} %`;
const count = (n: number, one: string, many: string): string => `${n} ${n === 1 ? one : many}`;

/** The health table's rows for a set of figures, in a fixed order (what the section shows). */
export function healthRows(kpis: AlertKpis): HealthRow[] {
  const settings = kpis.settings;
  const floodMinutes = fmtNum(settings.floodWindowMs / 60_000);
  const row = (label: string, figure: string, value: number | null, shown: string): HealthRow => ({
    label,
    figure,
    value,
    shown,
    verdict: verdictFor(figure, value),
  });
  return [
    row(
      'Alerts raised per hour, average',
      'perHour.average',
      kpis.perHour.average,
      kpis.perHour.average === null ? '–' : `${fmtNum(kpis.perHour.average)}/h`,
    ),
    row(
      'Alerts raised per hour, busiest clock hour (UTC)',
      'perHour.peak',
      kpis.perHour.peak,
      `${kpis.perHour.peak}`,
    ),
    row(
      `Alerts raised per ${floodMinutes} minutes, average`,
      'per10Min.average',
      kpis.per10Min.average,
      kpis.per10Min.average === null ? '–' : fmtNum(kpis.per10Min.average),
    ),
    row(
      `Alerts raised per ${floodMinutes} minutes, busiest aligned period`,
      'per10Min.peak',
      kpis.per10Min.peak,
      `${kpis.per10Min.peak}`,
    ),
    row(
      `Most raised in any ${floodMinutes} minutes (sliding)`,
      'worst10min',
      kpis.worst10min,
      `${kpis.worst10min}`,
    ),
    row(
      `${floodMinutes}-minute periods in flood (more than ${settings.floodLimit} raised)`,
      'flood.share',
      kpis.flood.share,
      `${kpis.flood.floodPeriods} of ${kpis.flood.periods} (${percent(kpis.flood.share)})`,
    ),
    row(
      `Chattering sensors (${settings.chatterRaises} or more raises within ${fmtNum(settings.chatterWindowMs / 1000)} s)`,
      'chattering.sensors',
      kpis.chattering.sensors,
      `${count(kpis.chattering.sensors, 'sensor', 'sensors')} (${count(kpis.chattering.raises, 'raise', 'raises')})`,
    ),
    row(
      `Fleeting alerts (cleared within ${fmtNum(settings.fleetingMs / 1000)} s of the raise)`,
      'fleeting',
      kpis.fleeting,
      `${kpis.fleeting}`,
    ),
    row(
      `Stale alerts (active longer than ${fmtNum(settings.staleMs / 3_600_000)} h)`,
      'stale.count',
      kpis.stale.count,
      `${kpis.stale.count}`,
    ),
    row(
      `Share of all raises from the ${settings.topN} most frequent sensors`,
      'top.share',
      kpis.top.share,
      percent(kpis.top.share),
    ),
    row(
      'Raises per caught incident',
      'raisesPerCaught',
      kpis.raisesPerCaught,
      kpis.raisesPerCaught === null ? 'not measured (needs labels)' : fmtNum(kpis.raisesPerCaught),
    ),
  ];
}

const VERDICT_WORDS: Record<KpiVerdict, string> = {
  met: 'met',
  'not-met': 'NOT MET',
  'not-judged': 'not judged',
};
// A shape beside the words: a tick in a square for met, a cross in a circle for not met, a bar for
// not judged. Colour (set in the page CSS) is only a third cue.
const VERDICT_SHAPES: Record<KpiVerdict, string> = {
  met: '<rect x="1" y="1" width="12" height="12" rx="2"/><path d="M3.5 7.2 6 9.7 10.6 4.3"/>',
  'not-met': '<circle cx="7" cy="7" r="6"/><path d="M4.5 4.5 9.5 9.5M9.5 4.5 4.5 9.5"/>',
  'not-judged': '<path d="M3 7H11"/>',
};

/** The met / not-met marker: a shape and words (class `verdict met|not-met|not-judged`). */
export function verdictMarker(verdict: KpiVerdict): string {
  return (
    `<span class="verdict ${verdict}"><svg width="14" height="14" viewBox="0 0 14 14" aria-hidden="true">` +
    `${VERDICT_SHAPES[verdict]}</svg>${esc(VERDICT_WORDS[verdict])}</span>`
  );
}

/**
 * The whole section (without its heading): the figures against their targets, the sources, and
 * the most frequent sensors.
 */
export function healthSection(kpis: AlertKpis): string {
  const rows = healthRows(kpis);
  const judged = rows.filter((r) => r.verdict !== 'not-judged');
  const missed = judged.filter((r) => r.verdict === 'not-met');
  const lines = rows.map((row): Cell[] => {
    const target = targetFor(row.figure);
    return [
      row.label,
      row.shown,
      target === undefined ? 'no target set' : target.text,
      { html: verdictMarker(row.verdict) },
      target === undefined ? null : (KPI_SOURCE_NAMES[target.source] ?? target.source),
    ];
  });
  const sources = [KPI_SOURCES.isa, KPI_SOURCES.eemua, KPI_SOURCES.ours]
    .map((src) => `<li><strong>${esc(KPI_SOURCE_NAMES[src])}</strong>: ${esc(src)}</li>`)
    .join('');
  const top = kpis.top.sensors;
  const topTable =
    top.length === 0
      ? '<p>No alert was raised, so no sensor is listed.</p>'
      : table(
          ['rank', 'sensor', 'raised', 'share of all raised'],
          top.map((t, i): Cell[] => [i + 1, t.sensor, t.raised, percent(t.share)]),
          { numeric: [0, 2, 3] },
        );
  return [
    `<p>${esc(judged.length - missed.length)} of ${esc(judged.length)} judged figures meet their target${missed.length > 0 ? `; not met: ${esc(missed.map((r) => r.label.charAt(0).toLowerCase() + r.label.slice(1)).join('; '))}` : ''}. Computed from the raised and cleared alert events over ${esc(fmtNum(kpis.hours))} h of event time (${esc(kpis.raised)} raised, ${esc(kpis.cleared)} cleared).</p>`,
    `<div class="health">${table(['figure', 'value', 'target', 'verdict', 'source of the target'], lines)}</div>`,
    `<p class="note">The targets are meant per operator position over at least 30 days; a site's alarm philosophy sets its own. Sources:</p>`,
    `<ul class="note sources">${sources}</ul>`,
    `<h3 class="plain">The ${esc(kpis.settings.topN)} most frequent sensors</h3>`,
    topTable,
  ].join('\n');
}
