/**
 * `streamfence board` started before its services answer: it serves the page and /healthz at once,
 * stays not ready (/readyz 503, the page's snapshot saying what it waits for, one stderr line per
 * attempt), and becomes ready by itself once the service appears. Real Kafka (the harness), a real
 * redis-server started by the test on a port of its own, the built CLI as a child process.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTopic, deleteTopics, kafkaBrokers, redisUrl, uniqueName } from '../../harness/services.js';
import { killOwnRedis, startOwnRedis, type OwnRedis } from '../../harness/own-redis.js';

const CLI = 'dist/services/cli/main.js';
/** Ports of this test's own, below Linux's ephemeral range (32768-60999) so no client socket holds them: nothing listens there until the test starts it. */
const LATE_REDIS_PORT = 23_510;
const DEAD_KAFKA_PORT = 23_511;

interface Board {
  child: ChildProcess;
  out: () => string;
  err: () => string;
  exit: Promise<number | null>;
}

/** Starts the board with only the options given (no STREAMFENCE_* variable leaks in). */
function startBoard(args: string[]): Board {
  const env = Object.fromEntries(Object.entries(process.env).filter(([k]) => !k.startsWith('STREAMFENCE_')));
  const child = spawn(process.execPath, [CLI, 'board', '--port', '0', ...args], { env });
  let out = '';
  let err = '';
  child.stdout!.on('data', (c) => (out += String(c)));
  child.stderr!.on('data', (c) => (err += String(c)));
  const exit = new Promise<number | null>((resolve) => child.once('exit', (code) => resolve(code)));
  return { child, out: () => out, err: () => err, exit };
}

async function boardUrl(board: Board): Promise<string> {
  await expect
    .poll(() => /board at (http:\/\/\S+?)\/?\n/.exec(board.out())?.[1], { timeout: 15_000 })
    .toBeTruthy();
  return /board at (http:\/\/\S+?)\/?\n/.exec(board.out())![1];
}

const getJson = async (url: string): Promise<{ status: number; body: Record<string, unknown> }> => {
  const r = await fetch(url);
  return { status: r.status, body: (await r.json()) as Record<string, unknown> };
};

/** Every stderr line but the banner is a retry line of the form the README gives: no stack, no library text. */
function retryLines(stderr: string, address: string): string[] {
  const lines = stderr.split('\n').filter((l) => l.startsWith('streamfence board: ') && !l.includes(' — '));
  for (const line of lines.filter((l) => !/stopped$/.test(l)))
    expect(line).toMatch(
      new RegExp(`^streamfence board: ${address}: connection refused; retrying in [\\d.]+ s$`),
    );
  expect(stderr).not.toMatch(/\n\s+at |KafkaJS|ioredis|ECONNREFUSED/);
  return lines.filter((l) => l.includes('retrying'));
}

describe('board started before Kafka or Redis answers', () => {
  const alertTopic = uniqueName('board-late-alerts');
  const actionTopic = uniqueName('board-late-actions');
  let lateRedis: OwnRedis | null = null;

  beforeAll(async () => {
    await createTopic(alertTopic);
    await createTopic(actionTopic);
  });
  afterAll(async () => {
    if (lateRedis) await killOwnRedis(lateRedis);
    await deleteTopics(alertTopic, actionTopic);
  });

  it('serves the page and /healthz at once, waits for Redis (not ready, says so), and is ready once Redis appears', async () => {
    const board = startBoard([
      '--brokers',
      kafkaBrokers().join(','),
      '--redis',
      `redis://127.0.0.1:${LATE_REDIS_PORT}`,
      '--alert-topic',
      alertTopic,
      '--action-topic',
      actionTopic,
    ]);
    try {
      const url = await boardUrl(board);
      const page = await fetch(`${url}/`);
      expect(page.status).toBe(200);
      expect(await page.text()).toContain('id="waiting"');
      expect(await getJson(`${url}/healthz`)).toMatchObject({
        status: 200,
        body: { ok: true, ready: false },
      });
      const waiting = new RegExp(
        `^redis 127\\.0\\.0\\.1:${LATE_REDIS_PORT}: connection refused; retrying in [\\d.]+ s$`,
      );
      await expect
        .poll(async () => (await getJson(`${url}/readyz`)).body.waiting, { timeout: 15_000 })
        .toMatch(waiting);
      const notReady = await getJson(`${url}/readyz`);
      expect(notReady).toMatchObject({ status: 503, body: { ready: false } });
      expect((await getJson(`${url}/api/board`)).body.waiting).toMatch(waiting);
      expect(retryLines(board.err(), `redis 127\\.0\\.0\\.1:${LATE_REDIS_PORT}`).length).toBeGreaterThan(0);

      // The page hears the change on its event stream (and then reloads the snapshot).
      const stream = await fetch(`${url}/api/events`);
      const reader = stream.body!.getReader();
      let seen = '';
      const readinessEvent = (async () => {
        for (;;) {
          const chunk = await reader.read();
          if (chunk.done) return seen;
          seen += Buffer.from(chunk.value).toString('utf8');
          if (/event: readiness\ndata: \{"ready":true,"waiting":null\}/.test(seen)) return seen;
        }
      })();

      lateRedis = await startOwnRedis(LATE_REDIS_PORT, ['--save', '', '--appendonly', 'no']);
      await expect.poll(async () => (await getJson(`${url}/readyz`)).status, { timeout: 20_000 }).toBe(200);
      expect(await getJson(`${url}/readyz`)).toEqual({ status: 200, body: { ready: true, waiting: null } });
      expect((await getJson(`${url}/api/board`)).body.waiting).toBeNull();
      expect(await readinessEvent).toMatch(/event: readiness/);
      await reader.cancel();
      await expect
        .poll(() => board.out())
        .toContain(`streamfence board: following ${alertTopic} and ${actionTopic}`);
      retryLines(board.err(), `redis 127\\.0\\.0\\.1:${LATE_REDIS_PORT}`);

      board.child.kill('SIGTERM');
      expect(await board.exit).toBe(0);
    } finally {
      board.child.kill('SIGKILL');
    }
  }, 90_000);

  it('waits for an unreachable Kafka the same way, and a SIGTERM meanwhile stops it cleanly (exit 0)', async () => {
    const board = startBoard([
      '--brokers',
      `127.0.0.1:${DEAD_KAFKA_PORT}`,
      '--redis',
      redisUrl(),
      '--alert-topic',
      alertTopic,
      '--action-topic',
      actionTopic,
    ]);
    try {
      const url = await boardUrl(board);
      await expect
        .poll(async () => (await getJson(`${url}/readyz`)).body.waiting, { timeout: 30_000 })
        .toMatch(
          new RegExp(`^kafka 127\\.0\\.0\\.1:${DEAD_KAFKA_PORT}: connection refused; retrying in [\\d.]+ s$`),
        );
      expect((await getJson(`${url}/readyz`)).status).toBe(503);
      const stopAt = performance.now();
      board.child.kill('SIGTERM');
      expect(await board.exit).toBe(0);
      // Common practice, not a standard: a service manager's stop timeout is 10 s or more.
      expect(performance.now() - stopAt).toBeLessThan(10_000);
      expect(board.err()).toMatch(/streamfence board: stopped\n$/);
      retryLines(board.err(), `kafka 127\\.0\\.0\\.1:${DEAD_KAFKA_PORT}`);
    } finally {
      board.child.kill('SIGKILL');
    }
  }, 90_000);
});
