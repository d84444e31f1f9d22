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
  connectionHelp,
  parseArgsOptions,
  readKafkaSettings,
  readRedisSettings,
  type KafkaSettings,
  type RedisSettings,
} from '../../connect/index.js';
import type { RedisClient } from '../../connect/index.js';
import type { GroupRule } from '../../../libs/board/groups.js';
import { MIN_BOARD_TOKEN_LENGTH, boardTokenFor, readBoardToken, refuseTokenFlag } from '../../board/auth.js';
import { BoardHub } from '../../board/hub.js';
import { GROUP_ARG_OPTIONS, GROUP_HELP, readGroupRule } from '../../board/group-options.js';
import { LiveFeed, ShareFailure } from '../../board/live.js';
import type { OperatorAction } from '../../../libs/board/store.js';
import { createBoardMetrics, type LiveBoardMetrics } from '../../metrics/board-metrics.js';
import { BoardReadiness } from '../../board/readiness.js';
import { startBoardServer, type RunningBoard } from '../../board/server.js';
import {
  PORT_OR_ANY_RULE,
  numberOption,
  optionLabel,
  parseCommandArgs,
  type ParsedArgs,
  printBanner,
  printHelp,
  stringOption,
} from '../../setup/args.js';
import { kafkaOutage, redisOutage, retryLine, RedisErrorWatch, type Outage } from '../../connect/outage.js';
import { followStartFailure, startWaitingOutOutages } from '../../board/resume.js';
import { untilStopSignal } from '../../setup/signals.js';
import { parseSince } from './alerts.js';

const CMD = 'board';

const HELP = `streamfence board: serve the operator board for the live system

Usage: streamfence board --brokers HOST:PORT[,...] --redis URL [options]

Options:
  --alert-topic NAME    topic the monitor publishes alert events to (default sensor-alerts; env ${ENV.alertTopic})
  --action-topic NAME   topic operator actions are shared on (default sensor-alert-actions; env ${ENV.actionTopic})
  --state-prefix P      prefix of the Redis keys (default streamfence; env ${ENV.statePrefix})
  --since TIME|AGO      read alert history from this Kafka message time (when the monitor published
                        the event, not the reading time): ISO-8601 with a zone, epoch ms, or a
                        duration back from now (24h); default: all the topic keeps (env ${ENV.since})
  --port N              HTTP port, 1-65535 (default 8080; 0 picks a free one; env ${ENV.boardPort})
  --host ADDR           address to listen on (default 127.0.0.1; any other needs a token; env ${ENV.boardHost})
  --board-token-file F  file holding the token operators' actions must carry (env
                        ${ENV.boardTokenFile}); or set the token itself in ${ENV.boardToken}.
                        At least ${MIN_BOARD_TOKEN_LENGTH} characters; never given as a flag value.
${GROUP_HELP}
  -h, --help            this help

${connectionHelp({ kafka: true, redis: true })}
Redis keeps the durable record of operator actions.

The board reads the topics with a consumer group of its own that never commits, so it never moves
the monitor's position. Both topics must exist.
${NOTICE}
`;

/** board's own options (the Kafka and Redis connection options are services/connect's). */
export const OPTIONS = {
  'alert-topic': { type: 'string' },
  'action-topic': { type: 'string' },
  'state-prefix': { type: 'string' },
  since: { type: 'string' },
  port: { type: 'string' },
  host: { type: 'string' },
  'board-token-file': { type: 'string' },
  /** Accepted only to be refused with the way to give the token: a flag value shows in `ps`. */
  'board-token': { type: 'string' },
} as const;

/** The environment variable of each option (a flag wins over its variable). */
export const OPTION_ENV: Record<Exclude<keyof typeof OPTIONS, 'board-token'>, string> = {
  'alert-topic': ENV.alertTopic,
  'action-topic': ENV.actionTopic,
  'state-prefix': ENV.statePrefix,
  since: ENV.since,
  port: ENV.boardPort,
  host: ENV.boardHost,
  'board-token-file': ENV.boardTokenFile,
};

/** What `board` was asked to serve, read from its flags and their variables. */
interface BoardRequest {
  kafkaSettings: KafkaSettings;
  redisSettings: RedisSettings;
  alertTopic: string;
  actionTopic: string;
  prefix: string;
  sinceMs: number | null;
  port: number;
  host: string;
  token: string | null;
  groupRule: GroupRule;
}

function readRequest(args: ParsedArgs): BoardRequest {
  const kafkaSettings = readKafkaSettings(args.values, process.env, { cmd: CMD });
  const redisSettings = readRedisSettings(args.values, process.env, {
    cmd: CMD,
    required: true,
    why: 'operator actions are kept there',
  });
  const alertTopic = stringOption(args, 'alert-topic', CMD) ?? 'sensor-alerts';
  const actionTopic = stringOption(args, 'action-topic', CMD) ?? 'sensor-alert-actions';
  const prefix = stringOption(args, 'state-prefix', CMD) ?? 'streamfence';
  const sinceRaw = stringOption(args, 'since', CMD);
  const sinceMs =
    sinceRaw === undefined ? null : parseSince(sinceRaw, Date.now(), CMD, optionLabel(args, 'since'));
  const port = numberOption(args, 'port', CMD, { ...PORT_OR_ANY_RULE, fallback: 8080 });
  const host = stringOption(args, 'host', CMD) ?? '127.0.0.1';
  if (args.values['board-token'] !== undefined) refuseTokenFlag(CMD);
  const token = boardTokenFor(host, readBoardToken(stringOption(args, 'board-token-file', CMD), process.env));
  const groupRule = readGroupRule(args, process.env, CMD);
  return {
    kafkaSettings,
    redisSettings,
    alertTopic,
    actionTopic,
    prefix,
    sinceMs,
    port,
    host,
    token,
    groupRule,
  };
}

/** What the board's follower does, for ACL wording. */
const readWhat = (request: BoardRequest): string => `read ${request.alertTopic} and ${request.actionTopic}`;

/** One line and one count per retry, as `run` logs and counts its own; returns the line. */
function noteRetry(metrics: LiveBoardMetrics, outage: Outage, delayMs: number | null): string {
  metrics.backoff.inc({ dependency: outage.dependency, cause: outage.cause });
  const line = retryLine(outage, delayMs);
  process.stderr.write(`streamfence board: ${line}\n`);
  return line;
}

/** What an operator action is called in the line the operator reads. */
const ACTION_WORDS: Record<OperatorAction['kind'], string> = {
  acknowledge: 'acknowledgement',
  shelve: 'shelve',
  unshelve: 'unshelve',
};

/**
 * Shares an operator action. When Redis or Kafka refuses it, logs one line, counts it and throws
 * the line the operator sees with the 503 (the dependency, the cause, "try again"), never the
 * client library's text. Redis first: when only Kafka refused, the action is kept (a board
 * starting reads it) but other open boards have not heard of it.
 */
async function shareOrRefuse(
  feed: LiveFeed,
  action: OperatorAction,
  request: BoardRequest,
  metrics: LiveBoardMetrics,
  redisWatch: RedisErrorWatch,
): Promise<void> {
  try {
    await feed.share(action);
  } catch (err) {
    if (!(err instanceof ShareFailure)) throw err;
    const outage =
      err.dependency === 'redis'
        ? redisOutage(err.error, request.redisSettings, redisWatch.lastError)
        : kafkaOutage(err.error, request.kafkaSettings, `write topic ${request.actionTopic}`);
    metrics.actionFailures.inc({ dependency: outage.dependency, cause: outage.cause });
    process.stderr.write(
      `streamfence board: ${action.kind} of alert ${action.id} not taken: ${outage.line}\n`,
    );
    const what = ACTION_WORDS[action.kind];
    throw new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      err.dependency === 'redis'
        ? `${what} not recorded: ${outage.line}; try again in a moment`
        : `${what} not shared with the other boards: ${outage.line}; try again in a moment`,
    );
  }
}

/**
 * Starts the feed, waiting out an unreachable Kafka or Redis as an outage that may end (as `run`
 * does, with the loop following `alerts` shares): one line per attempt, retried until it answers or
 * a stop signal comes; the board (already serving) shows the same line and stays not ready
 * meanwhile. A refusal waiting cannot fix (auth, certificate, ACL, a missing topic) is thrown
 * (exit 2). Resolves 'stopped' when a stop signal came first.
 */
async function startFeedWaitingOutOutages(
  feed: LiveFeed,
  redis: RedisClient,
  request: BoardRequest,
  readiness: BoardReadiness,
  metrics: LiveBoardMetrics,
): Promise<'started' | 'stopped'> {
  const redisWatch = new RedisErrorWatch(redis);
  let dependency: 'kafka' | 'redis' = 'redis';
  const started = await startWaitingOutOutages({
    attempt: async () => {
      dependency = 'redis';
      await redis.ping();
      dependency = 'kafka';
      await feed.start();
    },
    // Whatever the feed opened (its producer) is closed, so a refused board exits at once.
    cleanUp: () => feed.stop(),
    classify: (err) =>
      dependency === 'redis'
        ? redisOutage(err, request.redisSettings, redisWatch.lastError)
        : followStartFailure(err, request.kafkaSettings, readWhat(request)),
    onRetry: (outage, delayMs) => readiness.wait(noteRetry(metrics, outage, delayMs)),
  });
  if (started === 'started') readiness.markReady();
  return started;
}

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    {
      ...parseArgsOptions(KAFKA_OPTIONS),
      ...parseArgsOptions(REDIS_OPTIONS),
      ...OPTIONS,
      ...GROUP_ARG_OPTIONS,
    },
    false,
    OPTION_ENV,
  );
  if (args.help) return printHelp(HELP);
  const request = readRequest(args);
  const { alertTopic, actionTopic } = request;

  printBanner(CMD);
  const redis = buildRedis(request.redisSettings);
  const actionRedisWatch = new RedisErrorWatch(redis);
  const kafka = buildKafka(request.kafkaSettings, { clientId: 'streamfence-board', retries: 2 });
  let feed: LiveFeed | null = null;
  // Served before Kafka and Redis answer (the page says what it waits for; /readyz 503 until then),
  // so a port in use is refused at once and a service manager sees the board alive while it waits.
  const readiness = new BoardReadiness();
  const hub = new BoardHub({
    mode: 'live',
    groupRule: request.groupRule,
    clock: { wall: () => Date.now(), plant: () => Date.now() },
    share: (action) => shareOrRefuse(feed!, action, request, metrics, actionRedisWatch),
  });
  const metrics = createBoardMetrics(hub);
  feed = new LiveFeed(hub, {
    kafka,
    redis,
    prefix: request.prefix,
    alertTopic,
    actionTopic,
    sinceMs: request.sinceMs,
    onSkip: (why) => process.stderr.write(`streamfence board: ${why}\n`),
    // Once running, a refusal too is waited out (an ACL may be granted again): never a crash loop.
    // Not ready meanwhile (/readyz 503 with the line); ready again once it follows its topics.
    onRetry: (err, delayMs) =>
      readiness.wait(noteRetry(metrics, kafkaOutage(err, request.kafkaSettings, readWhat(request)), delayMs)),
    onFollowing: () => readiness.markReady(),
  });
  let board: RunningBoard;
  try {
    board = await startBoardServer({
      hub,
      metrics,
      host: request.host,
      port: request.port,
      token: request.token,
      readiness,
    });
  } catch (err) {
    redis.disconnect();
    throw err;
  }
  process.stdout.write(`streamfence board: board at ${board.url}/\n`);
  let started: 'started' | 'stopped';
  try {
    started = await startFeedWaitingOutOutages(feed, redis, request, readiness, metrics);
  } catch (err) {
    await board.close();
    redis.disconnect();
    throw err;
  }
  if (started === 'started') {
    process.stdout.write(`streamfence board: following ${alertTopic} and ${actionTopic}\n`);
    await untilStopSignal();
  }
  await board.close();
  await feed.stop();
  redis.disconnect();
  process.stderr.write('streamfence board: stopped\n');
  return 0;
}
