/**
 * Kafka stops answering mid-stream: a dedicated broker (the local stack's scripts, started in a
 * stack directory of this test's own, so the shared broker is untouched) is SIGSTOPped for longer
 * than the consumer session. The monitor backs off, counts it, rejoins when the broker is back, and
 * its state and alerts are exact.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Kafka, logLevel } from 'kafkajs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { redisUrl } from '../../harness/services.js';
import {
  expectExactState,
  freePort,
  expectNoLostAlerts,
  generateReadings,
  produceReadings,
  runStackScript,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

describe('streamfence run: Kafka outage', () => {
  const stackDir = mkdtempSync(path.join(tmpdir(), 'sf-kafka-pause-'));
  let env: NodeJS.ProcessEnv = {};
  let brokerPid = 0;
  let kafka: Kafka;
  const bed = useMonitorBed();
  const { topic, alertTopic, rejectedTopic, group, prefix } = bed;

  beforeAll(async () => {
    env = {
      STREAMFENCE_STACK_DIR: stackDir,
      STREAMFENCE_KAFKA_PORT: String(await freePort()),
      STREAMFENCE_KAFKA_CONTROLLER_PORT: String(await freePort()),
      STREAMFENCE_REDIS_URL: redisUrl(),
    };
    await runStackScript('stack-up.sh', env);
    brokerPid = Number(readFileSync(path.join(stackDir, 'kafka', 'kafka.pid'), 'utf8').trim());
    kafka = new Kafka({
      clientId: 'kafka-pause-test',
      brokers: [`127.0.0.1:${env.STREAMFENCE_KAFKA_PORT}`],
      logLevel: logLevel.NOTHING,
    });
  }, 180_000);

  afterAll(async () => {
    if (brokerPid > 0) process.kill(brokerPid, 'SIGCONT');
    await runStackScript('stack-down.sh', env, ['--wipe']).catch(() => undefined);
    rmSync(stackDir, { recursive: true, force: true });
  }, 60_000);

  it('waits out a paused broker and recovers with exact state and no lost alert', async () => {
    const brokers = `127.0.0.1:${env.STREAMFENCE_KAFKA_PORT}`;
    const admin = kafka.admin();
    await admin.connect();
    await admin.createTopics({
      topics: [
        { topic, numPartitions: 4, replicationFactor: 1 },
        { topic: alertTopic, numPartitions: 2, replicationFactor: 1 },
        { topic: rejectedTopic, numPartitions: 1, replicationFactor: 1 },
      ],
      waitForLeaders: true,
    });
    await admin.disconnect();

    const readings = generateReadings(20, 800, 9);
    const config = testConfig();
    const half = Math.floor(readings.length / 2);
    await produceReadings(kafka, topic, readings.slice(0, half));

    const mon = bed.spawn(writeTestConfig(), { extra: ['--brokers', brokers] });
    await mon.waitForLog(/"msg":"checkpoint"/, 60_000);

    // Longer than the 6 s consumer session the tests use: the group has to be rejoined.
    process.kill(brokerPid, 'SIGSTOP');
    await sleep(9_000);
    process.kill(brokerPid, 'SIGCONT');
    await produceReadings(kafka, topic, readings.slice(half));

    await waitCheckpointedToEnd(bed.redis, prefix, group, topic, 90_000, kafka);
    await expectExactState({ redis: bed.redis, prefix, group, topic }, readings, config);
    // The monitor reported the trouble in its own words (kafkajs's text goes to debug only), and counted it.
    expect(mon.logs.some((l) => /"level":"warn".*"dependency":"kafka"/.test(l))).toBe(true);
    expect(mon.logs.some((l) => /"level":"(error|warn|info)".*"kafkajs"/.test(l))).toBe(false);
    const metricsPort = await mon.metricsPort();
    const text = await (await fetch(`http://127.0.0.1:${metricsPort}/metrics`)).text();
    expect(
      Number(/^streamfence_backoff_total\{dependency="kafka",cause="\w+"\} (\S+)$/m.exec(text)?.[1]),
    ).toBeGreaterThan(0);
    expect(await expectNoLostAlerts(alertTopic, readings, config, { kafka })).toBeGreaterThan(0);

    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
  });
});
