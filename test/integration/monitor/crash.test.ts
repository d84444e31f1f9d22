/**
 * Crash safety: the monitor is SIGKILLed three times while readings stream in, and restarted each
 * time. Afterwards every sensor's stored lifetime count equals what was produced for it (nothing
 * counted twice, nothing skipped) and every alert event of the reference is on the alert topic
 * (duplicates with the same id are allowed, losses are not).
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

describe('streamfence run: crash safety', () => {
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

  it('keeps exact state and loses no alert across three SIGKILLs', async () => {
    const readings = generateReadings(30, 1200, 11);
    const config = testConfig();
    const configFile = writeTestConfig();
    await createTopic(topic, 6);
    await createTopic(alertTopic, 3);
    await createTopic(rejectedTopic, 1);
    const args = { topic, alertTopic, rejectedTopic, group, prefix, configFile };

    // Readings keep arriving in slices while the monitor is killed and restarted: each monitor finds
    // a backlog when it starts and more arrives while it runs, so every kill lands mid-stream.
    const kafka = kafkaClient();
    const slices = 8;
    const per = Math.ceil(readings.length / slices);
    const slice = (i: number) => produceReadings(kafka, topic, readings.slice(i * per, (i + 1) * per));

    let killsWithProgress = 0;
    for (let k = 0; k < 3; k++) {
      await slice(2 * k);
      const m = spawnMonitor(args);
      monitors.push(m);
      const more = slice(2 * k + 1);
      // Kill it after it has loaded its partitions and written some checkpoints.
      await m.waitForLog(/"msg":"checkpoint"/, 45_000);
      await sleep(200 + k * 150);
      m.child.kill('SIGKILL');
      await m.exited;
      await more;
      if (m.logs.some((l) => l.includes('"msg":"checkpoint"'))) killsWithProgress++;
    }
    expect(killsWithProgress).toBe(3);
    for (let i = 6; i < slices; i++) await slice(i);
    // Each restart resumed from a checkpoint rather than from the start of the log.
    for (const m of monitors.slice(1)) {
      const resumed = m.logs
        .filter((l) => /partition state loaded/.test(l))
        .map((l) => JSON.parse(l) as { offset: string });
      expect(resumed.some((r) => BigInt(r.offset) > 0n)).toBe(true);
    }

    const last = spawnMonitor(args);
    monitors.push(last);
    await waitCheckpointedToEnd(redis, prefix, group, topic, 90_000);

    const seen = await storedSeen(redis, prefix, group, topic, config);
    expect(Object.fromEntries(seen)).toEqual(Object.fromEntries(countBySensor(readings)));

    const reference = referenceEvents(readings, config);
    const live = eventsBySensor(await readAlertEvents(alertTopic));
    let expected = 0;
    for (const [sensor, events] of reference) {
      const got = live.get(sensor) ?? [];
      const ids = new Set(got.map((e) => `${e.id}:${e.state}:${e.ts}`));
      for (const e of events) {
        expected++;
        expect(ids.has(`${e.id}:${e.state}:${e.ts}`), `${sensor} ${e.id} ${e.state} ${e.ts}`).toBe(true);
      }
      // Every live event is one of the reference's (a duplicate, never an invented one).
      const ref = new Set(events.map((e) => `${e.id}:${e.state}:${e.ts}`));
      for (const e of got) expect(ref.has(`${e.id}:${e.state}:${e.ts}`)).toBe(true);
    }
    expect(expected).toBeGreaterThan(30);

    last.child.kill('SIGTERM');
    expect(await last.exited).toBe(0);
  });
});
