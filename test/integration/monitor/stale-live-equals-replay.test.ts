/**
 * Silent sensors, live and replayed, on a 6-partition topic (real Kafka and Redis): the live
 * monitor keeps event time per partition, so `replay --partitions 6` of the same readings (each
 * sensor on the partition the default Kafka partitioner gives its id) and `replay kafka://` of
 * the topic must publish exactly its stale alerts (and all other events), with the same ids and
 * times.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { main as replayCommand } from '../../../services/cli/commands/replay.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { kafkaBrokers, kafkaClient } from '../../harness/services.js';
import {
  eventsBySensor,
  generateReadings,
  produceReadings,
  readAlertEvents,
  TEST_CONFIG_TEXT,
  useMonitorBed,
  waitCheckpointedToEnd,
  type MonitorProc,
} from './helpers.js';

const CONFIG_TEXT = `${TEST_CONFIG_TEXT}  staleAfter: "20s"\n`;

/** Per sensor: id, state, reasons and time of every event, in order. */
const outline = (bySensor: Map<string, AlertEvent[]>) =>
  [...bySensor.keys()]
    .sort()
    .map((sensor) => [
      sensor,
      bySensor.get(sensor)!.map((e) => `${e.id}:${e.state}:${e.reasons.join('+')}:${e.ts}`),
    ]);

const readAlertsFile = (file: string): AlertEvent[] =>
  readFileSync(file, 'utf8')
    .trimEnd()
    .split('\n')
    .filter((line) => line.length > 0)
    .map((line) => JSON.parse(line) as AlertEvent);

describe('stale alerts: live equals replay on a multi-partition topic', () => {
  const bed = useMonitorBed();
  const { topic, alertTopic, group, prefix, redis } = bed;
  // 24 sensors a reading a second for 400 s; every fifth one goes silent for 60 s from k = 150.
  const readings = generateReadings(24, 400).filter((r) => {
    const index = Number(r.sensor.slice(-2));
    const k = Math.floor((r.ts - Date.UTC(2026, 2, 14, 6, 0, 0)) / 1000);
    return !(index % 5 === 0 && k >= 150 && k < 210);
  });
  const dir = mkdtempSync(path.join(tmpdir(), 'sf-stale-'));
  const configFile = path.join(dir, 'engine.yaml');
  const inputFile = path.join(dir, 'readings.ndjson');
  let monitor: MonitorProc;

  beforeAll(async () => {
    writeFileSync(configFile, CONFIG_TEXT);
    writeFileSync(inputFile, readings.map((r) => JSON.stringify(r)).join('\n') + '\n');
    await bed.createTopics();
    await produceReadings(kafkaClient(), topic, readings);
    monitor = bed.spawn(configFile);
    await waitCheckpointedToEnd(redis, prefix, group, topic);
  });

  it('replay --partitions 6 and replay kafka:// give the live stale alerts exactly', async () => {
    const live = eventsBySensor(await readAlertEvents(alertTopic));
    const stale = [...live.values()].flat().filter((e) => e.reasons.includes('stale'));
    // Five silent sensors (indexes 0, 5, 10, 15, 20), each raised and cleared once.
    expect(stale.map((e) => e.sensor).sort()).toEqual([
      'kiln-0.temp-00',
      'kiln-0.temp-20',
      'kiln-1.temp-05',
      'kiln-2.temp-10',
      'kiln-3.temp-15',
    ]);
    const clears = [...live.values()]
      .flat()
      .filter((e) => e.state === 'cleared' && e.message.includes('reports again'));
    expect(clears).toHaveLength(5);

    expect(
      await replayCommand([
        inputFile,
        '--config',
        configFile,
        '--partitions',
        '6',
        '--out',
        path.join(dir, 'file6'),
      ]),
    ).toBe(0);
    const fromFile = eventsBySensor(readAlertsFile(path.join(dir, 'file6', 'alerts.ndjson')));
    expect(outline(fromFile)).toEqual(outline(live));

    const range = [
      '--brokers',
      kafkaBrokers().join(','),
      '--from',
      '2000-01-01T00:00:00Z',
      '--to',
      '2100-01-01T00:00:00Z',
    ];
    expect(
      await replayCommand([
        `kafka://${topic}`,
        ...range,
        '--config',
        configFile,
        '--out',
        path.join(dir, 'kafka'),
      ]),
    ).toBe(0);
    const fromKafka = eventsBySensor(readAlertsFile(path.join(dir, 'kafka', 'alerts.ndjson')));
    expect(outline(fromKafka)).toEqual(outline(live));

    // One event time for the whole file: the same sensors fall silent here (every partition has
    // readings each second), but each is noticed at another reading (the plant's clock, not its
    // partition's), so the times and ids differ: the partitions are what makes replay equal live.
    expect(await replayCommand([inputFile, '--config', configFile, '--out', path.join(dir, 'file1')])).toBe(
      0,
    );
    const single = readAlertsFile(path.join(dir, 'file1', 'alerts.ndjson'));
    const singleStale = single.filter((e) => e.reasons.includes('stale'));
    expect(singleStale.map((e) => e.sensor).sort()).toEqual(stale.map((e) => e.sensor).sort());
    expect(outline(eventsBySensor(single))).not.toEqual(outline(live));
  });

  it('exports the wall-clock idle time of every assigned input partition', async () => {
    await new Promise((r) => setTimeout(r, 2_500)); // at least one gauge refresh after the last message
    const text = await (await fetch(`http://127.0.0.1:${await monitor.metricsPort()}/metrics`)).text();
    const idle = [...text.matchAll(/^streamfence_input_idle_seconds\{partition="(\d+)"\} (\S+)$/gm)];
    expect(idle.map((m) => Number(m[1])).sort()).toEqual([0, 1, 2, 3, 4, 5]);
    for (const m of idle) expect(Number(m[2])).toBeGreaterThan(0);
  });
});
