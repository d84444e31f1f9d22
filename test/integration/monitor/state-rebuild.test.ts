/**
 * Redis loses a partition's state while no monitor holds it (here: the keys deleted between two
 * runs). The group's committed offset shows progress was made, so the next monitor logs and counts
 * the loss, re-reads window + one bucket of history before the committed offset (by Kafka time;
 * the readings are produced with their reading time as message time), publishes nothing for it,
 * and judges on from the committed offset: the alert events after the loss equal a replay's.
 */
import { describe, expect, it } from 'vitest';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { deleteKeysByPrefix, kafkaClient } from '../../harness/services.js';
import {
  generateReadings,
  readAlertEvents,
  referenceEvents,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
  produceStamped,
} from './helpers.js';

const eventKey = (e: AlertEvent) => `${e.sensor}:${e.state}:${e.severity}:${e.ts}`;

describe('streamfence run: state lost while no monitor held it', () => {
  const bed = useMonitorBed();
  const { topic, group, prefix, redis } = bed;

  it('rebuilds the baselines from Kafka and judges on exactly as a replay', async () => {
    await bed.createTopics([2, 1, 1]);
    // 6 sensors, 25 minutes at one reading a second, ending a minute ago (inside any retention).
    const generated = generateReadings(6, 1500, 31);
    const shift = Date.now() - 60_000 - generated[generated.length - 1].ts;
    const readings = generated.map((r) => ({ ...r, ts: r.ts + shift }));
    const cut = 6 * 1000;
    const cutTs = readings[cut].ts;
    const config = testConfig();

    await produceStamped(kafkaClient(), topic, readings.slice(0, cut));
    const first = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);
    first.child.kill('SIGTERM');
    expect(await first.exited).toBe(0);

    // The loss: every partition key of the monitor gone while it is down.
    await deleteKeysByPrefix(redis, `{${prefix}:`);
    await produceStamped(kafkaClient(), topic, readings.slice(cut));
    const second = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // Logged at error level and counted, once per partition.
    const lossLines = second.logs.filter((l) =>
      /"level":"error".*partition state gone from Redis although group/.test(l),
    );
    expect(lossLines).toHaveLength(2);
    const port = await second.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_state_rebuilds_total\{cause="keys_lost"\} 2$/m);
    expect(metrics).toMatch(/^streamfence_partitions_rebuilding 0$/m);
    expect(metrics).toMatch(/^streamfence_state_rebuild_missing_seconds\{partition="0"\} 0$/m);

    // Only window + one bucket (11 min of the test config's 10 min window) was re-read, not the
    // whole 1000 s per sensor before the loss: 660 readings a sensor, give or take the message
    // at each end.
    const rebuilt = second.logs
      .filter((l) => /baselines rebuilt from/.test(l))
      .map((l) => (JSON.parse(l) as { readings: number }).readings);
    expect(rebuilt).toHaveLength(2);
    const total = rebuilt.reduce((a, b) => a + b, 0);
    expect(total).toBeGreaterThanOrEqual(6 * 659);
    expect(total).toBeLessThanOrEqual(6 * 662);

    // The events after the loss are a replay's (sensor, state, severity, reading time) ...
    const reference = [...referenceEvents(readings, config).values()].flat();
    const live = await readAlertEvents(bed.alertTopic);
    const after = (e: AlertEvent) => Date.parse(e.ts) >= cutTs;
    expect(reference.filter(after).length).toBeGreaterThan(0);
    expect(live.filter(after).map(eventKey).sort()).toEqual(reference.filter(after).map(eventKey).sort());
    // ... and nothing from the re-read history was published again.
    const before = (e: AlertEvent) => !after(e);
    expect(live.filter(before).map(eventKey).sort()).toEqual(reference.filter(before).map(eventKey).sort());
  });
});
