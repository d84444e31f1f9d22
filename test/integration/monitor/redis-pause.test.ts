/**
 * Redis stops answering mid-stream (a dedicated redis-server is SIGSTOPped for several seconds, longer
 * than the monitor's command timeout): the monitor backs off, counts it, resumes when Redis is back,
 * and its state is exact.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { afterAll, describe, expect, it } from 'vitest';
import { Redis } from 'ioredis';
import { kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  freePort,
  expectNoLostAlerts,
  generateReadings,
  produceReadings,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

describe('streamfence run: Redis outage', () => {
  let server: ChildProcess | undefined;
  let redis: Redis | undefined;

  afterAll(() => {
    redis?.disconnect();
    if (server && server.exitCode === null) {
      server.kill('SIGCONT');
      server.kill('SIGTERM');
    }
  });

  // The monitor checkpoints to the dedicated server below (its own `redis`), not to the bed's.
  const bed = useMonitorBed();
  const { topic, alertTopic, group, prefix } = bed;

  it('waits out a paused Redis and recovers with exact state', async () => {
    const port = await freePort();
    server = spawn(
      'redis-server',
      ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
      {
        stdio: 'ignore',
      },
    );
    const url = `redis://127.0.0.1:${port}`;
    // Wait until the new server answers (a fresh client per try: a refused one keeps reconnecting).
    for (let i = 0; ; i++) {
      const probe = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 0, retryStrategy: () => null });
      probe.on('error', () => {});
      try {
        await probe.connect();
        await probe.ping();
        probe.disconnect();
        break;
      } catch (e) {
        probe.disconnect();
        if (i > 50) throw e;
        await sleep(100);
      }
    }
    redis = new Redis(url, { maxRetriesPerRequest: 2 });

    const readings = generateReadings(20, 1000, 5);
    const config = testConfig();
    await bed.createTopics([4, 2, 1]);
    const kafka = kafkaClient();
    const slices = 10;
    const per = Math.ceil(readings.length / slices);
    await produceReadings(kafka, topic, readings.slice(0, per));

    const mon = bed.spawn(writeTestConfig(), { extra: ['--redis', url] });
    await mon.waitForLog(/"msg":"checkpoint"/, 45_000);

    server.kill('SIGSTOP');
    const producing = (async () => {
      for (let i = 1; i < slices; i++) {
        await produceReadings(kafka, topic, readings.slice(i * per, (i + 1) * per));
        await sleep(200);
      }
    })();
    await sleep(7_000);
    server.kill('SIGCONT');
    await producing;

    await waitCheckpointedToEnd(redis, prefix, group, topic, 60_000);
    await expectExactState({ redis, prefix, group, topic }, readings, config);
    expect(mon.logs.some((l) => /"dependency":"redis".*retrying/.test(l))).toBe(true);

    const metricsPort = await mon.metricsPort();
    const text = await (await fetch(`http://127.0.0.1:${metricsPort}/metrics`)).text();
    expect(
      Number(/^streamfence_backoff_total\{dependency="redis",cause="\w+"\} (\S+)$/m.exec(text)?.[1]),
    ).toBeGreaterThan(0);

    await expectNoLostAlerts(alertTopic, readings, config);
    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
  });
});
