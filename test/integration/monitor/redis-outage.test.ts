/**
 * The monitor's Redis dies mid-run and stays down for a while (#9, #15 point 1): a redis-server of
 * this test's own (the append-only file, as deploy/local runs it), reached through a TCP forwarder
 * (test/harness/tcp-forwarder.ts: what a sidecar or load balancer in front of Redis does), is
 * SIGKILLed while readings keep arriving. First the forwarder still accepts and resets each
 * connection (the server behind it is gone), then it stops listening too (refused), then both
 * come back, Redis from the same folder.
 *  - Every retry is one warn line naming the address and the cause in words: `connection lost`
 *    while connections are reset (the Redis had answered this process, so a reset is not the
 *    start-up hint about TLS), `connection refused` while nothing listens; never the TLS advice,
 *    no stack trace, no client-library text. Each line is one count in streamfence_backoff_total
 *    (`disconnected`, `connection`).
 *  - The monitor is not ready meanwhile (/readyz 503) and ready again after, in the same process.
 *  - Once Redis is back, the state is exact (every sensor's lifetime count equals what was produced)
 *    and no alert event of the reference is lost.
 * Ports 20001 (Redis) and 20002 (the forwarder), this test only (STREAMFENCE_TEST_OUTAGE_REDIS_PORT
 * moves both), below Linux's ephemeral range.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { useOwnRedis } from '../../harness/own-redis.js';
import { tcpForwarder } from '../../harness/tcp-forwarder.js';
import { kafkaClient } from '../../harness/services.js';
import {
  backoffByCause,
  expectExactState,
  expectNoLostAlerts,
  generateReadings,
  monitorLogEntries,
  produceReadings,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

const PORT = Number(process.env.STREAMFENCE_TEST_OUTAGE_REDIS_PORT ?? 20001);
/** How long each phase of the outage lasts: long enough for retries (the backoff starts at 0.1 s). */
const PHASE_MS = 3_000;

describe('streamfence run: its Redis dies mid-run and comes back', () => {
  const own = useOwnRedis(PORT);
  const front = tcpForwarder(PORT + 1, PORT);
  afterAll(() => front.close());
  const bed = useMonitorBed();
  const { topic, group, prefix } = bed;

  it('one line per retry (connection lost / refused, never the TLS hint), not ready meanwhile, exact state after', async () => {
    await own.start();
    await front.listen();
    const url = `redis://127.0.0.1:${front.port}`;
    const config = testConfig();
    const readings = generateReadings(10, 360, 31);
    const half = Math.floor(readings.length / 2);
    const kafka = kafkaClient();
    await bed.createTopics([2, 1, 1]);
    await produceReadings(kafka, topic, readings.slice(0, half));
    const mon = bed.spawn(writeTestConfig(), { extra: ['--redis', url] });
    await waitCheckpointedToEnd(own.client, prefix, group, topic);
    const readyz = async () => (await fetch(`http://127.0.0.1:${await mon.metricsPort()}/readyz`)).status;
    await expect.poll(readyz, { timeout: 20_000 }).toBe(200);

    // Readings keep coming while Redis is down and after it is back.
    const chunk = Math.ceil((readings.length - half) / 12);
    const producing = (async () => {
      for (let i = half; i < readings.length; i += chunk) {
        await produceReadings(kafka, topic, readings.slice(i, Math.min(i + chunk, readings.length)));
        await sleep(500);
      }
    })();
    await sleep(700);
    await own.kill();
    const lineOf = (cause: string) =>
      new RegExp(`"msg":"redis 127\\.0\\.0\\.1:${front.port}: ${cause}; retrying in [\\d.]+ s"`);
    await mon.waitForLog(lineOf('connection lost'), 15_000);
    await expect.poll(readyz, { timeout: 10_000 }).toBe(503);
    await sleep(PHASE_MS);
    await front.close();
    await mon.waitForLog(lineOf('connection refused'), 15_000);
    await sleep(PHASE_MS);
    await own.start();
    await front.listen();
    await producing;
    await waitCheckpointedToEnd(own.client, prefix, group, topic);
    await expectExactState({ redis: own.client, prefix, group, topic }, readings, config);
    await expect.poll(readyz, { timeout: 20_000 }).toBe(200);

    const redisRetries = monitorLogEntries(mon.logs).filter((e) => e.dependency === 'redis');
    expect(redisRetries.length).toBeGreaterThan(1);
    const retryLine = new RegExp(
      `^redis 127\\.0\\.0\\.1:${front.port}: (connection lost|connection refused); retrying in [\\d.]+ s$`,
    );
    for (const e of redisRetries) {
      expect(e.level).toBe('warn');
      expect(e.msg).toMatch(retryLine);
      expect(e.cause).toBe(/connection lost/.test(e.msg) ? 'disconnected' : 'connection');
    }
    // One count per logged line, by cause; none called a TLS (or any other) failure.
    const metrics = await (await fetch(`http://127.0.0.1:${await mon.metricsPort()}/metrics`)).text();
    const counted = backoffByCause(metrics, 'redis');
    const logged: Record<string, number> = {};
    for (const e of redisRetries) logged[e.cause!] = (logged[e.cause!] ?? 0) + 1;
    expect(counted).toEqual(logged);
    const shown = mon.logs.filter((l) => !l.startsWith('{"level":"debug"'));
    expect(shown.join('\n')).not.toMatch(
      /TLS|rediss|\n\s+at |ECONNRESET|ECONNREFUSED|EPIPE|max retries|Connection is closed|ioredis/,
    );

    expect(await expectNoLostAlerts(bed.alertTopic, readings, config)).toBeGreaterThan(0);
    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
  }, 120_000);
});
