/**
 * Rebalance: two monitors share one group; one is stopped (SIGTERM) mid-stream and the other takes
 * over its partitions from their checkpoints. State stays exact and no alert event goes missing.
 */
import { afterAll, describe, expect, it } from 'vitest';
import {
  createTopic,
  deleteKeysByPrefix,
  deleteTopics,
  kafkaClient,
  redisClient,
  uniqueName,
} from '../../harness/services.js';
import {
  countBySensor,
  eventsBySensor,
  generateReadings,
  produceReadings,
  readAlertEvents,
  referenceEvents,
  sleep,
  spawnMonitor,
  storedSeen,
  testConfig,
  waitCheckpointedToEnd,
  writeTestConfig,
  type MonitorProc,
} from './helpers.js';

describe('streamfence run: rebalance', () => {
  const topic = uniqueName('readings');
  const alertTopic = uniqueName('alerts');
  const rejectedTopic = uniqueName('rejected');
  const group = uniqueName('group');
  const prefix = uniqueName('sf');
  const redis = redisClient();
  const monitors: MonitorProc[] = [];

  afterAll(async () => {
    for (const m of monitors)
      if (m.child.exitCode === null && m.child.signalCode === null) m.child.kill('SIGKILL');
    await deleteKeysByPrefix(redis, `{${prefix}:`);
    await deleteKeysByPrefix(redis, `${prefix}:`);
    redis.disconnect();
    await deleteTopics(topic, alertTopic, rejectedTopic);
  });

  it('hands partitions over with exact state when one of two monitors stops', async () => {
    const readings = generateReadings(30, 1000, 23);
    const config = testConfig();
    const configFile = writeTestConfig();
    await createTopic(topic, 6);
    await createTopic(alertTopic, 3);
    await createTopic(rejectedTopic, 1);
    const args = { topic, alertTopic, rejectedTopic, group, prefix, configFile };

    const kafka = kafkaClient();
    const slices = 10;
    const per = Math.ceil(readings.length / slices);
    await produceReadings(kafka, topic, readings.slice(0, per));
    const a = spawnMonitor(args);
    monitors.push(a);
    await a.waitForLog(/"msg":"checkpoint"/, 45_000);
    const b = spawnMonitor(args);
    monitors.push(b);
    // Both own some partitions once the group has rebalanced.
    await b.waitForLog(/"partitions":\[\d.*"msg":"partitions assigned"/, 45_000);

    const producing = (async () => {
      for (let i = 1; i < slices; i++) {
        await produceReadings(kafka, topic, readings.slice(i * per, (i + 1) * per));
        await sleep(300);
      }
    })();
    await sleep(1200);
    a.child.kill('SIGTERM');
    expect(await a.exited).toBe(0);
    expect(a.logs.some((l) => /stopped: state checkpointed/.test(l))).toBe(true);
    await producing;

    await waitCheckpointedToEnd(redis, prefix, group, topic, 60_000);
    const seen = await storedSeen(redis, prefix, group, topic, config);
    expect(Object.fromEntries(seen)).toEqual(Object.fromEntries(countBySensor(readings)));
    // B took over every partition after A left.
    const lastAssign = b.logs.filter((l) => /partitions assigned/.test(l)).at(-1)!;
    expect((JSON.parse(lastAssign) as { partitions: number[] }).partitions).toEqual([0, 1, 2, 3, 4, 5]);

    const reference = referenceEvents(readings, config);
    const live = eventsBySensor(await readAlertEvents(alertTopic));
    for (const [sensor, events] of reference) {
      const got = new Set((live.get(sensor) ?? []).map((e) => `${e.id}:${e.state}:${e.ts}`));
      for (const e of events)
        expect(got.has(`${e.id}:${e.state}:${e.ts}`), `${sensor} ${e.state} ${e.ts}`).toBe(true);
    }
    b.child.kill('SIGTERM');
    expect(await b.exited).toBe(0);
  });
});
