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
  /** Keep the whole detail text instead of fitting the line into LINE_WIDTH columns. */
  wide?: boolean;
}

/** Terminal lines fit this many columns unless `wide` is set (details are cut at a word). */
export const LINE_WIDTH = 120;

/** How a line shows that its alert belongs to a group (see libs/board/groups.ts). */
export interface GroupMark {
  asset: string;
  /** Sensor of the group's first-out alert. */
  firstOutSensor: string;
  /** Whether this line's alert is the first-out. */
  isFirstOut: boolean;
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
const OPERATOR_MARK = '» OPERATOR';

/** What happened, as whole words in one column as wide as the longest ("acknowledged"). */
const WHAT = {
  raised: 'raised',
  updated: 'updated',
  cleared: 'cleared',
  acknowledge: 'acknowledged',
  shelve: 'shelved',
  unshelve: 'unshelved',
} as const;
const WHAT_WIDTH = Math.max(...Object.values(WHAT).map((w) => w.length));
const GAP = '  ';

/** "2026-03-02 08:15:00Z" from an ISO time (UTC, so lines from any machine compare). */
export function shortTime(iso: string): string {
  const ms = Date.parse(iso);
  if (!Number.isFinite(ms)) return iso;
  return new Date(ms)
    .toISOString()
    .replace('T', ' ')
    .replace(/\.\d{3}Z$/, 'Z');
}

function paint(text: string, codes: string, style: LineStyle): string {
  return style.color ? `${codes}${text}${ANSI.reset}` : text;
}

/**
 * `text` cut at a word boundary so it takes at most `room` columns, with "…" when something was
 * left out; words are never split (a first word too long for the room leaves just "…").
 */
export function fitWords(text: string, room: number): string {
  const chars = Array.from(text);
  if (chars.length <= room) return text;
  if (room < 1) return '';
  const head = chars.slice(0, room - 1).join('');
  // Keep the head only up to its last whole word (the char after it ends a word too if it is a space).
  const cut = chars[room - 1] === ' ' ? head.length : head.lastIndexOf(' ');
  return `${cut > 0 ? head.slice(0, cut).trimEnd() : ''}…`;
}

/** The group tag of a line: "[first-out of line-1/chiller]" or "[grouped, first-out line-1/chiller/temp]". */
export function groupTag(mark: GroupMark): string {
  return mark.isFirstOut ? `[first-out of ${mark.asset}]` : `[grouped, first-out ${mark.firstOutSensor}]`;
}

/** Columns: time, mark, what happened, sensor, group tag, then the detail fitted into what is left. */
function compose(
  parts: {
    time: string;
    mark: string;
    markCodes: string;
    what: string;
    sensor: string;
    group: string | null;
    detail: string;
  },
  style: LineStyle,
): string {
  const fixed = [parts.time, parts.mark, parts.what.padEnd(WHAT_WIDTH), parts.sensor];
  if (parts.group !== null) fixed.push(parts.group);
  const used = fixed.reduce((n, f) => n + Array.from(f).length, 0) + GAP.length * fixed.length;
  const detail = style.wide === true ? parts.detail : fitWords(parts.detail, LINE_WIDTH - used);
  const out = [
    parts.time,
    paint(parts.mark, parts.markCodes, style),
    parts.what.padEnd(WHAT_WIDTH),
    paint(parts.sensor, ANSI.bold, style),
  ];
  if (parts.group !== null) out.push(paint(parts.group, ANSI.cyan, style));
  if (detail.length > 0) out.push(detail);
  return out.join(GAP);
}

/** The message without a leading repeat of the sensor name (the line shows it already). */
function detailOf(event: AlertEvent): string {
  return event.message.startsWith(`${event.sensor} `)
    ? event.message.slice(event.sensor.length + 1)
    : event.message;
}

/** One terminal line for an alert event: time, severity mark, what happened, sensor, group tag, message. */
export function eventLine(event: AlertEvent, style: LineStyle, group: GroupMark | null = null): string {
  const cleared = event.state === 'cleared';
  return compose(
    {
      time: shortTime(event.ts),
      mark: cleared ? CLEARED_MARK : SEVERITY_MARK[event.severity],
      markCodes: cleared ? ANSI.dim : event.severity === 'critical' ? ANSI.bold + ANSI.red : ANSI.yellow,
      what: WHAT[event.state],
      sensor: event.sensor,
      group: group === null ? null : groupTag(group),
      detail: style.wide === true ? event.message : detailOf(event),
    },
    style,
  );
}

/** An operator action; `sensor` is the alert's sensor (the alert id when it is not known). */
export function actionLine(
  act: OperatorAction,
  sensor: string | null,
  style: LineStyle,
  group: GroupMark | null = null,
): string {
  const detail =
    act.kind === 'shelve'
      ? `by ${act.by} until ${shortTime(act.until ?? '')}: ${act.reason ?? ''}`
      : `by ${act.by}`;
  return compose(
    {
      time: shortTime(act.at),
      mark: OPERATOR_MARK,
      markCodes: ANSI.cyan,
      what: WHAT[act.kind],
      sensor: sensor ?? `alert ${act.id}`,
      group: group === null ? null : groupTag(group),
      detail,
    },
    style,
  );
}

/** Severity filter is a floor: "warning" shows warnings and criticals, "critical" only criticals. */
export function passesSeverity(severity: Severity, floor: Severity | null): boolean {
  return severityRank(severity) >= severityRank(floor);
}
