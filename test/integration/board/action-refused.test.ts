/**
 * An operator action against a Redis that refuses (#15 point 1, the board's actions): the board
 * follows its topics on the real Kafka, its Redis is a redis-server of this test's own, stopped
 * once the board runs. Acknowledge and shelve are then answered 503 with one line naming the
 * dependency and the cause and saying to try again (no ioredis text), each logged as one line and
 * counted in streamfence_board_action_failures_total; once Redis is back, the same action is taken.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { NOTICE } from '../../../libs/schema/notice.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';
import { createTopic, deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';
import { NO_PERSISTENCE_ARGS, useOwnRedis } from '../../harness/own-redis.js';

const CLI = 'dist/services/cli/main.js';
/** This test's own redis-server (i9-follow's range in coord.md; nothing else listens there). */
const OWN_REDIS_PORT = 20_010;

function alertEvent(id: string): AlertEvent {
  const t = new Date().toISOString();
  return {
    id,
    sensor: `pump-7/${id}`,
    state: 'raised',
    severity: 'warning',
    reasons: ['fence_high'],
    value: 91,
    ts: t,
    since: t,
    flaggedReadings: 1,
    baseline: { ...FIXTURE_BASELINE },
    z: 4,
    robustZ: 4,
    percentileRank: 99,
    message: `pump-7/${id} reads 91`,
    notice: NOTICE,
  };
}

const post = async (url: string, body: unknown) => {
  const r = await fetch(url, {
    method: 'POST',
    headers: { 'content-type': 'application/json' },
    body: JSON.stringify(body),
  });
  return { status: r.status, json: (await r.json()) as Record<string, unknown> };
};

describe('board: an operator action Redis refuses', () => {
  const alertTopic = uniqueName('board-refused-alerts');
  const actionTopic = uniqueName('board-refused-actions');
  const id = uniqueName('refused');
  const redis = useOwnRedis(OWN_REDIS_PORT, NO_PERSISTENCE_ARGS);
  let board: ChildProcess | null = null;

  beforeAll(async () => {
    await createTopic(alertTopic);
    await createTopic(actionTopic);
    const producer = kafkaClient().producer();
    await producer.connect();
    await producer.send({ topic: alertTopic, messages: [{ value: JSON.stringify(alertEvent(id)) }] });
    await producer.disconnect();
    await redis.start();
  }, 60_000);

  afterAll(async () => {
    if (board && board.exitCode === null) {
      board.kill('SIGTERM');
      await new Promise((r) => board!.once('exit', r));
    }
    await deleteTopics(alertTopic, actionTopic);
  });

  it('answers 503 with the dependency and the cause, logs and counts it, and takes it once Redis is back', async () => {
    const env = Object.fromEntries(
      Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')),
    );
    board = spawn(
      process.execPath,
      [
        CLI,
        'board',
        '--port',
        '0',
        '--brokers',
        kafkaBrokers().join(','),
        '--redis',
        `redis://127.0.0.1:${OWN_REDIS_PORT}`,
        '--alert-topic',
        alertTopic,
        '--action-topic',
        actionTopic,
      ],
      { env },
    );
    let out = '';
    let err = '';
    board.stdout!.on('data', (c) => (out += String(c)));
    board.stderr!.on('data', (c) => (err += String(c)));
    await expect.poll(() => /following /.test(out), { timeout: 60_000 }).toBe(true);
    const url = /board at (http:\/\/\S+?)\/?\n/.exec(out)![1];
    await expect
      .poll(async () => ((await (await fetch(`${url}/api/alerts`)).json()) as unknown[]).length, {
        timeout: 30_000,
      })
      .toBe(1);

    await redis.kill();
    const refusedLine = `redis 127.0.0.1:${OWN_REDIS_PORT}: connection refused`;
    const ack = await post(`${url}/api/alerts/${id}/acknowledge`, { by: 'Ossian Marl' });
    expect(ack.status).toBe(503);
    expect(ack.json).toEqual({
      error: 'unavailable',
      message: `acknowledgement not recorded: ${refusedLine}; try again in a moment`,
    });
    const shelve = await post(`${url}/api/alerts/${id}/shelve`, { reason: 'valve swap', minutes: 30 });
    expect(shelve.status).toBe(503);
    expect(shelve.json.message).toBe(`shelve not recorded: ${refusedLine}; try again in a moment`);

    // One log line per refused action, naming the action, the alert and the cause.
    const refusedLog = err.split('\n').filter((l) => l.includes(' not taken: '));
    expect(refusedLog).toEqual([
      `streamfence board: acknowledge of alert ${id} not taken: ${refusedLine}`,
      `streamfence board: shelve of alert ${id} not taken: ${refusedLine}`,
    ]);
    const metrics = await (await fetch(`${url}/metrics`)).text();
    expect(metrics).toMatch(
      /^streamfence_board_action_failures_total\{dependency="redis",cause="connection"\} 2$/m,
    );
    // The alert stays as it was: nothing was applied that was not recorded.
    const [alert] = (await (await fetch(`${url}/api/alerts`)).json()) as {
      acknowledged: boolean;
      status: string;
    }[];
    expect(alert).toMatchObject({ acknowledged: false, status: 'active' });

    await redis.start();
    await expect
      .poll(async () => (await post(`${url}/api/alerts/${id}/acknowledge`, { by: 'Ossian Marl' })).status, {
        timeout: 30_000,
        interval: 1_000,
      })
      .toBe(200);

    board.kill('SIGTERM');
    await new Promise((r) => board!.once('exit', r));
    expect(board.exitCode).toBe(0);
    expect(`${out}${err}`).not.toMatch(/\n\s+at |KafkaJS|ioredis|max retries|ECONNREFUSED/);
  }, 180_000);
});
