/**
 * The operators' alert board as a pure state machine. Alert events (raised/updated/cleared) and
 * operator actions (acknowledge/shelve/unshelve) go in; the board's list comes out. Every method
 * that depends on time takes `now` (epoch ms of the server clock) so the store stays deterministic
 * and tests can move time freely.
 *
 * Statuses: `active` (raised, not shelved), `shelved` (hidden until `shelvedUntil`, or until
 * unshelved), `cleared` (kept in a bounded "recently cleared" list, newest first).
 */
import type { AlertEvent } from '../schema/alert-event.js';
import { severityRank } from '../schema/vocabulary.js';

/** Where an alert stands on the board: active, shelved (hidden for a while) or recently cleared. */
export type BoardStatus = 'active' | 'shelved' | 'cleared';

/** An alert event as the board shows it: the last event plus the operators' acknowledgement and shelf. */
export interface BoardAlert extends AlertEvent {
  status: BoardStatus;
  acknowledged: boolean;
  acknowledgedBy: string | null;
  /** ISO-8601, server clock. */
  acknowledgedAt: string | null;
  /** Acknowledgements after the first (which stands), oldest first, at most LATER_ACKS_KEPT. */
  laterAcknowledgements: readonly LaterAcknowledgement[];
  shelvedUntil: string | null;
  shelveReason: string | null;
  shelvedBy: string | null;
  /** ISO-8601 (server clock) of the last change the board saw: event or action. */
  changedAt: string;
}

/** An acknowledgement of an alert someone had already acknowledged: recorded, never overwriting. */
export interface LaterAcknowledgement {
  by: string;
  /** ISO-8601, server clock. */
  at: string;
}

/** How many later acknowledgements an alert keeps (the shared action log keeps them all). */
export const LATER_ACKS_KEPT = 20;

/** What an operator can do to an alert. */
export type ActionKind = 'acknowledge' | 'shelve' | 'unshelve';

/** One operator action, as validated, stamped and shared between boards (action topic, Redis). */
export interface OperatorAction {
  kind: ActionKind;
  id: string;
  by: string;
  /** ISO-8601, server clock of the board that took the action. */
  at: string;
  /** shelve only */
  reason?: string;
  /** shelve only: ISO-8601 end of the shelf. */
  until?: string;
}

/** The alert after an action, or why the action was refused (HTTP 404, 409 or 400). */
export type ActionResult =
  | { ok: true; alert: BoardAlert }
  | { ok: false; error: 'not_found' | 'conflict' | 'invalid'; message: string };

/** The name actions are recorded under when the operator gave none. */
export const UNNAMED = 'unnamed';
/** Bounds of a shelve request: reason length, and the shelf's duration in minutes. */
export const SHELF_LIMITS = { maxReasonChars: 500, minMinutes: 0.05, maxMinutes: 1440 } as const;
/** Longest operator name kept (characters). */
export const OPERATOR_NAME_MAX = 80;

/** Options of a BoardStore. */
export interface BoardOptions {
  /** How many cleared alerts stay listed. */
  clearedKeep?: number;
}

/**
 * The board's state: every open alert with its operator status, and the recently cleared ones.
 * Pure and clock-free (`now` is passed in); BoardHub in services/board wraps it with the server's
 * clock, rate meter and listeners.
 */
export class BoardStore {
  private readonly open = new Map<string, BoardAlert>();
  private readonly cleared: BoardAlert[] = [];
  private readonly clearedKeep: number;

  constructor(opts: BoardOptions = {}) {
    this.clearedKeep = opts.clearedKeep ?? 20;
  }

  /** Apply one alert event; returns the alert as it now stands, or null for a replayed duplicate it ignored. */
  applyEvent(event: AlertEvent, now: number): BoardAlert | null {
    const at = new Date(now).toISOString();
    const prev = this.open.get(event.id);
    if (event.state === 'cleared') {
      const base = prev ?? this.cleared.find((a) => a.id === event.id);
      if (prev === undefined && base !== undefined) return base; // duplicate clear (replayed topic)
      const was = base ?? {
        ...blank(at),
        status: 'cleared' as const,
        reasons: event.reasons,
        severity: event.severity,
      };
      // A clear carries no reasons; keep the last known ones so the history says why it was raised.
      const done = compose(
        { ...event, reasons: was.reasons, severity: was.severity },
        { ...fieldsOf(was), status: 'cleared', shelvedUntil: null, changedAt: at },
      );
      this.open.delete(event.id);
      this.cleared.unshift(done);
      if (this.cleared.length > this.clearedKeep) this.cleared.length = this.clearedKeep;
      return done;
    }
    if (prev === undefined) {
      if (this.cleared.some((a) => a.id === event.id)) return null; // late duplicate of a cleared alert
      const raised = compose(event, { ...blank(at), status: 'active' });
      this.open.set(event.id, raised);
      return raised;
    }
    // Escalation undoes an acknowledgement: the operator saw a milder alert than the one now standing.
    const escalated = severityRank(event.severity) > severityRank(prev.severity);
    const next = compose(event, { ...fieldsOf(prev), changedAt: at });
    if (escalated) {
      next.acknowledged = false;
      next.acknowledgedBy = null;
      next.acknowledgedAt = null;
      next.laterAcknowledgements = [];
    }
    this.open.set(event.id, next);
    return next;
  }

  /** Apply an operator action (already validated by checkAction, or replayed from the shared log). */
  applyAction(act: OperatorAction, now: number): ActionResult {
    const alert = this.open.get(act.id);
    if (alert === undefined) {
      if (this.cleared.some((c) => c.id === act.id)) {
        return {
          ok: false,
          error: 'conflict',
          message: `alert ${act.id} has already cleared; nothing to ${act.kind}`,
        };
      }
      return {
        ok: false,
        error: 'not_found',
        message: `no alert with id ${act.id} on this board; reload the list`,
      };
    }
    const at = new Date(now).toISOString();
    let next: BoardAlert;
    switch (act.kind) {
      case 'acknowledge':
        // The first acknowledgement stands: a later one is shared and announced as an action and
        // listed on the alert, but never overwrites who acknowledged first and when.
        if (alert.acknowledged) {
          const seen = alert.laterAcknowledgements.some((l) => l.by === act.by && l.at === act.at);
          if (seen || (alert.acknowledgedBy === act.by && alert.acknowledgedAt === act.at))
            return { ok: true, alert: alert };
          next = change(alert, {
            laterAcknowledgements: [...alert.laterAcknowledgements, { by: act.by, at: act.at }].slice(
              -LATER_ACKS_KEPT,
            ),
            changedAt: at,
          });
          break;
        }
        next = change(alert, {
          acknowledged: true,
          acknowledgedBy: act.by,
          acknowledgedAt: act.at,
          changedAt: at,
        });
        break;
      case 'shelve': {
        if (act.until === undefined || act.reason === undefined) {
          return { ok: false, error: 'invalid', message: 'a shelve needs a reason and an end time' };
        }
        if (Date.parse(act.until) <= now) {
          // A replayed shelf that has already run out changes nothing.
          return { ok: true, alert: alert };
        }
        next = change(alert, {
          status: 'shelved',
          shelvedUntil: act.until,
          shelveReason: act.reason,
          shelvedBy: act.by,
          changedAt: at,
        });
        break;
      }
      case 'unshelve':
        if (alert.status !== 'shelved') {
          return { ok: false, error: 'conflict', message: `alert ${act.id} is not shelved` };
        }
        next = change(alert, { status: 'active', shelvedUntil: null, changedAt: at });
        break;
    }
    this.open.set(act.id, next);
    return { ok: true, alert: next };
  }

  /** Return shelved alerts whose shelf has ended to the active list; returns those that came back. */
  expireShelves(now: number): BoardAlert[] {
    const back: BoardAlert[] = [];
    const at = new Date(now).toISOString();
    for (const alert of this.open.values()) {
      if (
        alert.status === 'shelved' &&
        alert.shelvedUntil !== null &&
        Date.parse(alert.shelvedUntil) <= now
      ) {
        const next = change(alert, { status: 'active', shelvedUntil: null, changedAt: at });
        this.open.set(alert.id, next);
        back.push(next);
      }
    }
    return back;
  }

  /** An open or recently cleared alert by id. */
  get(id: string): BoardAlert | undefined {
    return this.open.get(id) ?? this.cleared.find((a) => a.id === id);
  }

  /** Active (most severe, then oldest first), then shelved (soonest back first), then recently cleared. */
  list(): BoardAlert[] {
    const active: BoardAlert[] = [];
    const shelved: BoardAlert[] = [];
    for (const alert of this.open.values()) (alert.status === 'shelved' ? shelved : active).push(alert);
    active.sort(
      (x, y) =>
        severityRank(y.severity) - severityRank(x.severity) ||
        Date.parse(x.since) - Date.parse(y.since) ||
        (x.id < y.id ? -1 : x.id > y.id ? 1 : 0),
    );
    shelved.sort((x, y) => Date.parse(x.shelvedUntil ?? '') - Date.parse(y.shelvedUntil ?? ''));
    return [...active, ...shelved, ...this.cleared];
  }

  /** Sensors that currently have an alert on the board (open or recently cleared). */
  sensorsShown(): Set<string> {
    const sensors = new Set<string>();
    for (const alert of this.open.values()) sensors.add(alert.sensor);
    for (const alert of this.cleared) sensors.add(alert.sensor);
    return sensors;
  }

  /** Alerts currently open (active or shelved). */
  get openCount(): number {
    return this.open.size;
  }
}

type BoardFields = Omit<BoardAlert, keyof AlertEvent>;

/**
 * Build a board alert with every field in one fixed order. Object spreads of these wide objects
 * were the board's main cost (V8 falls back to slow property stores); one literal shape keeps it fast.
 */
function compose(event: AlertEvent, fields: BoardFields): BoardAlert {
  return {
    id: event.id,
    sensor: event.sensor,
    state: event.state,
    severity: event.severity,
    reasons: event.reasons,
    value: event.value,
    ts: event.ts,
    since: event.since,
    flaggedReadings: event.flaggedReadings,
    baseline: event.baseline,
    z: event.z,
    robustZ: event.robustZ,
    percentileRank: event.percentileRank,
    message: event.message,
    notice: event.notice,
    status: fields.status,
    acknowledged: fields.acknowledged,
    acknowledgedBy: fields.acknowledgedBy,
    acknowledgedAt: fields.acknowledgedAt,
    laterAcknowledgements: fields.laterAcknowledgements,
    shelvedUntil: fields.shelvedUntil,
    shelveReason: fields.shelveReason,
    shelvedBy: fields.shelvedBy,
    changedAt: fields.changedAt,
  };
}

function fieldsOf(alert: BoardFields): BoardFields {
  return {
    status: alert.status,
    acknowledged: alert.acknowledged,
    acknowledgedBy: alert.acknowledgedBy,
    acknowledgedAt: alert.acknowledgedAt,
    laterAcknowledgements: alert.laterAcknowledgements,
    shelvedUntil: alert.shelvedUntil,
    shelveReason: alert.shelveReason,
    shelvedBy: alert.shelvedBy,
    changedAt: alert.changedAt,
  };
}

/** A copy of `a` with some board fields changed. */
function change(alert: BoardAlert, fields: Partial<BoardFields>): BoardAlert {
  return compose(alert, {
    status: fields.status ?? alert.status,
    acknowledged: fields.acknowledged ?? alert.acknowledged,
    acknowledgedBy: fields.acknowledgedBy !== undefined ? fields.acknowledgedBy : alert.acknowledgedBy,
    acknowledgedAt: fields.acknowledgedAt !== undefined ? fields.acknowledgedAt : alert.acknowledgedAt,
    laterAcknowledgements: fields.laterAcknowledgements ?? alert.laterAcknowledgements,
    shelvedUntil: fields.shelvedUntil !== undefined ? fields.shelvedUntil : alert.shelvedUntil,
    shelveReason: fields.shelveReason !== undefined ? fields.shelveReason : alert.shelveReason,
    shelvedBy: fields.shelvedBy !== undefined ? fields.shelvedBy : alert.shelvedBy,
    changedAt: fields.changedAt ?? alert.changedAt,
  });
}

function blank(at: string): Omit<BoardAlert, keyof AlertEvent | 'status'> {
  return {
    acknowledged: false,
    acknowledgedBy: null,
    acknowledgedAt: null,
    laterAcknowledgements: [],
    shelvedUntil: null,
    shelveReason: null,
    shelvedBy: null,
    changedAt: at,
  };
}

/** A request body checked into an action, or the reason it is refused. */
export type CheckedAction = { ok: true; action: OperatorAction } | { ok: false; message: string };

/**
 * Validate an operator action request body (untrusted JSON) into an action stamped with `now`.
 * Unnamed operators are recorded as "unnamed".
 */
export function checkAction(kind: ActionKind, id: string, body: unknown, now: number): CheckedAction {
  if (body !== undefined && (typeof body !== 'object' || body === null || Array.isArray(body))) {
    return { ok: false, message: 'the request body must be a JSON object' };
  }
  const fields = (body ?? {}) as Record<string, unknown>;
  const allowed = kind === 'shelve' ? ['by', 'reason', 'minutes'] : ['by'];
  for (const key of Object.keys(fields)) {
    if (!allowed.includes(key))
      return { ok: false, message: `unknown field "${key}"; allowed: ${allowed.join(', ')}` };
  }
  let by = UNNAMED;
  if (fields.by !== undefined && fields.by !== null) {
    if (typeof fields.by !== 'string')
      return { ok: false, message: '"by" must be the operator name as a string' };
    const name = fields.by.trim();
    if (name.length > OPERATOR_NAME_MAX)
      return { ok: false, message: `"by" must be at most ${OPERATOR_NAME_MAX} characters` };
    if (name.length > 0) by = name;
  }
  const at = new Date(now).toISOString();
  if (kind !== 'shelve') return { ok: true, action: { kind, id, by, at } };

  if (typeof fields.reason !== 'string' || fields.reason.trim().length === 0) {
    return { ok: false, message: '"reason" is required to shelve: say why the alert can wait' };
  }
  const reason = fields.reason.trim();
  if (reason.length > SHELF_LIMITS.maxReasonChars) {
    return { ok: false, message: `"reason" must be at most ${SHELF_LIMITS.maxReasonChars} characters` };
  }
  const minutes = fields.minutes;
  if (
    typeof minutes !== 'number' ||
    !Number.isFinite(minutes) ||
    minutes < SHELF_LIMITS.minMinutes ||
    minutes > SHELF_LIMITS.maxMinutes
  ) {
    return {
      ok: false,
      message: `"minutes" must be a number from ${SHELF_LIMITS.minMinutes} to ${SHELF_LIMITS.maxMinutes} (e.g. 15, 60 or 480)`,
    };
  }
  const until = new Date(now + Math.round(minutes * 60_000)).toISOString();
  return { ok: true, action: { kind, id, by, at, reason, until } };
}
