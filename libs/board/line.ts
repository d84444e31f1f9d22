/**
 * One readable terminal line per alert event or operator action. Severity is marked by a word and
 * a shape as well as colour, so the line reads the same without colour (pipes, NO_COLOR).
 */
import type { AlertEvent } from '../schema/alert-event.js';
import { severityRank, type Severity } from '../schema/vocabulary.js';
import type { OperatorAction } from './store.js';

/** How the terminal view draws a line: with ANSI colours, or plain text (pipes, NO_COLOR). */
export interface LineStyle {
  color: boolean;
}

const ANSI = {
  reset: '\u001b[0m',
  bold: '\u001b[1m',
  dim: '\u001b[2m',
  red: '\u001b[31m',
  yellow: '\u001b[33m',
  cyan: '\u001b[36m',
} as const;

const SEVERITY_MARK: Readonly<Record<Severity, string>> = { critical: '◆ CRITICAL', warning: '▲ WARNING ' };
const CLEARED_MARK = '○ CLEARED ';

/** "2026-03-02 08:15:00Z" from an ISO time (UTC, so lines from any machine compare). */
export function shortTime(iso: string): string {
  const t = Date.parse(iso);
  if (!Number.isFinite(t)) return iso;
  return new Date(t)
    .toISOString()
    .replace('T', ' ')
    .replace(/\.\d{3}Z$/, 'Z');
}

function paint(s: string, codes: string, style: LineStyle): string {
  return style.color ? `${codes}${s}${ANSI.reset}` : s;
}

/** One terminal line for an alert event: time, severity mark, sensor, state and the message. */
export function eventLine(ev: AlertEvent, style: LineStyle): string {
  const cleared = ev.state === 'cleared';
  const mark = cleared ? CLEARED_MARK : SEVERITY_MARK[ev.severity];
  const codes = cleared ? ANSI.dim : ev.severity === 'critical' ? ANSI.bold + ANSI.red : ANSI.yellow;
  return [
    shortTime(ev.ts),
    paint(mark, codes, style),
    ev.state.padEnd(7),
    paint(ev.sensor, ANSI.bold, style),
    ev.message,
  ].join('  ');
}

/** One terminal line for an operator action (acknowledge, shelve, unshelve); `sensor` when known. */
export function actionLine(act: OperatorAction, sensor: string | null, style: LineStyle): string {
  const what =
    act.kind === 'acknowledge'
      ? `acknowledged by ${act.by}`
      : act.kind === 'shelve'
        ? `shelved by ${act.by} until ${shortTime(act.until ?? '')}: ${act.reason ?? ''}`
        : `unshelved by ${act.by}`;
  return [
    shortTime(act.at),
    paint('» OPERATOR', ANSI.cyan, style),
    act.kind.padEnd(7).slice(0, 7),
    paint(sensor ?? act.id, ANSI.bold, style),
    what,
  ].join('  ');
}

/** Severity filter is a floor: "warning" shows warnings and criticals, "critical" only criticals. */
export function passesSeverity(severity: Severity, floor: Severity | null): boolean {
  return severityRank(severity) >= severityRank(floor);
}
