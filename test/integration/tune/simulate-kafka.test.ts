/**
 * streamfence simulate --kafka against the real Kafka: the topic is created when missing, every
 * reading arrives once, keyed by its sensor, with the same payload as the NDJSON file of the same seed.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { PlantSimulator } from '../../../libs/sim/plant.js';
import { produceReadings, readingLine } from '../../../services/simulate/write.js';
import { main as simulate } from '../../../services/cli/commands/simulate.js';
import { deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';

const OPTS = {
  seed: 5,
  start: Date.UTC(2026, 0, 5),
  durationMs: 4 * 3_600_000,
  intervalMs: 60_000,
  sensors: 6,
};

async function consumeAll(
  topic: string,
  expected: number,
): Promise<{ key: string; value: string; timestamp: string }[]> {
  const consumer = kafkaClient().consumer({ groupId: uniqueName('sim-read') });
  const got: { key: string; value: string; timestamp: string }[] = [];
  await consumer.connect();
  try {
    await consumer.subscribe({ topic, fromBeginning: true });
    await consumer.run({
      eachMessage: async ({ message }) => {
        got.push({
          key: message.key!.toString(),
          value: message.value!.toString(),
          timestamp: message.timestamp,
        });
      },
    });
    const deadline = Date.now() + 60_000;
    while (got.length < expected && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
    // A little longer, so duplicates would show up too.
    await new Promise((r) => setTimeout(r, 500));
  } finally {
    await consumer.disconnect();
  }
  return got;
}

describe('simulate to Kafka', () => {
  const topics: string[] = [];
  afterAll(async () => {
    await deleteTopics(...topics);
  });

  it('creates the topic and produces every reading keyed by sensor', async () => {
    const topic = uniqueName('sim-readings');
    topics.push(topic);
    const n = await produceReadings(new PlantSimulator(OPTS), topic, { brokers: kafkaBrokers() });
    const want = [...new PlantSimulator(OPTS)];
    expect(n).toBe(want.length);
    const got = await consumeAll(topic, want.length);
    expect(got).toHaveLength(want.length);
    // Keyed by sensor, so each sensor's readings keep their order whatever the partition count.
    const bySensor = (items: { key: string; line: string; ts: number }[]) => {
      const m = new Map<string, string[]>();
      for (const x of items) m.set(x.key, [...(m.get(x.key) ?? []), `${x.ts} ${x.line}`]);
      return m;
    };
    expect(bySensor(got.map((m) => ({ key: m.key, line: `${m.value}\n`, ts: Number(m.timestamp) })))).toEqual(
      bySensor(want.map((r) => ({ key: r.sensor, line: readingLine(r, 'ndjson'), ts: r.ts }))),
    );
  });

  it('the CLI produces to a new topic, by default ending the span at the current time; an unreachable broker fails with SERVICE_UNAVAILABLE', async () => {
    const topic = uniqueName('sim-cli');
    topics.push(topic);
    const before = Date.now();
    const code = await simulate([
      '--kafka',
      topic,
      '--brokers',
      kafkaBrokers().join(','),
      '--sensors',
      '3',
      '--duration',
      '1h',
      '--seed',
      '9',
    ]);
    expect(code).toBe(0);
    const after = Date.now();
    const got = await consumeAll(topic, 180);
    expect(got).toHaveLength(180);
    // Without --start the hour ends now (so a topic's retention keeps it): readings a minute apart,
    // the last one within two intervals before the call, none after it; message time = reading time.
    const times = got.map((m) => Number(m.timestamp));
    expect(Math.max(...times)).toBeGreaterThan(before - 2 * 60_000);
    expect(Math.max(...times)).toBeLessThanOrEqual(after);
    expect(Math.min(...times)).toBeGreaterThan(before - 3_600_000 - 2 * 60_000);
    for (const m of got)
      expect((JSON.parse(m.value) as { ts: string }).ts).toBe(new Date(Number(m.timestamp)).toISOString());
    await expect(
      produceReadings(new PlantSimulator(OPTS), uniqueName('nowhere'), { brokers: ['127.0.0.1:1'] }),
    ).rejects.toMatchObject({
      code: 'SERVICE_UNAVAILABLE',
    });
  });
});
