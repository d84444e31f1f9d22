/**
 * `run` started while Kafka or Redis does not answer: an outage that may end, never a refusal.
 * One warn line per backoff attempt (attempt 1, 2, 3, … with its delay), none from the Kafka
 * client's own reconnects repeated beside them; a Redis that appears later is used at once; a
 * SIGTERM while still starting (before the group is joined, also while the join itself waits on the
 * broker) stops cleanly with exit 0 within the 10 s budget and says there was nothing to checkpoint. Real Kafka (the harness), a real redis-server the test starts on a port
 * of its own (23540-23541, below Linux's ephemeral range 32768-60999), the built CLI.
 */
import type { Consumer } from 'kafkajs';
import { afterAll, describe, expect, it } from 'vitest';
import { killOwnRedis, startOwnRedis, type OwnRedis } from '../../harness/own-redis.js';
import { kafkaClient } from '../../harness/services.js';
import { generateReadings, produceReadings, sleep, useMonitorBed, writeTestConfig } from './helpers.js';

const DEAD_KAFKA_PORT = 23_540;
const LATE_REDIS_PORT = 23_541;

interface LogEntry {
  level: string;
  msg: string;
  dependency?: string;
  attempt?: number;
  delayMs?: number | null;
}
const entries = (logs: string[]): LogEntry[] =>
  logs.filter((l) => l.startsWith('{')).map((l) => JSON.parse(l) as LogEntry);

describe('run started during an outage', () => {
  const bed = useMonitorBed();
  let lateRedis: OwnRedis | null = null;
  afterAll(async () => {
    if (lateRedis) await killOwnRedis(lateRedis);
  });

  it('Kafka unreachable: one line per backoff attempt, nothing else; SIGTERM before the join exits 0', async () => {
    const monitor = bed.spawn(writeTestConfig(), { extra: ['--brokers', `127.0.0.1:${DEAD_KAFKA_PORT}`] });
    await monitor.waitForLog(/retrying in .* s"/);
    await monitor.waitForLog(/"attempt":4,/, 30_000);
    monitor.child.kill('SIGTERM');
    expect(await monitor.exited).toBe(0);
    const retries = entries(monitor.logs).filter((e) => e.dependency === 'kafka');
    // Each attempt once, in order, each with its wait: no second line for the same attempt.
    expect(retries.map((e) => e.attempt)).toEqual(retries.map((_, i) => i + 1));
    for (const e of retries) {
      expect(e.level).toBe('warn');
      expect(e.msg).toMatch(
        new RegExp(`^kafka 127\\.0\\.0\\.1:${DEAD_KAFKA_PORT}: connection refused; retrying in [\\d.]+ s$`),
      );
    }
    const tail = entries(monitor.logs).map((e) => e.msg);
    expect(tail).toContain('stopped: no partition state held, nothing to checkpoint');
    // The Kafka client's own text is kept at debug level (the helper logs at debug); above it, none.
    const shown = monitor.logs.filter((l) => !l.startsWith('{"level":"debug"'));
    expect(shown.join('\n')).not.toMatch(/could not stop cleanly|\s+at |ECONNREFUSED|KafkaJS/);
  }, 60_000);

  it('Redis unreachable at start, started later: the monitor goes on by itself and joins', async () => {
    await bed.createTopics([1, 1, 1]);
    const monitor = bed.spawn(writeTestConfig(), {
      extra: ['--redis', `redis://127.0.0.1:${LATE_REDIS_PORT}`],
    });
    await monitor.waitForLog(
      new RegExp(`redis 127\\.0\\.0\\.1:${LATE_REDIS_PORT}: connection refused; retrying in`),
    );
    const port = await monitor.metricsPort();
    expect((await fetch(`http://127.0.0.1:${port}/readyz`)).status).toBe(503);
    lateRedis = await startOwnRedis(LATE_REDIS_PORT, ['--save', '', '--appendonly', 'no']);
    await monitor.waitForLog(/"msg":"consuming"/, 30_000);
    await expect
      .poll(async () => (await fetch(`http://127.0.0.1:${port}/readyz`)).status, { timeout: 30_000 })
      .toBe(200);
    monitor.child.kill('SIGTERM');
    expect(await monitor.exited).toBe(0);
    const redisLines = entries(monitor.logs).filter((e) => e.dependency === 'redis');
    expect(redisLines.length).toBeGreaterThan(0);
    for (const e of redisLines)
      expect(e.msg).toMatch(/^redis 127\.0\.0\.1:\d+: connection refused; retrying in [\d.]+ s$/);
  }, 90_000);
});

// Its own topics and group: the test above already created and joined the bed's.
describe('run stopped while joining its group', () => {
  const bed = useMonitorBed();

  it('SIGTERM while the group join waits on the broker: exit 0 within 10 s, nothing claimed', async () => {
    await bed.createTopics([1, 1, 1]);
    // A member of the same group stuck in its handler (no heartbeat, no rejoin) with a 60 s
    // rebalance timeout: the broker holds the monitor's JoinGroup until that member rejoins or
    // the timeout passes, so the monitor is really inside the join when the signal comes.
    const kafka = kafkaClient();
    let release: () => void = () => undefined;
    let entered: () => void = () => undefined;
    const inHandler = new Promise<void>((r) => (entered = r));
    const held = new Promise<void>((r) => (release = r));
    const blocker: Consumer = kafka.consumer({
      groupId: bed.group,
      sessionTimeout: 60_000,
      rebalanceTimeout: 60_000,
    });
    try {
      await blocker.connect();
      await blocker.subscribe({ topic: bed.topic, fromBeginning: true });
      await blocker.run({
        eachMessage: async () => {
          entered();
          await held;
        },
      });
      await produceReadings(kafka, bed.topic, generateReadings(1, 1));
      await inHandler;
      const monitor = bed.spawn(writeTestConfig());
      await monitor.waitForLog(/"msg":"joining group /, 30_000);
      await sleep(2_000); // the JoinGroup request is on the broker now
      monitor.child.kill('SIGTERM');
      const stopAt = performance.now();
      expect(await monitor.exited).toBe(0);
      expect(performance.now() - stopAt).toBeLessThan(10_000);
      const msgs = entries(monitor.logs).map((e) => e.msg);
      expect(msgs).not.toContain('partitions assigned');
      expect(msgs).toContain('stopping before the group was joined');
      expect(msgs).toContain('stopped: no partition state held, nothing to checkpoint');
      expect(monitor.logs.join('\n')).not.toMatch(/could not stop cleanly|state checkpointed|\s+at /);
    } finally {
      release();
      await blocker.disconnect().catch(() => undefined);
    }
  }, 120_000);
});
