/**
 * `streamfence run`: the live monitor. Prints the NOTICE banner, connects (waiting out outages),
 * serves /metrics /healthz /readyz, and on SIGTERM/SIGINT stops cleanly within 10 s.
 */
import { hostname } from 'node:os';
import { ENGINE_VERSION } from '../../../libs/engine/engine.js';
import { StreamfenceError } from '../../../libs/errors/index.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { ENV } from '../../config/env.js';
import {
  buildKafka,
  buildRedis,
  describeKafka,
  describeRedis,
  kafkaRefusal,
  redisRefusal,
  redisTarget,
  type KafkaSettings,
  type RedisClient,
  type RedisSettings,
} from '../../connect/index.js';
import { createLogger, type Logger } from '../../log.js';
import { startMetricsServer } from '../../metrics/http.js';
import { createMetrics, type Metrics } from '../../metrics/metrics.js';
import { Monitor } from '../../monitor/monitor.js';
import { optionsHelp, parseRunOptions, RUN_OPTIONS, type MonitorOptions } from '../run-options.js';
import { loadEngineConfig } from '../../setup/config-file.js';
import { onStopSignal } from '../../setup/signals.js';

/**
 * The refusals that end `run` while it starts: wrong credentials, a denied ACL, a certificate the
 * client does not trust. The guesses about plain text sent to a TLS port are left out: a broker or
 * Redis that is down or slow can look the same, and run waits those out.
 */
export function startRefusal(
  kafka: KafkaSettings,
  redis: RedisSettings,
  what: string,
): (dependency: 'kafka' | 'redis', err: unknown) => StreamfenceError | null {
  return (dependency, err) => {
    const refused = dependency === 'redis' ? redisRefusal(err, redis) : kafkaRefusal(err, kafka, what);
    if (refused === null) return null;
    if (refused.code !== 'TLS_FAILED') return refused;
    const tls = dependency === 'redis' ? redisTarget(redis).tls : kafka.tls === true;
    return tls ? refused : null;
  };
}

/** A stop request ends the process within this time (the documented 10 s stop budget). */
export const STOP_DEADLINE_MS = 9_500;

const RUN_HELP = [
  'Usage: streamfence run [options]',
  '',
  'The live monitor: consumes readings {sensor, ts, value} (keyed by sensor id) from Kafka, judges',
  'each against its sensor baseline, publishes alert events, keeps exact state in Redis.',
  '',
  optionsHelp(RUN_OPTIONS),
  '  --help                             this help',
  '',
  `Secrets are read from the environment or files only, never from flags.`,
  `  ${NOTICE}`,
  '',
].join('\n');

/** The monitor with its clients, built from the parsed options (nothing connects yet). */
interface MonitorParts {
  monitor: Monitor;
  redis: RedisClient;
}

function buildMonitor(options: MonitorOptions, log: Logger, metrics: Metrics): MonitorParts {
  const config = loadEngineConfig(options.configFile, `--config (or ${ENV.configFile})`);
  const redis = buildRedis(options.redis);
  let monitorRef: Monitor | null = null;
  const kafka = buildKafka(options.kafka, {
    clientId: `streamfence-${hostname()}-${process.pid}`,
    log,
    // Few retries inside kafkajs: the monitor's own backoff logs and counts each attempt; the
    // requests kafkajs retries itself (fetches, heartbeats) are worded by the monitor too.
    retries: 2,
    onError: (entry) => monitorRef?.noteKafkaClientError(entry),
  });
  log.info(
    {
      kafka: describeKafka(options.kafka),
      redis: describeRedis(options.redis),
      inputTopic: options.inputTopic,
      alertTopic: options.alertTopic,
      rejectedTopic: options.rejectedTopic,
      group: options.group,
      statePrefix: options.statePrefix,
      config: options.configFile,
    },
    'starting',
  );
  const monitor: Monitor = new Monitor({
    kafka,
    redis,
    config,
    settings: {
      statePrefix: options.statePrefix,
      inputTopic: options.inputTopic,
      alertTopic: options.alertTopic,
      rejectedTopic: options.rejectedTopic,
      group: options.group,
      checkpointMs: options.checkpointMs,
      checkpointReadings: options.checkpointReadings,
      maxSensors: options.maxSensors,
      startFrom: options.startFrom,
      warmStart: options.warmStart,
      sessionTimeoutMs: options.sessionTimeoutMs,
    },
    log,
    metrics,
    connection: { kafka: options.kafka, redis: options.redis },
    startRefusal: startRefusal(
      options.kafka,
      options.redis,
      `read ${options.inputTopic} in group ${options.group}`,
    ),
  });
  monitorRef = monitor;
  return { monitor, redis };
}

/**
 * Stops the monitor once (later calls share the first), closing the metrics server and Redis; a
 * stop that overruns the 10 s budget exits the process.
 */
function stopper(
  parts: MonitorParts,
  http: { close(): Promise<void> },
  log: Logger,
): (signal: string) => Promise<number> {
  let stopping: Promise<number> | null = null;
  return (signal) => {
    if (stopping) return stopping;
    log.info({ signal }, 'stop requested');
    const deadline = setTimeout(() => {
      log.error(
        'could not stop cleanly within 10 s; exiting (the next start re-reads from the last checkpoint)',
      );
      process.exit(1);
    }, STOP_DEADLINE_MS);
    deadline.unref();
    stopping = parts.monitor
      .stop()
      .then(
        (outcome) => (outcome.clean ? 0 : 1),
        (err: unknown) => {
          log.error(
            { err: (err as Error).message },
            'stop failed; the next start re-reads from the last checkpoint',
          );
          return 1;
        },
      )
      .finally(async () => {
        await http.close();
        parts.redis.disconnect();
        clearTimeout(deadline);
      });
    return stopping;
  };
}

/** Ends the process with `code` even if a library left a handle open (unref'd: a clean exit is not delayed). */
function exitSoon(code: number): void {
  setTimeout(() => process.exit(code), 1_000).unref();
}

export async function main(argv: string[]): Promise<number> {
  const parsed = parseRunOptions(argv, process.env);
  if (parsed.help) {
    process.stdout.write(RUN_HELP);
    return 0;
  }
  const options = parsed.opts;
  const log = createLogger('streamfence-run', options.logLevel);
  log.info({ notice: NOTICE, engine: ENGINE_VERSION }, `streamfence run: ${NOTICE}`);

  const metrics = createMetrics();
  const parts = buildMonitor(options, log, metrics);
  const { monitor } = parts;
  const http = await startMetricsServer(metrics.registry, options.metricsPort, () => monitor.readiness());
  log.info({ port: http.port }, `metrics listening on port ${http.port}`);
  const stop = stopper(parts, http, log);

  return new Promise<number>((resolve) => {
    onStopSignal(
      (signal) => {
        void stop(signal).then((code) => {
          resolve(code);
          exitSoon(code);
        });
      },
      {
        onRepeat: (signal) => {
          log.warn({ signal }, 'second stop signal: exiting now');
          process.exit(130);
        },
      },
    );
    monitor.start().catch((err: unknown) => {
      // A stop request during start ends the waiting; that is a stop, not a failure.
      if (monitor.stopRequested) return;
      const code = err instanceof StreamfenceError ? 2 : 1;
      if (!(err instanceof StreamfenceError))
        log.error({ err: (err as Error).message }, 'monitor failed to start');
      void stop('start-failure').then(() => {
        // A typed refusal is the whole story in one line, written last so it is what a user sees.
        if (err instanceof StreamfenceError) log.error({ code: err.code }, `${err.message} [${err.code}]`);
        resolve(code);
        exitSoon(code);
      });
    });
  });
}
