/**
 * Live board against the real Kafka and Redis: two boards follow the same alert topic; an action on
 * one reaches the other through the action topic; a board started later rebuilds the same view
 * from Redis; a clear removes the alert's actions from Redis. Also: the CLI refuses to listen off
 * loopback without a token.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import { BoardHub } from '../../../services/board/hub.js';
import { actionsKey, LiveFeed } from '../../../services/board/live.js';
import { createBoardMetrics } from '../../../services/metrics/board-metrics.js';
import { startBoardServer, type RunningBoard } from '../../../services/board/server.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import {
  createTopic,
  deleteKeysByPrefix,
  deleteTopics,
  kafkaBrokers,
  kafkaClient,
  redisClient,
  uniqueName,
} from '../../harness/services.js';
import { FIXTURE_BASELINE } from '../../support/alert-fixture.js';

const run = promisify(execFile);

function ev(id: string, state: AlertEvent['state']): AlertEvent {
  const t = new Date().toISOString();
  return {
    id,
    sensor: `mill-1/${id}`,
    state,
    severity: 'critical',
    reasons: state === 'cleared' ? [] : ['outer_fence_high'],
    value: 99,
    ts: t,
    since: t,
    flaggedReadings: 3,
    baseline: { ...FIXTURE_BASELINE },
    z: 9,
    robustZ: 9,
    percentileRank: 100,
    message: `mill-1/${id} reads 99`,
    notice: NOTICE,
  };
}

interface Running {
  hub: BoardHub;
  feed: LiveFeed;
  board: RunningBoard;
}

describe('live board (Kafka + Redis)', () => {
  const alertTopic = uniqueName('alerts');
  const actionTopic = uniqueName('actions');
  const prefix = uniqueName('board');
  const redis = redisClient();
  const boards: Running[] = [];

  async function startBoard(): Promise<Running> {
    let feed: LiveFeed | null = null;
    const hub = new BoardHub({
      mode: 'live',
      clock: { wall: () => Date.now(), plant: () => Date.now() },
      share: (a) => feed!.share(a),
    });
    feed = new LiveFeed(hub, { kafka: kafkaClient(), redis, prefix, alertTopic, actionTopic });
    await feed.start();
    const board = await startBoardServer({
      hub,
      metrics: createBoardMetrics(hub),
      host: '127.0.0.1',
      port: 0,
      token: null,
    });
    const r = { hub, feed, board };
    boards.push(r);
    return r;
  }

  const produce = async (e: AlertEvent) => {
    const p = kafkaClient().producer();
    await p.connect();
    await p.send({ topic: alertTopic, messages: [{ key: e.sensor, value: JSON.stringify(e) }] });
    await p.disconnect();
  };

  beforeAll(async () => {
    await createTopic(alertTopic, 1);
    await createTopic(actionTopic, 1);
    await produce(ev('p1', 'raised'));
    await produce(ev('p2', 'raised'));
  });
  afterAll(async () => {
    for (const b of boards) {
      await b.board.close();
      await b.feed.stop();
    }
    await deleteKeysByPrefix(redis, prefix);
    redis.disconnect();
    await deleteTopics(alertTopic, actionTopic);
  });

  it('an action on one board reaches the other and is kept in Redis; a later board rebuilds it', async () => {
    const a = await startBoard();
    const b = await startBoard();
    await expect.poll(() => a.hub.store.openCount, { timeout: 30_000 }).toBe(2);
    await expect.poll(() => b.hub.store.openCount, { timeout: 30_000 }).toBe(2);

    const post = (r: Running, path: string, body: unknown) =>
      fetch(r.board.url + path, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify(body),
      });
    expect((await post(a, '/api/alerts/p1/acknowledge', { by: 'Lene Ashdown' })).status).toBe(200);
    expect(
      (
        await post(b, '/api/alerts/p2/shelve', {
          by: 'Bo Tregarth',
          reason: 'mill stopped for relining',
          minutes: 120,
        })
      ).status,
    ).toBe(200);

    await expect.poll(() => b.hub.store.get('p1')?.acknowledgedBy, { timeout: 30_000 }).toBe('Lene Ashdown');
    await expect.poll(() => a.hub.store.get('p2')?.status, { timeout: 30_000 }).toBe('shelved');
    const saved = await redis.hgetall(actionsKey(prefix));
    expect(Object.keys(saved).sort()).toEqual(['p1|ack', 'p2|shelf']);
    expect(JSON.parse(saved['p2|shelf'])).toMatchObject({
      kind: 'shelve',
      by: 'Bo Tregarth',
      reason: 'mill stopped for relining',
    });

    const c = await startBoard();
    await expect
      .poll(() => c.hub.store.get('p2')?.shelveReason, { timeout: 30_000 })
      .toBe('mill stopped for relining');
    expect(c.hub.store.get('p1')).toMatchObject({ acknowledged: true, acknowledgedBy: 'Lene Ashdown' });
    const listed = (await (await fetch(c.board.url + '/api/alerts')).json()) as {
      id: string;
      status: string;
    }[];
    expect(listed.map((x) => `${x.id}:${x.status}`)).toEqual(['p1:active', 'p2:shelved']);
  });

  it('a clear moves the alert to recently cleared on every board and drops its actions from Redis', async () => {
    await produce(ev('p1', 'cleared'));
    for (const r of boards)
      await expect.poll(() => r.hub.store.get('p1')?.status, { timeout: 30_000 }).toBe('cleared');
    await expect
      .poll(async () => Object.keys(await redis.hgetall(actionsKey(prefix))), { timeout: 10_000 })
      .toEqual(['p2|shelf']);
  });

  it('the CLI refuses to serve off loopback without a token', async () => {
    await expect(
      run(
        process.execPath,
        [
          'dist/services/cli/main.js',
          'board',
          '--brokers',
          kafkaBrokers().join(','),
          '--redis',
          'redis://127.0.0.1:1',
          '--host',
          '0.0.0.0',
        ],
        {
          env: { ...process.env, STREAMFENCE_BOARD_TOKEN: '' },
        },
      ),
    ).rejects.toMatchObject({
      code: 2,
      stderr: expect.stringMatching(/without a token.*--board-token-file.*\[ARGS_INVALID\]/),
    });
  });
});
