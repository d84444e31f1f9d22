/**
 * `streamfence alerts`: follow alert events (and operator actions) in the terminal. One line per
 * event, coloured only on a terminal without NO_COLOR; `--json` passes the messages through as
 * NDJSON for other programs.
 */
import picomatch from 'picomatch';
import {
  actionLine,
  eventLine,
  passesSeverity,
  LINE_WIDTH,
  type GroupMark,
} from '../../../libs/board/line.js';
import { AssetNamer, groupAlerts, type GroupRule } from '../../../libs/board/groups.js';
import { BoardStore } from '../../../libs/board/store.js';
import { GROUP_ARG_OPTIONS, GROUP_HELP, readGroupRule } from '../../board/group-options.js';
import { isSeverity, SEVERITIES, type Severity } from '../../../libs/schema/vocabulary.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { ENV } from '../../config/env.js';
import { follow } from '../../board/follow.js';
import {
  ResumingFollower,
  followStartFailure,
  startWaitingOutOutages,
  type ResumingFollowOptions,
} from '../../board/resume.js';
import { StreamfenceError } from '../../../libs/errors/index.js';
import { kafkaOutage, retryLine } from '../../connect/outage.js';
import {
  KAFKA_OPTIONS,
  buildKafka,
  checkKafka,
  connectionHelp,
  kafkaFailure,
  kafkaRefusal,
  parseArgsOptions,
  readKafkaSettings,
  type KafkaSettings,
} from '../../connect/index.js';
import type { Kafka } from 'kafkajs';
import { asAction, asAlertEvent, type ActionMessage } from '../../board/live.js';
import {
  optionLabel,
  parseCommandArgs,
  type ParsedArgs,
  parseTimeOrAgo,
  printBanner,
  printHelp,
  stringOption,
  usageError,
  warnNoEffect,
} from '../../setup/args.js';
import { onStopSignal } from '../../setup/signals.js';

const CMD = 'alerts';
const KNOWN_CAP = 100_000;
const HOLD_CAP = 200_000;
/** While following, lines wait this long so the two topics' messages print in time order. */
const REORDER_MS = 250;
/** Longest a fetch waits on the broker: it bounds how long Ctrl-C takes to stop. */
const FETCH_WAIT_MS = 300;
/** How long a stop waits for the consumer to leave its group before exiting anyway. */
const STOP_GRACE_MS = 600;

const HELP = `streamfence alerts: follow alert events in the terminal

Usage: streamfence alerts --brokers HOST:PORT[,...] [options]

Options:
  --alert-topic NAME    alert topic (default sensor-alerts; env ${ENV.alertTopic})
  --action-topic NAME   operator action topic (default sensor-alert-actions, skipped if it does
                        not exist; a topic named here must exist; env ${ENV.actionTopic})
  --no-actions          do not show operator actions (env ${ENV.alertsNoActions})
  --severity LEVEL      warning (warnings and criticals) or critical (criticals only) (env ${ENV.alertsSeverity})
  --sensor GLOB         only sensors matching the glob, e.g. "line-1/**" (env ${ENV.alertsSensor})
  --since TIME|AGO      start at this Kafka message time (when the monitor published the event,
                        not the reading time): ISO-8601 with a zone (2026-03-02T06:00:00Z), epoch
                        ms, or a duration back from now (2h); default: all the topic keeps (env ${ENV.since})
  --once                print what is there now and exit (do not follow) (env ${ENV.alertsOnce})
  --json                one JSON message per line (NDJSON), unchanged, for piping (env ${ENV.alertsJson})
  --wide                whole messages (lines are otherwise cut at a word to fit ${LINE_WIDTH} columns;
                        env ${ENV.alertsWide})
${GROUP_HELP}
  -h, --help            this help

${connectionHelp({ kafka: true })}

Every line names the sensor; lines print in time order (alert events by reading time, operator
actions by the board's clock). An alert that belongs to a group (alerts of one asset raised within
the window of the first) has its event lines tagged [first-out of ASSET] or [grouped, first-out
SENSOR]; operator action lines keep the room for who acted and why.
Lines are coloured only when stdout is a terminal and NO_COLOR is not set.
${NOTICE}
`;

/**
 * --since as a time with a zone (or epoch ms) or a duration back from now; it selects by Kafka
 * message time. A time without a zone is refused, as readings refuse it.
 */
export function parseSince(raw: string, now: number, cmd: string, label = '--since'): number {
  return parseTimeOrAgo(raw, label, now, cmd);
}

/** alerts' own options (the Kafka connection options are services/connect's). */
export const OPTIONS = {
  'alert-topic': { type: 'string' },
  'action-topic': { type: 'string' },
  'no-actions': { type: 'boolean' },
  severity: { type: 'string' },
  sensor: { type: 'string' },
  since: { type: 'string' },
  once: { type: 'boolean' },
  json: { type: 'boolean' },
  wide: { type: 'boolean' },
} as const;

/** The environment variable of each option (a flag wins over its variable). */
export const OPTION_ENV: Record<keyof typeof OPTIONS, string> = {
  'alert-topic': ENV.alertTopic,
  'action-topic': ENV.actionTopic,
  'no-actions': ENV.alertsNoActions,
  severity: ENV.alertsSeverity,
  sensor: ENV.alertsSensor,
  since: ENV.since,
  once: ENV.alertsOnce,
  json: ENV.alertsJson,
  wide: ENV.alertsWide,
};

/** What `alerts` was asked to show, read from its flags and their variables. */
interface AlertsRequest {
  kafkaSettings: KafkaSettings;
  alertTopic: string;
  /** The action topic named by the user, or undefined for the default one (skipped if absent). */
  actionTopicOption: string | undefined;
  noActions: boolean;
  severityFloor: Severity | null;
  sensorGlob: string | undefined;
  sinceMs: number | null;
  json: boolean;
  once: boolean;
  wide: boolean;
}

function readRequest(args: ParsedArgs): AlertsRequest {
  const kafkaSettings = readKafkaSettings(args.values, process.env, { cmd: CMD });
  const alertTopic = stringOption(args, 'alert-topic', CMD) ?? 'sensor-alerts';
  const actionTopicOption = stringOption(args, 'action-topic', CMD);
  const severityRaw = stringOption(args, 'severity', CMD);
  if (severityRaw !== undefined && !isSeverity(severityRaw)) {
    usageError(`--severity must be ${SEVERITIES.join(' or ')}, got "${severityRaw}"`, CMD);
  }
  const sensorGlob = stringOption(args, 'sensor', CMD);
  const sinceRaw = stringOption(args, 'since', CMD);
  const sinceMs =
    sinceRaw === undefined ? null : parseSince(sinceRaw, Date.now(), CMD, optionLabel(args, 'since'));
  const noActions = args.values['no-actions'] === true;
  if (noActions) warnNoEffect(CMD, args, ['action-topic'], 'with --no-actions');
  return {
    kafkaSettings,
    alertTopic,
    actionTopicOption,
    noActions,
    severityFloor: (severityRaw ?? null) as Severity | null,
    sensorGlob,
    sinceMs,
    json: args.values.json === true,
    once: args.values.once === true,
    wide: args.values.wide === true,
  };
}

/**
 * The topics to follow: the alert topic, and the action topic unless --no-actions. A named action
 * topic must exist; the default one is skipped with a note when it does not. `existing` is the
 * one-shot check's topic list, or null when following (then the topics are listed here, and a
 * Kafka that does not answer rejects: the start is retried as an outage).
 */
async function topicsToFollow(
  request: AlertsRequest,
  kafka: Kafka,
  existing: Set<string> | null,
): Promise<string[]> {
  const topics = [request.alertTopic];
  if (request.noActions) return topics;
  const actionTopic = request.actionTopicOption ?? 'sensor-alert-actions';
  let exists = existing?.has(actionTopic) ?? false;
  if (existing === null) {
    const admin = kafka.admin();
    try {
      await admin.connect();
      exists = (await admin.listTopics()).includes(actionTopic);
    } finally {
      await admin.disconnect().catch(() => {});
    }
  }
  if (exists) topics.push(actionTopic);
  else if (request.actionTopicOption !== undefined)
    // Worded as the board and follow() word a missing topic (not an argument mistake: the name may be right).
    throw new StreamfenceError(
      'NOT_FOUND',
      `Kafka topic "${actionTopic}" does not exist (--action-topic); check the topic name or create it first`,
    );
  else
    process.stderr.write(`streamfence alerts: no action topic "${actionTopic}"; showing alert events only\n`);
  return topics;
}

/**
 * Open alerts as the board sees them, to tag group membership the same way the board groups cards.
 */
class GroupTagger {
  readonly board = new BoardStore({ clearedKeep: 0 });
  private readonly assets: AssetNamer;

  constructor(private readonly rule: GroupRule) {
    this.assets = new AssetNamer(rule);
  }

  /** The group mark of an open alert, or null when it is in no group. */
  markOf(id: string): GroupMark | null {
    const open = this.board.list();
    const group = groupAlerts(open, this.assets, this.rule.windowMs).find((g) => g.members.includes(id));
    if (group === undefined) return null;
    const first = open.find((alert) => alert.id === group.firstOut);
    return {
      asset: group.asset,
      firstOutSensor: first?.sensor ?? group.firstOut,
      isFirstOut: id === group.firstOut,
    };
  }
}

/**
 * Prints lines in time order. Each topic arrives in its own order, so lines are held: everything
 * present at start is merged before the first line, and while following, lines wait REORDER_MS.
 * Rendering (which also tracks the open alerts for group tags) runs in that order.
 */
class TimeOrderedPrinter {
  /** The reader went away (e.g. `| head`): stop quietly. */
  broken = false;
  private held: { ts: number; seq: number; render: () => string | null }[] = [];
  private seq = 0;

  constructor() {
    process.stdout.on('error', () => {
      this.broken = true;
    });
  }

  /** Holds a line to print at its time; `render` runs when it prints and may drop it (null). */
  emit(ts: number, render: () => string | null): void {
    this.held.push({ ts, seq: this.seq++, render });
    if (this.held.length >= HOLD_CAP) this.flush();
  }

  /** Prints every held line in time order. */
  flush(): void {
    this.held.sort((a, b) => a.ts - b.ts || a.seq - b.seq);
    const batch = this.held;
    this.held = [];
    for (const item of batch) {
      const line = item.render();
      if (line !== null && !this.broken) process.stdout.write(`${line}\n`);
    }
  }
}

/** Turns the followed topics' messages into held lines, applying the filters. */
function messageHandler(
  request: AlertsRequest,
  printer: TimeOrderedPrinter,
  tagger: GroupTagger,
): (message: { topic: string; value: Buffer | null }) => void {
  const color = !request.json && process.stdout.isTTY === true && !process.env.NO_COLOR;
  const style = { color, wide: request.wide };
  const floor = request.severityFloor;
  const glob = request.sensorGlob;
  const sensorOk = glob === undefined ? () => true : picomatch(glob, { dot: true });
  // What filters and action lines need to know about an alert: its sensor and severity. Bounded:
  // the oldest entries go first once the cap is reached.
  const known = new Map<string, { sensor: string; severity: Severity }>();
  const remember = (id: string, info: { sensor: string; severity: Severity }) => {
    known.delete(id);
    known.set(id, info);
    if (known.size > KNOWN_CAP) known.delete(known.keys().next().value as string);
  };
  return (message) => {
    let value: unknown;
    try {
      value = JSON.parse(message.value?.toString('utf8') ?? '');
    } catch {
      return;
    }
    if (message.topic === request.alertTopic) {
      const event = asAlertEvent(value);
      if (event === null) return;
      remember(event.id, { sensor: event.sensor, severity: event.severity });
      const shown = sensorOk(event.sensor) && passesSeverity(event.severity, floor);
      printer.emit(Date.parse(event.ts), () => {
        // A clear is tagged with the group it left; a raise or update with the group it is in.
        const before = event.state === 'cleared' && shown && !request.json ? tagger.markOf(event.id) : null;
        tagger.board.applyEvent(event, Date.parse(event.ts));
        if (!shown) return null;
        if (request.json) return JSON.stringify(value);
        return eventLine(event, style, event.state === 'cleared' ? before : tagger.markOf(event.id));
      });
      return;
    }
    const actionMessage = value as Partial<ActionMessage>;
    const action =
      actionMessage?.kind === 'streamfence.operator-action' ? asAction(actionMessage.action) : null;
    if (action === null) return;
    printer.emit(Date.parse(action.at), () => {
      tagger.board.applyAction(action, Date.parse(action.at));
      const alert = known.get(action.id);
      const sensor =
        alert?.sensor ?? (typeof actionMessage.sensor === 'string' ? actionMessage.sensor : null);
      const filtered = glob !== undefined || floor !== null;
      if (
        filtered &&
        (sensor === null ||
          !sensorOk(sensor) ||
          (alert !== undefined && !passesSeverity(alert.severity, floor)))
      )
        return null;
      return request.json ? JSON.stringify(value) : actionLine(action, sensor, style);
    });
  };
}

/**
 * Waits until the follower is done (--once caught up, or a failure) or a stop is asked for.
 * Stopping must feel immediate (Ctrl-C): the caller prints what is held, and the consumer gets a
 * moment to leave its group. A viewer group never commits, so one left behind only lingers until
 * its session times out.
 */
async function untilDoneOrStopped(
  follower: { stop(): Promise<void>; done: Promise<void> },
  printer: TimeOrderedPrinter,
): Promise<void> {
  let stopping = false;
  let stopped!: () => void;
  const stoppedOrGrace = new Promise<void>((resolve) => (stopped = resolve));
  const stop = () => {
    if (stopping) return;
    stopping = true;
    const grace = new Promise<void>((resolve) => setTimeout(resolve, STOP_GRACE_MS).unref());
    void Promise.race([follower.stop(), grace]).then(stopped);
  };
  const releaseSignals = onStopSignal(stop);
  const poll = setInterval(() => {
    if (printer.broken) stop();
  }, 200);
  try {
    await Promise.race([follower.done, stoppedOrGrace]);
  } finally {
    clearInterval(poll);
    releaseSignals();
  }
}

/** What a follower of `topics` does, for ACL wording. */
const readWhat = (topics: string[]): string =>
  `read ${topics.length > 1 ? 'topics' : 'topic'} ${topics.join(' and ')}`;

type FollowBase = Omit<ResumingFollowOptions, 'onRetry' | 'onFollowing' | 'topics'>;

/**
 * Following (not --once), as the board does: an unreachable Kafka, at start or later, is an outage
 * that may end: one line per attempt naming the address and the cause, and once it answers the
 * view follows (a follower that fails later goes on from the offsets it had reached). A refusal no
 * wait can fix (a missing topic, an ACL, a certificate) ends the start with its one line. Resolves
 * null when a stop signal came before following began.
 */
async function startFollowing(
  request: AlertsRequest,
  kafka: Kafka,
  options: FollowBase,
): Promise<ResumingFollower | null> {
  const { kafkaSettings } = request;
  const say = (line: string) => process.stderr.write(`streamfence alerts: ${line}\n`);
  let topics: string[] | null = null;
  let follower: ResumingFollower | null = null;
  let waited = false;
  const started = await startWaitingOutOutages({
    attempt: async () => {
      topics ??= await topicsToFollow(request, kafka, null);
      const followed = topics;
      follower = new ResumingFollower({
        ...options,
        topics: followed,
        onRetry: (err, delayMs) =>
          say(retryLine(kafkaOutage(err, kafkaSettings, readWhat(followed)), delayMs)),
        onFollowing: () => say(`following ${followed.join(' and ')} again`),
      });
      await follower.start();
    },
    classify: (err) => followStartFailure(err, kafkaSettings, readWhat(topics ?? [request.alertTopic])),
    onRetry: (outage, delayMs) => {
      waited = true;
      say(retryLine(outage, delayMs));
    },
  });
  const last = follower as ResumingFollower | null;
  if (started === 'stopped') {
    await last?.stop();
    return null;
  }
  if (waited) say(`following ${topics!.join(' and ')}`);
  return last;
}

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    { ...parseArgsOptions(KAFKA_OPTIONS), ...OPTIONS, ...GROUP_ARG_OPTIONS },
    false,
    OPTION_ENV,
  );
  if (args.help) return printHelp(HELP);
  const request = readRequest(args);
  const { kafkaSettings, alertTopic, once } = request;
  // A one-shot look (--once) checks Kafka and the topics first: a wrong address or topic name is
  // one line at once. Following keeps to the path below, which follow() reports on.
  const actionRequired =
    request.actionTopicOption !== undefined && !request.noActions ? [request.actionTopicOption] : [];
  const existing = once
    ? await checkKafka(kafkaSettings, {
        clientId: 'streamfence-alerts',
        required: [alertTopic, ...actionRequired],
        what: `read topic ${alertTopic}`,
      })
    : null;
  const tagger = new GroupTagger(readGroupRule(args, process.env, CMD));

  printBanner(CMD);
  // Following retries fewer times per attempt (as the board): each start attempt is then one line
  // within a few seconds; a one-shot look keeps more, to ride out a broker's short hiccup.
  const kafka = buildKafka(kafkaSettings, { clientId: 'streamfence-alerts', retries: once ? 5 : 2 });
  const printer = new TimeOrderedPrinter();
  let caughtUp = false;
  // Unref'd: a failed start must not be kept alive by this timer.
  const reorder = setInterval(() => {
    if (caughtUp && !once) printer.flush();
  }, REORDER_MS).unref();

  const followOptions: FollowBase = {
    kafka,
    sinceMs: request.sinceMs,
    role: 'alerts',
    maxWaitMs: FETCH_WAIT_MS,
    onCaughtUp: () => {
      caughtUp = true;
      if (!once) printer.flush();
    },
    onMessage: messageHandler(request, printer, tagger),
  };
  try {
    if (once) {
      const topics = await topicsToFollow(request, kafka, existing);
      try {
        await untilDoneOrStopped(await follow({ ...followOptions, topics, untilEnd: true }), printer);
      } catch (err) {
        // The broker went away since the check: the same one line as the check gives.
        throw err instanceof StreamfenceError && err.code === 'SERVICE_UNAVAILABLE'
          ? kafkaFailure(err.cause ?? err, kafkaSettings, readWhat(topics))
          : (kafkaRefusal(err, kafkaSettings, readWhat(topics)) ?? err);
      }
    } else {
      const follower = await startFollowing(request, kafka, followOptions);
      if (follower !== null) await untilDoneOrStopped(follower, printer);
    }
  } finally {
    clearInterval(reorder);
  }
  printer.flush();
  return 0;
}
