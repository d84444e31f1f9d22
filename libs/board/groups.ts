/**
 * Grouped alerts: open alerts of sensors that belong to one asset, raised within a few minutes of
 * the first of them, form one group. The first raised is the group's first-out (when a machine
 * trips, the first sensor to go out is often the cause). Pure and deterministic: the same alerts
 * give the same groups, whatever order they are passed in.
 *
 * Which asset a sensor belongs to comes from its id, split on "/":
 * - a glob (e.g. `line-1/chiller/**`): a sensor it matches belongs to the asset named by the
 *   sensor's leading segments, as many as the glob has before its `**` segment (or all but its last
 *   segment when it has none), so a glob with `line-*` as its first segment and `chiller/*` after it
 *   gives one asset per line (`line-1/chiller`, `line-2/chiller`);
 * - otherwise a prefix depth: the first `depth` segments (`line-1/chiller/temp` at depth 2 belongs
 *   to `line-1/chiller`); a sensor with no more segments than the depth belongs to no asset.
 * Globs are tried first, in order; the first match wins.
 */
import picomatch from 'picomatch';

/** Which sensors form one asset, and how close together their alerts must be raised to group. */
export interface GroupRule {
  /** Leading id segments that name the asset; null: no grouping by depth. */
  depth: number | null;
  /** Globs naming assets, tried before the depth. */
  globs: readonly string[];
  /** Alerts raised at most this long after the group's first-out join it (ms). */
  windowMs: number;
}

/** Common-practice default chosen for this project: group by machine (`line-1/chiller`), 5 minutes. */
export const DEFAULT_GROUP_RULE: GroupRule = Object.freeze({ depth: 2, globs: [], windowMs: 5 * 60_000 });

/** Bounds of the grouping options (checked at start-up by groupRuleProblem). */
export const GROUP_LIMITS = { maxDepth: 16, maxWindowMinutes: 1440 } as const;

/** What grouping needs to know of an alert. */
export interface GroupCandidate {
  id: string;
  sensor: string;
  /** ISO-8601 raise time (plant clock). */
  since: string;
  status: 'active' | 'shelved' | 'cleared';
}

/** Two or more open alerts of one asset: the first-out and those raised within the window after it. */
export interface AlertGroup {
  /** The first-out alert's id (stable while it stays open). */
  id: string;
  asset: string;
  /** Active and shelved alerts form separate groups, so one action fits every member. */
  status: 'active' | 'shelved';
  /** Id of the first alert raised in the group. */
  firstOut: string;
  /** Member ids in raise order, first-out first. */
  members: string[];
}

const SEPARATOR = '/';

/** Maps a sensor id to its asset, with the rule's globs compiled once. */
export class AssetNamer {
  private readonly globs: { test: (sensor: string) => boolean; keep: number }[];

  constructor(private readonly rule: GroupRule) {
    this.globs = rule.globs.map((glob) => {
      const parts = glob.split(SEPARATOR);
      const star = parts.indexOf('**');
      return { test: picomatch(glob, { dot: true }), keep: star >= 0 ? star : parts.length - 1 };
    });
  }

  /** The asset a sensor belongs to, or null when it belongs to none. */
  assetOf(sensor: string): string | null {
    const parts = sensor.split(SEPARATOR);
    for (const glob of this.globs) {
      if (glob.test(sensor))
        return glob.keep > 0 && parts.length > glob.keep ? parts.slice(0, glob.keep).join(SEPARATOR) : null;
    }
    const depth = this.rule.depth;
    if (depth === null || parts.length <= depth) return null;
    return parts.slice(0, depth).join(SEPARATOR);
  }
}

/**
 * The groups of two or more open alerts. Alerts are taken in raise order (ties by id); each joins
 * the latest group of its asset and status if it was raised at most `windowMs` after that group's
 * first-out, else starts a new group. Groups come out in their first-out's raise order.
 */
export function groupAlerts(
  alerts: readonly GroupCandidate[],
  namer: AssetNamer,
  windowMs: number,
): AlertGroup[] {
  const open = alerts
    .filter((a) => a.status !== 'cleared')
    .map((alert) => ({ alert, sinceMs: Date.parse(alert.since) }))
    .sort(
      (x, y) => x.sinceMs - y.sinceMs || (x.alert.id < y.alert.id ? -1 : x.alert.id > y.alert.id ? 1 : 0),
    );
  const latest = new Map<string, { group: AlertGroup; startMs: number }>();
  const all: AlertGroup[] = [];
  for (const { alert, sinceMs } of open) {
    const asset = namer.assetOf(alert.sensor);
    if (asset === null) continue;
    const status = alert.status === 'shelved' ? 'shelved' : 'active';
    const key = `${status}\u0000${asset}`;
    const current = latest.get(key);
    if (current !== undefined && sinceMs - current.startMs <= windowMs) {
      current.group.members.push(alert.id);
      continue;
    }
    const group: AlertGroup = { id: alert.id, asset, status, firstOut: alert.id, members: [alert.id] };
    latest.set(key, { group, startMs: sinceMs });
    all.push(group);
  }
  return all.filter((g) => g.members.length > 1);
}

/** Which group each grouped alert belongs to (alert id -> group). */
export function groupIndex(groups: readonly AlertGroup[]): Map<string, AlertGroup> {
  const byAlert = new Map<string, AlertGroup>();
  for (const group of groups) for (const id of group.members) byAlert.set(id, group);
  return byAlert;
}

/** A one-line problem with a rule, or null when it is usable (for option checking at start-up). */
export function groupRuleProblem(rule: GroupRule): string | null {
  if (
    rule.depth !== null &&
    (!Number.isInteger(rule.depth) || rule.depth < 1 || rule.depth > GROUP_LIMITS.maxDepth)
  )
    return `the group depth must be a whole number from 1 to ${GROUP_LIMITS.maxDepth}`;
  for (const glob of rule.globs) {
    const parts = glob.split(SEPARATOR);
    const star = parts.indexOf('**');
    const keep = star >= 0 ? star : parts.length - 1;
    if (keep < 1)
      return `the group glob "${glob}" names no asset: give at least one segment before the sensor part, e.g. "line-1/chiller/*"`;
  }
  if (
    !Number.isFinite(rule.windowMs) ||
    rule.windowMs < 0 ||
    rule.windowMs > GROUP_LIMITS.maxWindowMinutes * 60_000
  )
    return `the group window must be from 0 to ${GROUP_LIMITS.maxWindowMinutes} minutes`;
  return null;
}
