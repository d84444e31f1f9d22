/**
 * A state loss when Kafka no longer holds the whole history a rebuild wants: the input topic keeps
 * less than window + one bucket (a warn line and streamfence_input_retention_shortfall_seconds at
 * start), and retention has already removed older readings (here: the records deleted up to a
 * point, as a retention pass does). On partition 0 five of the eleven minutes wanted are left, on
 * partition 1 nothing before the resume point. The monitor rebuilds from what is left, says how
 * much was missing (warn lines, streamfence_state_rebuild_missing_seconds), and judges on exactly
 * as a replay of the readings Kafka still held.
 */
import { ConfigResourceTypes } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import type { Reading } from '../../../libs/engine/reading.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { deleteKeysByPrefix, kafkaClient } from '../../harness/services.js';
import {
  generateReadings,
  readAlertEvents,
  readTopic,
  referenceEvents,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
  produceStamped,
} from './helpers.js';

const eventKey = (e: AlertEvent) => `${e.sensor}:${e.state}:${e.severity}:${e.ts}`;
const SENSORS = 6;
/** The test config's window is 10 min in 10 buckets: a rebuild wants 11 min of history. */
const WANTED_S = 11 * 60;
/** Retention has left 5 of those 11 minutes before the loss on partition 0. */
const KEPT_S = 5 * 60;

interface RebuildLine {
  level: string;
  msg: string;
  partition: number;
  missingSeconds: number;
  readings: number;
}

/** Retention as Kafka applies it, done at once: retention.ms shortened and old records removed. */
async function applyRetention(topic: string, keepFrom: number, keepNothingOn: number): Promise<void> {
  const admin = kafkaClient().admin();
  await admin.connect();
  try {
    await admin.alterConfigs({
      validateOnly: false,
      resources: [
        {
          type: ConfigResourceTypes.TOPIC,
          name: topic,
          configEntries: [{ name: 'retention.ms', value: String(10 * 60_000) }],
        },
      ],
    });
    const byTime = await admin.fetchTopicOffsetsByTimestamp(topic, keepFrom);
    const ends = await admin.fetchTopicOffsets(topic);
    const upTo = byTime.map((p) =>
      p.partition === keepNothingOn ? { partition: p.partition, offset: ends[p.partition].high } : p,
    );
    await admin.deleteTopicRecords({ topic, partitions: upTo });
  } finally {
    await admin.disconnect();
  }
}

describe('streamfence run: state lost and retention shorter than the rebuild needs', () => {
  const bed = useMonitorBed();
  const { topic, group, prefix, redis } = bed;

  it('rebuilds from what Kafka holds, says how much was missing, judges as a replay of it', async () => {
    await bed.createTopics([2, 1, 1]);
    // 25 minutes at one reading a second per sensor, ending a minute ago; the loss after 20.
    const generated = generateReadings(SENSORS, 1500, 43);
    const shift = Date.now() - 60_000 - generated[generated.length - 1].ts;
    const readings = generated.map((r) => ({ ...r, ts: r.ts + shift }));
    const cut = 1200 * SENSORS;
    const cutTs = readings[cut].ts;
    const config = testConfig();

    await produceStamped(kafkaClient(), topic, readings.slice(0, cut));
    const partitionOf = new Map((await readTopic(topic)).map((m) => [m.key!, m.partition]));
    expect(new Set(partitionOf.values())).toEqual(new Set([0, 1]));
    const first = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);
    first.child.kill('SIGTERM');
    expect(await first.exited).toBe(0);

    // The loss while no monitor runs, and retention: 10 min kept (1 min short of the 11 a
    // rebuild wants); on partition 0 readings older than 5 min before the loss already gone, on
    // partition 1 everything before the loss.
    await deleteKeysByPrefix(redis, `{${prefix}:`);
    const keepFrom = readings[cut - KEPT_S * SENSORS].ts;
    await applyRetention(topic, keepFrom, 1);
    await produceStamped(kafkaClient(), topic, readings.slice(cut));
    const second = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // Told at start that the retention is too short for a full rebuild ...
    expect(
      second.logs.some((l) => /"level":"warn".*keeps 10m of readings but a state rebuild needs 11m/.test(l)),
    ).toBe(true);
    const port = await second.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_input_retention_shortfall_seconds 60$/m);
    expect(metrics).toMatch(/^streamfence_state_rebuilds_total\{cause="keys_lost"\} 2$/m);
    const missingGauge = (partition: number) =>
      Number(
        new RegExp(
          `^streamfence_state_rebuild_missing_seconds\\{partition="${partition}"\\} (\\S+)$`,
          'm',
        ).exec(metrics)?.[1],
      );

    // ... on partition 0, that 6 of the 11 minutes wanted were not there (give or take the
    // second between the last judged reading and the loss) ...
    const done = second.logs
      .filter((l) => /baselines rebuilt from/.test(l))
      .map((l) => JSON.parse(l) as RebuildLine);
    expect(done.map((d) => d.partition)).toEqual([0]);
    expect(done[0].level).toBe('warn');
    expect(done[0].msg).toMatch(/of the history wanted is not in the input topic/);
    expect(Math.abs(done[0].missingSeconds - (WANTED_S - KEPT_S))).toBeLessThanOrEqual(2);
    expect(Math.abs(missingGauge(0) - (WANTED_S - KEPT_S))).toBeLessThanOrEqual(2);
    // ... and on partition 1, that nothing was left: the baselines start empty.
    const empty = second.logs.filter((l) =>
      /"level":"warn".*nothing of the 11m of history a rebuild wants is left in the input topic/.test(l),
    );
    expect(empty.map((l) => (JSON.parse(l) as RebuildLine).partition)).toEqual([1]);
    expect(missingGauge(1)).toBe(WANTED_S);

    // What Kafka still held: partition 0's last 5 min before the loss, none of partition 1's;
    // all of it was re-read and nothing else.
    const keptBefore = (r: Reading) => (partitionOf.get(r.sensor) === 0 ? r.ts >= keepFrom : r.ts >= cutTs);
    const kept = readings.filter(keptBefore);
    expect(done[0].readings).toBe(kept.filter((r) => r.ts < cutTs).length);

    // Judging resumed at the loss as a replay of what Kafka held would judge it, on both
    // partitions; nothing of the history re-read was published again.
    const reference = [...referenceEvents(kept, config).values()].flat();
    const live = await readAlertEvents(bed.alertTopic);
    const after = (e: AlertEvent) => Date.parse(e.ts) >= cutTs;
    for (const p of [0, 1])
      expect(reference.some((e) => after(e) && partitionOf.get(e.sensor) === p && e.state === 'raised')).toBe(
        true,
      );
    expect(live.filter(after).map(eventKey).sort()).toEqual(reference.filter(after).map(eventKey).sort());
    const full = [...referenceEvents(readings, config).values()].flat();
    const before = (e: AlertEvent) => !after(e);
    expect(live.filter(before).map(eventKey).sort()).toEqual(full.filter(before).map(eventKey).sort());
  });
});
