/**
 * The board's compact alert-system health view: the alert events the board has seen over the last
 * day of plant time, judged by the KPI module (libs/kpi) against the same targets the reports
 * show. Pure: `now` is passed in; the hub records events and reads the figures per snapshot.
 */
import { alertKpis, kpiEventOf, type AlertKpis, type KpiEvent } from '../kpi/alert-kpis.js';
import { KPI_SOURCE_NAMES, targetFor, verdictFor, type KpiVerdict } from '../kpi/kpi-targets.js';
import type { AlertEvent } from '../schema/alert-event.js';

/** How much plant time the board's figures cover (one day: what the stale rule measures too). */
export const HEALTH_WINDOW_MS = 24 * 3_600_000;
/** Events kept at most (the oldest go first), so a long flood cannot grow the board's memory. */
export const MAX_HEALTH_EVENTS = 50_000;

/** One figure of the compact view. */
export interface HealthFigure {
  /** The AlertKpis figure (dotted path, as in KPI_TARGETS). */
  figure: string;
  /** Short words for the figure. */
  label: string;
  /** The value as shown. */
  shown: string;
  verdict: KpiVerdict;
  /** The target in words and where it comes from (null: no target set). */
  target: string | null;
}

/** What `/api/board` carries under `health`. */
export interface BoardHealth {
  /** Start and end of the span the figures cover (ISO-8601, plant time). */
  from: string;
  to: string;
  /** Hours in that span (less than 24 while the board has run for less than a day). */
  hours: number;
  raised: number;
  figures: HealthFigure[];
  /** Figures with a verdict, and how many of those meet their target. */
  judged: number;
  met: number;
}

const percent = (share: number | null): string => (share === null ? '–' : `${(share * 100).toFixed(1)} %`);
const decimal = (value: number | null): string => (value === null ? '–' : value.toFixed(value >= 10 ? 0 : 1));

/** The compact view's figures, in a fixed order. */
export function healthFigures(kpis: AlertKpis): HealthFigure[] {
  const figure = (name: string, label: string, value: number | null, shown: string): HealthFigure => {
    const target = targetFor(name);
    return {
      figure: name,
      label,
      shown,
      verdict: verdictFor(name, value),
      target:
        target === undefined ? null : `${target.text} (${KPI_SOURCE_NAMES[target.source] ?? target.source})`,
    };
  };
  return [
    figure('perHour.average', 'raised per hour', kpis.perHour.average, `${decimal(kpis.perHour.average)}/h`),
    figure('worst10min', 'most in 10 min', kpis.worst10min, String(kpis.worst10min)),
    figure('flood.share', 'periods in flood', kpis.flood.share, percent(kpis.flood.share)),
    figure(
      'chattering.sensors',
      'chattering sensors',
      kpis.chattering.sensors,
      String(kpis.chattering.sensors),
    ),
    figure('fleeting', 'fleeting', kpis.fleeting, String(kpis.fleeting)),
    figure('stale.count', 'stale', kpis.stale.count, String(kpis.stale.count)),
    figure('top.share', `top ${kpis.settings.topN} sensors' share`, kpis.top.share, percent(kpis.top.share)),
  ];
}

/**
 * The raised and cleared events of the last {@link HEALTH_WINDOW_MS} of plant time, and their
 * figures. The span starts when the board started (or at its first event, if older), so a board
 * up for an hour is judged over that hour.
 */
export class HealthWindow {
  private events: KpiEvent[] = [];
  private start: number;

  constructor(startedAt: number) {
    this.start = startedAt;
  }

  /** Keep a raised or cleared event (updates change no figure). */
  record(event: AlertEvent): void {
    if (event.state === 'updated') return;
    const kept = kpiEventOf(event);
    this.events.push(kept);
    if (kept.ts < this.start) this.start = kept.ts;
    if (this.events.length > MAX_HEALTH_EVENTS) this.events.splice(0, this.events.length - MAX_HEALTH_EVENTS);
  }

  /** The figures over [max(start, now - window), now]; events older than the window are dropped. */
  read(now: number): BoardHealth {
    const from = Math.min(now, Math.max(this.start, now - HEALTH_WINDOW_MS));
    // A filter, not a cut at the first kept one: events of several partitions arrive a little out of order.
    this.events = this.events.filter((e) => e.ts >= from);
    const kpis = alertKpis(this.events, { start: from, end: now });
    const figures = healthFigures(kpis);
    const judged = figures.filter((f) => f.verdict !== 'not-judged');
    return {
      from: new Date(from).toISOString(),
      to: new Date(now).toISOString(),
      hours: kpis.hours,
      raised: kpis.raised,
      figures,
      judged: judged.length,
      met: judged.filter((f) => f.verdict === 'met').length,
    };
  }
}
