/**
 * Replay from a Kafka time range against the real broker: the same readings replayed from a file
 * (those inside the range, in the documented order: reading ts, then partition, then offset) must
 * give byte-identical alerts and rejects and the same counts.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { readInput } from '../../../services/replay/input.js';
import { runReplay } from '../../../services/replay/replay.js';
import { main as replayCommand } from '../../../services/cli/commands/replay.js';
import { kafkaRangeSource, newKafkaRangeStats } from '../../../services/replay-kafka/source.js';
import { parseKafkaUrl } from '../../../services/replay-kafka/url.js';
import { createTopic, deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';
import { feed, SHORT_WINDOW_CONFIG, toLine } from '../../unit/report/data.js';

const PARTITIONS = 3;
const START = Date.UTC(2026, 2, 2, 6, 0, 0);
const SENSORS = [
  'kiln-2/zone-1',
  'kiln-2/zone-2',
  'kiln-2/fan',
  'dryer/inlet',
  'dryer/outlet',
  'dryer/humidity',
];

interface Sent {
  partition: number;
  /** Order of production within the partition (= offset order). */
  seq: number;
  ts: number;
  line: string;
  key: number;
}

describe('kafkaRangeSource', () => {
  const topic = uniqueName('replay-range');
  const sent: Sent[] = [];
  const from = START + 20 * 60_000;
  const to = START + 100 * 60_000;

  beforeAll(async () => {
    await createTopic(topic, PARTITIONS);
    const readings = feed({
      sensors: SENSORS,
      start: START,
      intervalMs: 10_000,
      count: 720,
      seed: 11,
      spikeRate: 0.01,
      stepAt: 400,
    });
    const seq = new Array<number>(PARTITIONS).fill(0);
    const byPartition: { partition: number; ts: number; line: string }[][] = Array.from(
      { length: PARTITIONS },
      () => [],
    );
    for (const r of readings) {
      const partition = SENSORS.indexOf(r.sensor) % PARTITIONS;
      byPartition[partition].push({ partition, ts: r.ts, line: toLine(r) });
    }
    // A payload that is not a reading, inside the range (its message timestamp orders it).
    // Placed in time order within its partition: the merge keeps each partition's offset order.
    const junkTs = from + 61_000;
    const at = byPartition[1].findIndex((m) => m.ts > junkTs);
    byPartition[1].splice(at, 0, { partition: 1, ts: junkTs, line: 'pressure=4.2 bar' });
    for (const msgs of byPartition)
      for (const m of msgs) sent.push({ ...m, seq: seq[m.partition]++, key: m.ts });
    const producer = kafkaClient().producer();
    await producer.connect();
    try {
      for (let p = 0; p < PARTITIONS; p++) {
        const msgs = sent.filter((s) => s.partition === p);
        for (let i = 0; i < msgs.length; i += 500) {
          await producer.send({
            topic,
            messages: msgs
              .slice(i, i + 500)
              .map((m) => ({ partition: p, value: m.line, timestamp: String(m.ts) })),
          });
        }
      }
    } finally {
      await producer.disconnect();
    }
  });

  afterAll(async () => {
    await deleteTopics(topic);
  });

  it('replays a time range exactly like a file of the same readings in merge order', async () => {
    const config = validateConfig(SHORT_WINDOW_CONFIG);
    const expected = sent
      .filter((s) => s.ts >= from && s.ts < to)
      .sort((a, b) => a.key - b.key || a.partition - b.partition || a.seq - b.seq);
    expect(expected.length).toBeGreaterThan(2000);
    const dir = mkdtempSync(join(tmpdir(), 'sf-kafka-range-'));
    const file = join(dir, 'range.ndjson');
    writeFileSync(file, expected.map((e) => e.line).join('\n') + '\n');

    const stats = newKafkaRangeStats();
    const kafkaOut = join(dir, 'from-kafka');
    const fileOut = join(dir, 'from-file');
    const fromKafka = await runReplay({
      source: kafkaRangeSource({
        connection: { brokers: kafkaBrokers() },
        topic,
        from,
        to,
        stats,
        batchSize: 777,
        maxBufferedPerPartition: 200,
      }),
      config,
      outDir: kafkaOut,
      inputInfo: { kind: 'kafka' },
    });
    const fromFile = await runReplay({
      source: readInput(file, 'ndjson'),
      config,
      outDir: fileOut,
      inputInfo: { kind: 'kafka' },
    });

    expect(stats.messages).toBe(expected.length);
    expect(stats.partitionsInRange).toBe(PARTITIONS);
    expect(fromKafka).toEqual(fromFile);
    expect(fromKafka.alerts.raised).toBeGreaterThan(0);
    expect(fromKafka.rejected.byReason).toEqual({ not_json: 1 });
    for (const f of ['alerts.ndjson', 'rejected.ndjson']) {
      expect(readFileSync(join(kafkaOut, f), 'utf8')).toBe(readFileSync(join(fileOut, f), 'utf8'));
    }

    // Nothing left behind: the throwaway group is gone and no group holds offsets for the topic.
    expect(stats.groupDeleted).toBe(true);
    const admin = kafkaClient().admin();
    await admin.connect();
    try {
      const { groups } = await admin.listGroups();
      expect(groups.map((g) => g.groupId)).not.toContain(stats.groupId);
    } finally {
      await admin.disconnect();
    }
  });

  it('the replay command takes kafka://TOPIC with --brokers/--from/--to and matches a file replay', async () => {
    const expected = sent
      .filter((s) => s.ts >= from && s.ts < to)
      .sort((a, b) => a.key - b.key || a.partition - b.partition || a.seq - b.seq);
    const dir = mkdtempSync(join(tmpdir(), 'sf-kafka-cmd-'));
    const file = join(dir, 'range.ndjson');
    const cfg = join(dir, 'engine.json');
    writeFileSync(file, expected.map((e) => e.line).join('\n') + '\n');
    writeFileSync(cfg, JSON.stringify(SHORT_WINDOW_CONFIG));
    const args = [
      '--brokers',
      kafkaBrokers().join(','),
      '--from',
      new Date(from).toISOString(),
      '--to',
      String(to),
      '--config',
      cfg,
    ];
    expect(await replayCommand([`kafka://${topic}`, ...args, '--out', join(dir, 'k'), '--report'])).toBe(0);
    expect(await replayCommand([file, '--config', cfg, '--out', join(dir, 'f')])).toBe(0);
    const alerts = readFileSync(join(dir, 'k', 'alerts.ndjson'), 'utf8');
    expect(alerts.length).toBeGreaterThan(0);
    expect(alerts).toBe(readFileSync(join(dir, 'f', 'alerts.ndjson'), 'utf8'));
    const summary = JSON.parse(readFileSync(join(dir, 'k', 'summary.json'), 'utf8'));
    expect(summary.input.kafka).toMatchObject({ topic, messages: expected.length });
    expect(readFileSync(join(dir, 'k', 'report.html'), 'utf8')).toContain('<svg');
    // Missing range bounds are refused with a clear message.
    await expect(
      replayCommand([`kafka://${topic}`, '--brokers', kafkaBrokers().join(',')]),
    ).rejects.toMatchObject({
      code: 'ARGS_INVALID',
    });
  });

  it('yields nothing for a range after the last message, and refuses a missing topic', async () => {
    const later = START + 10 * 3_600_000;
    const out: unknown[] = [];
    for await (const b of kafkaRangeSource({
      connection: { brokers: kafkaBrokers() },
      topic,
      from: later,
      to: later + 60_000,
    }))
      out.push(...b);
    expect(out).toEqual([]);
    const missing = kafkaRangeSource({
      connection: { brokers: kafkaBrokers() },
      topic: uniqueName('absent'),
      from: START,
      to: later,
    });
    await expect(missing.next()).rejects.toMatchObject({ code: 'NOT_FOUND' });
  });

  it('parses kafka:// addresses', () => {
    expect(
      parseKafkaUrl(
        'kafka://127.0.0.1:9092,10.0.0.2:9093/line-3.readings?from=2026-03-02T06:20:00Z&to=1772437200000',
      ),
    ).toEqual({
      brokers: ['127.0.0.1:9092', '10.0.0.2:9093'],
      topic: 'line-3.readings',
      from: Date.UTC(2026, 2, 2, 6, 20),
      to: 1772437200000,
    });
    expect(() => parseKafkaUrl('kafka://127.0.0.1:9092/t?from=2026-03-02T06:20:00Z')).toThrow(
      /to= is missing/,
    );
    expect(() =>
      parseKafkaUrl('kafka://127.0.0.1:9092/t?from=2026-03-02T07:00:00Z&to=2026-03-02T06:00:00Z'),
    ).toThrow(/before/);
  });
});
