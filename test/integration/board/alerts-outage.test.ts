/**
 * A following `streamfence alerts` started while its broker is down: as for the board, an outage
 * that may end, never a refusal. One stderr line per attempt naming the address and the cause
 * (`kafka 127.0.0.1:PORT: connection refused; retrying in N s`), no stack and no library text, and
 * once the broker answers it follows by itself: the history the topic kept, then new events. A
 * broker of the test's own (the local stack's scripts in a temp stack folder, ports 23010/23011,
 * below Linux's ephemeral range 32768-60999), stopped and started again; the built CLI.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Kafka, logLevel } from 'kafkajs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTopicsWithLeaders } from '../../../services/connect/topics.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { redisUrl, uniqueName } from '../../harness/services.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';
import { runStackScript, sleep } from '../monitor/helpers.js';

const CLI = 'dist/services/cli/main.js';
const KAFKA_PORT = 23_010;
const CONTROLLER_PORT = 23_011;
const BROKER = `127.0.0.1:${KAFKA_PORT}`;

function raised(id: string, sensor: string, ts: string): AlertEvent {
  return {
    id,
    sensor,
    state: 'raised',
    severity: 'warning',
    reasons: ['z_high'],
    value: 7.5,
    ts,
    since: ts,
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 5.5,
    robustZ: 4,
    percentileRank: 100,
    message: `${sensor} reads 7.5 (raised)`,
    notice: NOTICE,
  };
}

describe('alerts (following) started while Kafka is down', () => {
  const stackDir = mkdtempSync(path.join(tmpdir(), 'sf-alerts-outage-'));
  const env = {
    STREAMFENCE_STACK_DIR: stackDir,
    STREAMFENCE_KAFKA_PORT: String(KAFKA_PORT),
    STREAMFENCE_KAFKA_CONTROLLER_PORT: String(CONTROLLER_PORT),
    STREAMFENCE_REDIS_URL: redisUrl(),
  };
  const alertTopic = uniqueName('alerts-outage-alerts');
  const actionTopic = uniqueName('alerts-outage-actions');
  const kafka = new Kafka({ clientId: 'alerts-outage-test', brokers: [BROKER], logLevel: logLevel.NOTHING });

  const produce = async (event: AlertEvent) => {
    const producer = kafka.producer();
    await producer.connect();
    await producer.send({
      topic: alertTopic,
      messages: [{ key: event.sensor, value: JSON.stringify(event) }],
    });
    await producer.disconnect();
  };

  // The topics must exist before the broker first answers the viewer (a missing topic is a
  // refusal, exit 2), so they are made on a first start, and the broker is stopped again.
  beforeAll(async () => {
    await runStackScript('stack-up.sh', env);
    const admin = kafka.admin();
    await admin.connect();
    try {
      await createTopicsWithLeaders(admin, [
        { topic: alertTopic, numPartitions: 1, replicationFactor: 1 },
        { topic: actionTopic, numPartitions: 1, replicationFactor: 1 },
      ]);
    } finally {
      await admin.disconnect();
    }
    await produce(raised('before', 'kiln-7/zone-2/temp', '2026-04-01T03:00:00.000Z'));
    await runStackScript('stack-down.sh', env);
  }, 180_000);

  afterAll(async () => {
    await runStackScript('stack-down.sh', env, ['--wipe']).catch(() => undefined);
    rmSync(stackDir, { recursive: true, force: true });
  }, 60_000);

  it('retries with one line per attempt, then follows once the broker answers; Ctrl-C exits 0 within 1 s', async () => {
    const base = Object.fromEntries(
      Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')),
    );
    const child = spawn(
      process.execPath,
      [CLI, 'alerts', '--brokers', BROKER, '--alert-topic', alertTopic, '--action-topic', actionTopic],
      { env: { ...base, NO_COLOR: '1' } },
    );
    let out = '';
    let err = '';
    child.stdout.on('data', (d: Buffer) => (out += d.toString('utf8')));
    child.stderr.on('data', (d: Buffer) => (err += d.toString('utf8')));
    let exitCode: number | null | undefined;
    const exited = new Promise<number | null>((resolve) =>
      child.once('exit', (code) => {
        exitCode = code;
        resolve(code);
      }),
    );
    const retry = new RegExp(
      `^streamfence alerts: kafka 127\\.0\\.0\\.1:${KAFKA_PORT}: connection refused; retrying in [\\d.]+ s$`,
    );
    const retryCount = () => err.split('\n').filter((l) => retry.test(l)).length;
    try {
      await expect.poll(retryCount, { timeout: 30_000 }).toBeGreaterThanOrEqual(2);
      await sleep(2_000);
      expect(exitCode, err).toBeUndefined(); // still waiting, not refused

      await runStackScript('stack-up.sh', env);
      const answered = performance.now();
      await expect
        .poll(() => out, { timeout: 30_000 })
        .toContain('raised        kiln-7/zone-2/temp  reads 7.5 (raised)');
      // The longest wait between attempts is 5 s; an attempt against a live broker takes a few more.
      expect(performance.now() - answered).toBeLessThan(20_000);
      await expect
        .poll(() => err)
        .toContain(`streamfence alerts: following ${alertTopic} and ${actionTopic}\n`);

      await produce(raised('after', 'kiln-7/zone-3/temp', '2026-04-01T04:00:00.000Z'));
      await expect
        .poll(() => out, { timeout: 30_000 })
        .toContain('raised        kiln-7/zone-3/temp  reads 7.5 (raised)');

      const stopAt = performance.now();
      child.kill('SIGINT');
      expect(await exited).toBe(0);
      expect(performance.now() - stopAt).toBeLessThan(1_000);

      const lines = err.split('\n').filter((l) => l !== '' && !l.includes(NOTICE));
      const others = lines.filter((l) => !retry.test(l));
      expect(others).toEqual([`streamfence alerts: following ${alertTopic} and ${actionTopic}`]);
      expect(retryCount()).toBeGreaterThanOrEqual(2);
      expect(err).not.toMatch(/\n\s+at |KafkaJS|ECONNREFUSED|Connection error|^\{/m);
    } finally {
      child.kill('SIGKILL');
    }
  }, 120_000);
});
