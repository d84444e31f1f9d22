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
import { AssetNamer, groupAlerts } from '../../../libs/board/groups.js';
import { BoardStore } from '../../../libs/board/store.js';
import { GROUP_ARG_OPTIONS, GROUP_HELP, readGroupRule } from '../../board/group-options.js';
import { isSeverity, SEVERITIES, type Severity } from '../../../libs/schema/vocabulary.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { ENV } from '../../config/env.js';
import { follow } from '../../board/follow.js';
import {
  KAFKA_OPTIONS,
  buildKafka,
  checkKafka,
  connectionHelp,
  kafkaRefusal,
  parseArgsOptions,
  readKafkaSettings,
} from '../../connect/index.js';
import { asAction, asAlertEvent, type ActionMessage } from '../../board/live.js';
import {
  optionLabel,
  parseCommandArgs,
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

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    { ...parseArgsOptions(KAFKA_OPTIONS), ...OPTIONS, ...GROUP_ARG_OPTIONS },
    false,
    OPTION_ENV,
  );
  if (args.help) return printHelp(HELP);
  const kafkaSettings = readKafkaSettings(args.values, process.env, { cmd: CMD });
  const alertTopic = stringOption(args, 'alert-topic', CMD) ?? 'sensor-alerts';
  const actionTopicOpt = stringOption(args, 'action-topic', CMD);
  const severityRaw = stringOption(args, 'severity', CMD);
  if (severityRaw !== undefined && !isSeverity(severityRaw)) {
    usageError(`--severity must be ${SEVERITIES.join(' or ')}, got "${severityRaw}"`, CMD);
  }
  const floor = (severityRaw ?? null) as Severity | null;
  const glob = stringOption(args, 'sensor', CMD);
  const sensorOk = glob === undefined ? () => true : picomatch(glob, { dot: true });
  const sinceRaw = stringOption(args, 'since', CMD);
  const sinceMs =
    sinceRaw === undefined ? null : parseSince(sinceRaw, Date.now(), CMD, optionLabel(args, 'since'));
  const json = args.values.json === true;
  const once = args.values.once === true;
  const noActions = args.values['no-actions'] === true;
  if (noActions) warnNoEffect(CMD, args, ['action-topic'], 'with --no-actions');
  // A one-shot look (--once) checks Kafka and the topics first: a wrong address or topic name is
  // one line at once. Following keeps to the path below, which follow() reports on.
  const existing = once
    ? await checkKafka(kafkaSettings, {
        clientId: 'streamfence-alerts',
        required: [alertTopic, ...(actionTopicOpt !== undefined && !noActions ? [actionTopicOpt] : [])],
        what: `read topic ${alertTopic}`,
      })
    : null;
  const color = !json && process.stdout.isTTY === true && !process.env.NO_COLOR;
  const style = { color, wide: args.values.wide === true };
  const groupRule = readGroupRule(args, process.env, CMD);
  const assets = new AssetNamer(groupRule);
  // Open alerts as the board sees them, to tag group membership the same way.
  const board = new BoardStore({ clearedKeep: 0 });
  const markOf = (id: string): GroupMark | null => {
    const open = board.list();
    const group = groupAlerts(open, assets, groupRule.windowMs).find((g) => g.members.includes(id));
    if (group === undefined) return null;
    const first = open.find((a) => a.id === group.firstOut);
    return {
      asset: group.asset,
      firstOutSensor: first?.sensor ?? group.firstOut,
      isFirstOut: id === group.firstOut,
    };
  };

  printBanner(CMD);
  const kafka = buildKafka(kafkaSettings, { clientId: 'streamfence-alerts', retries: 5 });
  const topics = [alertTopic];
  if (!noActions) {
    const actionTopic = actionTopicOpt ?? 'sensor-alert-actions';
    let exists = existing === null ? true : existing.has(actionTopic);
    if (existing === null) {
      const admin = kafka.admin();
      try {
        await admin.connect();
        exists = (await admin.listTopics()).includes(actionTopic);
      } catch {
        // follow() reports an unreachable Kafka with a clear message below.
      } finally {
        await admin.disconnect().catch(() => {});
      }
    }
    if (exists) topics.push(actionTopic);
    else if (actionTopicOpt !== undefined)
      usageError(`the action topic "${actionTopic}" does not exist`, CMD);
    else
      process.stderr.write(
        `streamfence alerts: no action topic "${actionTopic}"; showing alert events only\n`,
      );
  }

  // What filters and action lines need to know about an alert: its sensor and severity. Bounded:
  // the oldest entries go first once the cap is reached.
  const known = new Map<string, { sensor: string; severity: Severity }>();
  const remember = (id: string, info: { sensor: string; severity: Severity }) => {
    known.delete(id);
    known.set(id, info);
    if (known.size > KNOWN_CAP) known.delete(known.keys().next().value as string);
  };
  let broken = false;
  process.stdout.on('error', () => {
    broken = true; // reader went away (e.g. `| head`): stop quietly
  });
  const out = (line: string) => {
    if (!broken) process.stdout.write(`${line}\n`);
  };

  // Each topic arrives in its own order, so lines are held and printed in time order: everything
  // present at start is merged before the first line, and while following, lines wait REORDER_MS.
  // Rendering (which also tracks the open alerts for group tags) runs in that order.
  type Item = { ts: number; seq: number; render: () => string | null };
  let held: Item[] = [];
  let seq = 0;
  let caughtUp = false;
  const flush = () => {
    held.sort((a, b) => a.ts - b.ts || a.seq - b.seq);
    const batch = held;
    held = [];
    for (const it of batch) {
      const line = it.render();
      if (line !== null) out(line);
    }
  };
  const emit = (ts: number, render: () => string | null) => {
    held.push({ ts, seq: seq++, render });
    if (held.length >= HOLD_CAP) flush();
  };
  // Unref'd: a failed start must not be kept alive by this timer.
  const reorder = setInterval(() => {
    if (caughtUp && !once) flush();
  }, REORDER_MS).unref();

  const readWhat = `read ${topics.length > 1 ? 'topics' : 'topic'} ${topics.join(' and ')}`;
  let follower: Awaited<ReturnType<typeof follow>>;
  try {
    follower = await follow({
      kafka,
      topics,
      sinceMs,
      untilEnd: once,
      role: 'alerts',
      maxWaitMs: FETCH_WAIT_MS,
      onCaughtUp: () => {
        caughtUp = true;
        if (!once) flush();
      },
      onMessage: (m) => {
        let v: unknown;
        try {
          v = JSON.parse(m.value?.toString('utf8') ?? '');
        } catch {
          return;
        }
        if (m.topic === alertTopic) {
          const ev = asAlertEvent(v);
          if (ev === null) return;
          remember(ev.id, { sensor: ev.sensor, severity: ev.severity });
          const shown = sensorOk(ev.sensor) && passesSeverity(ev.severity, floor);
          emit(Date.parse(ev.ts), () => {
            // A clear is tagged with the group it left; a raise or update with the group it is in.
            const before = ev.state === 'cleared' && shown && !json ? markOf(ev.id) : null;
            board.applyEvent(ev, Date.parse(ev.ts));
            if (!shown) return null;
            if (json) return JSON.stringify(v);
            return eventLine(ev, style, ev.state === 'cleared' ? before : markOf(ev.id));
          });
          return;
        }
        const msg = v as Partial<ActionMessage>;
        const act = msg?.kind === 'streamfence.operator-action' ? asAction(msg.action) : null;
        if (act === null) return;
        emit(Date.parse(act.at), () => {
          board.applyAction(act, Date.parse(act.at));
          const k = known.get(act.id);
          const sensor = k?.sensor ?? (typeof msg.sensor === 'string' ? msg.sensor : null);
          const filtered = glob !== undefined || floor !== null;
          if (
            filtered &&
            (sensor === null || !sensorOk(sensor) || (k !== undefined && !passesSeverity(k.severity, floor)))
          )
            return null;
          return json ? JSON.stringify(v) : actionLine(act, sensor, style);
        });
      },
    });
  } catch (e) {
    clearInterval(reorder);
    throw kafkaRefusal(e, kafkaSettings, readWhat) ?? e;
  }
  // Stopping must feel immediate (Ctrl-C): print what is held, then give the consumer a moment to
  // leave its group. A viewer group never commits, so one left behind only lingers until its
  // session times out.
  let stopping = false;
  let stopped!: () => void;
  const stoppedOrGrace = new Promise<void>((r) => (stopped = r));
  const stop = () => {
    if (stopping) return;
    stopping = true;
    const grace = new Promise<void>((r) => setTimeout(r, STOP_GRACE_MS).unref());
    void Promise.race([follower.stop(), grace]).then(stopped);
  };
  const releaseSignals = onStopSignal(stop);
  const poll = setInterval(() => {
    if (broken) stop();
  }, 200);
  try {
    await Promise.race([follower.done, stoppedOrGrace]);
  } catch (e) {
    throw kafkaRefusal(e, kafkaSettings, readWhat) ?? e;
  } finally {
    clearInterval(reorder);
    clearInterval(poll);
    releaseSignals();
  }
  flush();
  return 0;
}
