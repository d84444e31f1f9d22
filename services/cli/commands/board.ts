/**
 * `streamfence board`: the operator board for the live system. It follows the alert topic (and the
 * action topic) from Kafka as a viewer of its own, and shares operator actions through Redis and
 * the action topic so every board and terminal view agree.
 */
import { NOTICE } from '../../../libs/schema/notice.js';
import { StreamfenceError } from '../../../libs/errors/index.js';
import { ENV } from '../../config/env.js';
import {
  KAFKA_OPTIONS,
  REDIS_OPTIONS,
  buildKafka,
  buildRedis,
  connectRedis,
  connectionHelp,
  kafkaRefusal,
  parseArgsOptions,
  redisRefusal,
  readKafkaSettings,
  readRedisSettings,
} from '../../connect/index.js';
import { boardTokenFor } from '../../board/auth.js';
import { BoardHub } from '../../board/hub.js';
import { LiveFeed } from '../../board/live.js';
import { createBoardMetrics } from '../../metrics/board-metrics.js';
import { startBoardServer } from '../../board/server.js';
import { parseCommandArgs, printBanner, printHelp, stringOption, numberOption } from '../../setup/args.js';
import { untilStopSignal } from '../../setup/signals.js';
import { parseSince } from './alerts.js';

const CMD = 'board';

const HELP = `streamfence board: serve the operator board for the live system

Usage: streamfence board --brokers HOST:PORT[,...] --redis URL [options]

Options:
  --alert-topic NAME    topic the monitor publishes alert events to (default sensor-alerts, or ${ENV.alertTopic})
  --action-topic NAME   topic operator actions are shared on (default sensor-alert-actions)
  --state-prefix P      prefix of the Redis keys (default streamfence, or ${ENV.statePrefix})
  --since ISO|DURATION  read alert history from this time (e.g. 24h); default: all the topic keeps
  --port N              HTTP port (default 8080; 0 picks a free one)
  --host ADDR           address to listen on (default 127.0.0.1; any other needs --board-token)
  --board-token T       token operators' actions must carry (or STREAMFENCE_BOARD_TOKEN)
  -h, --help            this help

${connectionHelp({ kafka: true, redis: true })}
Redis keeps the durable record of operator actions.

The board reads the topics with a consumer group of its own that never commits, so it never moves
the monitor's position. Both topics must exist.
${NOTICE}
`;

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    {
      ...parseArgsOptions(KAFKA_OPTIONS),
      ...parseArgsOptions(REDIS_OPTIONS),
      'alert-topic': { type: 'string' },
      'action-topic': { type: 'string' },
      'state-prefix': { type: 'string' },
      since: { type: 'string' },
      port: { type: 'string' },
      host: { type: 'string' },
      'board-token': { type: 'string' },
    },
    false,
  );
  if (args.help) return printHelp(HELP);
  const kafkaSettings = readKafkaSettings(args.values, process.env, { cmd: CMD });
  const redisSettings = readRedisSettings(args.values, process.env, {
    cmd: CMD,
    required: true,
    why: 'operator actions are kept there',
  });
  const alertTopic = stringOption(args, 'alert-topic', CMD) ?? process.env[ENV.alertTopic] ?? 'sensor-alerts';
  const actionTopic = stringOption(args, 'action-topic', CMD) ?? 'sensor-alert-actions';
  const prefix = stringOption(args, 'state-prefix', CMD) ?? process.env[ENV.statePrefix] ?? 'streamfence';
  const sinceRaw = stringOption(args, 'since', CMD);
  const sinceMs = sinceRaw === undefined ? null : parseSince(sinceRaw, Date.now(), CMD);
  const port = numberOption(args, 'port', CMD, { whole: true, min: 0, max: 65535, fallback: 8080 });
  const host = stringOption(args, 'host', CMD) ?? '127.0.0.1';
  const token = boardTokenFor(
    host,
    stringOption(args, 'board-token', CMD) ?? process.env.STREAMFENCE_BOARD_TOKEN,
  );

  printBanner(CMD);
  const redis = buildRedis(redisSettings);
  try {
    await connectRedis(redis, redisSettings);
  } catch (e) {
    if (e instanceof StreamfenceError) throw e;
    throw new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      `cannot reach Redis at --redis: ${(e as Error).message}`,
    );
  }
  const kafka = buildKafka(kafkaSettings, { clientId: 'streamfence-board', retries: 5 });
  let feed: LiveFeed | null = null;
  const hub = new BoardHub({
    mode: 'live',
    clock: { wall: () => Date.now(), plant: () => Date.now() },
    share: (a) => feed!.share(a),
  });
  feed = new LiveFeed(hub, {
    kafka,
    redis,
    prefix,
    alertTopic,
    actionTopic,
    sinceMs,
    onSkip: (why) => process.stderr.write(`streamfence board: ${why}\n`),
  });
  try {
    await feed.start();
  } catch (e) {
    redis.disconnect();
    throw (
      kafkaRefusal(e, kafkaSettings, `read ${alertTopic} and ${actionTopic}`) ??
      redisRefusal(e, redisSettings) ??
      e
    );
  }
  const metrics = createBoardMetrics(hub);
  const board = await startBoardServer({ hub, metrics, host, port, token });
  process.stdout.write(
    `streamfence board: following ${alertTopic} and ${actionTopic}; board at ${board.url}/\n`,
  );

  await untilStopSignal();
  await board.close();
  await feed.stop();
  redis.disconnect();
  process.stderr.write('streamfence board: stopped\n');
  return 0;
}
