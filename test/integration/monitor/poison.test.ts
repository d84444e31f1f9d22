/**
 * Malformed messages go to the rejected topic with their reason, the original bytes and where they
 * came from; late readings too; the good readings around them are processed as usual.
 */
import { describe, expect, it } from 'vitest';
import { kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  generateReadings,
  readTopic,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

describe('streamfence run: poison messages', () => {
  const bed = useMonitorBed();
  const { topic, rejectedTopic, group, prefix, redis } = bed;

  it('rejects each bad message with its reason and processes the rest', async () => {
    await bed.createTopics([2, 1, 1]);
    const good = generateReadings(4, 200, 3);
    const s0 = good[0].sensor;
    const newest = good.filter((r) => r.sensor === s0).at(-1)!.ts;
    const bad: { key: string | null; value: string | Buffer | null; reason: string }[] = [
      { key: s0, value: 'not json at all', reason: 'not_json' },
      { key: s0, value: Buffer.from([0xff, 0xfe, 0x00, 0x7b]), reason: 'not_json' },
      { key: s0, value: '[1,2,3]', reason: 'not_object' },
      { key: null, value: JSON.stringify({ ts: newest, value: 1 }), reason: 'sensor_missing' },
      {
        key: s0,
        value: JSON.stringify({ sensor: s0, ts: newest, value: 'hot' }),
        reason: 'value_not_number',
      },
      { key: s0, value: JSON.stringify({ sensor: s0, ts: 'yesterday', value: 1 }), reason: 'ts_invalid' },
      { key: s0, value: null, reason: 'not_json' },
      // Two hours older than the sensor's newest reading: outside the 10 min window.
      { key: s0, value: JSON.stringify({ sensor: s0, ts: newest - 7_200_000, value: 5 }), reason: 'late' },
    ];
    const producer = kafkaClient().producer();
    await producer.connect();
    // Good readings first, then the bad ones, then more good ones for the same sensors.
    const half = Math.floor(good.length / 2);
    const goodMsg = (r: (typeof good)[number]) => ({ key: r.sensor, value: JSON.stringify(r) });
    await producer.send({ topic, messages: good.slice(0, half).map(goodMsg) });
    await producer.send({ topic, messages: bad.slice(0, -1).map(({ key, value }) => ({ key, value })) });
    await producer.send({ topic, messages: good.slice(half).map(goodMsg) });
    await producer.send({ topic, messages: bad.slice(-1).map(({ key, value }) => ({ key, value })) });
    await producer.disconnect();

    const mon = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    const rejected = (await readTopic(rejectedTopic)).map(
      (m) =>
        JSON.parse(m.value!.toString()) as {
          reason: string;
          detail: string;
          raw: { base64: string; text: string | null };
          source: { topic: string; partition: number; offset: string };
          key: string | null;
        },
    );
    expect(rejected.map((r) => r.reason).sort()).toEqual(bad.map((b) => b.reason).sort());
    for (const r of rejected) {
      expect(r.source.topic).toBe(topic);
      expect(r.detail.length).toBeGreaterThan(5);
    }
    const binary = rejected.find(
      (r) => r.raw.base64 === Buffer.from([0xff, 0xfe, 0x00, 0x7b]).toString('base64'),
    );
    expect(binary?.raw.text).toBeNull();
    const text = rejected.find((r) => r.raw.text === 'not json at all');
    expect(text?.key).toBe(s0);
    expect(Buffer.from(text!.raw.base64, 'base64').toString()).toBe('not json at all');

    await expectExactState(bed, good, testConfig());

    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_rejected_total\{reason="late"\} 1$/m);
    expect(metrics).toMatch(/^streamfence_rejected_total\{reason="not_json"\} 3$/m);
    expect(metrics).toMatch(/^streamfence_readings_total\{outcome="rejected"\} 8$/m);
    expect(metrics).toMatch(
      new RegExp(`^streamfence_readings_total\\{outcome="accepted"\\} ${good.length}$`, 'm'),
    );
  });
});
