/**
 * `streamfence alerts`: follow alert events (and operator actions) in the terminal. One line per
 * event, coloured only on a terminal without NO_COLOR; `--json` passes the messages through as
 * NDJSON for other programs.
 */
import picomatch from 'picomatch';
import { actionLine, eventLine, passesSeverity } from '../../../libs/board/line.js';
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
  -h, --help            this help

${connectionHelp({ kafka: true })}

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
};

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    { ...parseArgsOptions(KAFKA_OPTIONS), ...OPTIONS },
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
  const style = { color };

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

  // With --once, messages of the two topics are merged in time order before printing (each topic
  // arrives in its own order); when following, lines are printed as they come.
  type Item = { ts: number; seq: number; render: () => string | null };
  let held: Item[] = [];
  let seq = 0;
  const flush = () => {
    held.sort((a, b) => a.ts - b.ts || a.seq - b.seq);
    for (const it of held) {
      const line = it.render();
      if (line !== null) out(line);
    }
    held = [];
  };
  const emit = (ts: number, render: () => string | null) => {
    if (!once) {
      const line = render();
      if (line !== null) out(line);
      return;
    }
    held.push({ ts, seq: seq++, render });
    if (held.length >= HOLD_CAP) flush();
  };

  const readWhat = `read ${topics.length > 1 ? 'topics' : 'topic'} ${topics.join(' and ')}`;
  let follower: Awaited<ReturnType<typeof follow>>;
  try {
    follower = await follow({
      kafka,
      topics,
      sinceMs,
      untilEnd: once,
      role: 'alerts',
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
          if (!sensorOk(ev.sensor) || !passesSeverity(ev.severity, floor)) return;
          emit(Date.parse(ev.ts), () => (json ? JSON.stringify(v) : eventLine(ev, style)));
          return;
        }
        const msg = v as Partial<ActionMessage>;
        const act = msg?.kind === 'streamfence.operator-action' ? asAction(msg.action) : null;
        if (act === null) return;
        emit(Date.parse(act.at), () => {
          const k = known.get(act.id);
          const filtered = glob !== undefined || floor !== null;
          if (filtered && (k === undefined || !sensorOk(k.sensor) || !passesSeverity(k.severity, floor)))
            return null;
          return json ? JSON.stringify(v) : actionLine(act, k?.sensor ?? null, style);
        });
      },
    });
  } catch (e) {
    throw kafkaRefusal(e, kafkaSettings, readWhat) ?? e;
  }
  const stop = () => void follower.stop();
  const releaseSignals = onStopSignal(stop);
  const poll = setInterval(() => {
    if (broken) stop();
  }, 200);
  try {
    await follower.done;
  } catch (e) {
    throw kafkaRefusal(e, kafkaSettings, readWhat) ?? e;
  } finally {
    clearInterval(poll);
    releaseSignals();
  }
  flush();
  return 0;
}
