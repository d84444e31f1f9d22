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
  type KafkaSettings,
  type RedisSettings,
} from '../../connect/index.js';
import { createLogger } from '../../log.js';
import { startMetricsServer } from '../../metrics/http.js';
import { createMetrics } from '../../metrics/metrics.js';
import { Monitor } from '../../monitor/monitor.js';
import { optionsHelp, parseRunOptions, RUN_OPTIONS } from '../run-options.js';
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
    const tls = dependency === 'redis' ? redis.url.startsWith('rediss:') : kafka.tls === true;
    return tls ? refused : null;
  };
}

/** A stop request ends the process within this time (the documented 10 s stop budget). */
export const STOP_DEADLINE_MS = 9_500;

export async function main(argv: string[]): Promise<number> {
  const parsed = parseRunOptions(argv, process.env);
  if (parsed.help) {
    process.stdout.write(
      [
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
      ].join('\n'),
    );
    return 0;
  }
  const o = parsed.opts;
  const log = createLogger('streamfence-run', o.logLevel);
  log.info({ notice: NOTICE, engine: ENGINE_VERSION }, `streamfence run: ${NOTICE}`);

  const config = loadEngineConfig(o.configFile, `--config (or ${ENV.configFile})`);

  const metrics = createMetrics();
  const redis = buildRedis(o.redis);
  let monitorRef: Monitor | null = null;
  const kafka = buildKafka(o.kafka, {
    clientId: `streamfence-${hostname()}-${process.pid}`,
    log,
    // Few retries inside kafkajs: the monitor's own backoff logs and counts each attempt; the
    // requests kafkajs retries itself (fetches, heartbeats) are worded by the monitor too.
    retries: 2,
    onError: (entry) => monitorRef?.noteKafkaClientError(entry),
  });
  log.info(
    {
      kafka: describeKafka(o.kafka),
      redis: describeRedis(o.redis),
      inputTopic: o.inputTopic,
      alertTopic: o.alertTopic,
      rejectedTopic: o.rejectedTopic,
      group: o.group,
      statePrefix: o.statePrefix,
      config: o.configFile,
    },
    'starting',
  );

  const monitor: Monitor = new Monitor({
    kafka,
    redis,
    config,
    settings: {
      statePrefix: o.statePrefix,
      inputTopic: o.inputTopic,
      alertTopic: o.alertTopic,
      rejectedTopic: o.rejectedTopic,
      group: o.group,
      checkpointMs: o.checkpointMs,
      checkpointReadings: o.checkpointReadings,
      maxSensors: o.maxSensors,
      sessionTimeoutMs: o.sessionTimeoutMs,
    },
    log,
    metrics,
    connection: { kafka: o.kafka, redis: o.redis },
    startRefusal: startRefusal(o.kafka, o.redis, `read ${o.inputTopic} in group ${o.group}`),
  });
  monitorRef = monitor;
  const http = await startMetricsServer(metrics.registry, o.metricsPort, () => monitor.readiness());
  log.info({ port: http.port }, `metrics listening on port ${http.port}`);

  let stopping: Promise<number> | null = null;
  const stop = (signal: string): Promise<number> => {
    if (stopping) return stopping;
    log.info({ signal }, 'stop requested');
    const deadline = setTimeout(() => {
      log.error(
        'could not stop cleanly within 10 s; exiting (the next start re-reads from the last checkpoint)',
      );
      process.exit(1);
    }, STOP_DEADLINE_MS);
    deadline.unref();
    stopping = monitor
      .stop()
      .then(
        (outcome) => (outcome.clean ? 0 : 1),
        (e: unknown) => {
          log.error(
            { err: (e as Error).message },
            'stop failed; the next start re-reads from the last checkpoint',
          );
          return 1;
        },
      )
      .finally(async () => {
        await http.close();
        redis.disconnect();
        clearTimeout(deadline);
      });
    return stopping;
  };

  return new Promise<number>((resolve) => {
    onStopSignal(
      (signal) => {
        void stop(signal).then((code) => {
          resolve(code);
          // Exit even if a library left a handle open; unref'd so a clean exit is not delayed.
          setTimeout(() => process.exit(code), 1_000).unref();
        });
      },
      {
        onRepeat: (signal) => {
          log.warn({ signal }, 'second stop signal: exiting now');
          process.exit(130);
        },
      },
    );
    monitor.start().catch((e: unknown) => {
      // A stop request during start ends the waiting; that is a stop, not a failure.
      if (monitor.stopRequested) return;
      const code = e instanceof StreamfenceError ? 2 : 1;
      if (!(e instanceof StreamfenceError))
        log.error({ err: (e as Error).message }, 'monitor failed to start');
      void stop('start-failure').then(() => {
        // A typed refusal is the whole story in one line, written last so it is what a user sees.
        if (e instanceof StreamfenceError) log.error({ code: e.code }, `${e.message} [${e.code}]`);
        resolve(code);
        setTimeout(() => process.exit(code), 1_000).unref();
      });
    });
  });
}
