/**
 * Redis loses a running monitor's keys (here: deleted under it). The next checkpoint finds the
 * owner record gone, not taken by another monitor: the monitor keeps its exact in-memory state,
 * takes ownership back and writes the state in full, instead of dropping it and re-reading the log.
 */
import { describe, expect, it } from 'vitest';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { deleteKeysByPrefix, kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  generateReadings,
  produceReadings,
  readAlertEvents,
  referenceEvents,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

describe('streamfence run: state keys deleted under a running monitor', () => {
  const bed = useMonitorBed();
  const { topic, group, prefix, redis } = bed;

  it('keeps the in-memory state and writes it in full again', async () => {
    await bed.createTopics([2, 1, 1]);
    const readings = generateReadings(6, 120, 11);
    const half = Math.floor(readings.length / 2);
    const mon = bed.spawn(writeTestConfig());
    await produceReadings(kafkaClient(), topic, readings.slice(0, half));
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    await deleteKeysByPrefix(redis, `{${prefix}:`);
    await produceReadings(kafkaClient(), topic, readings.slice(half));
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // Every sensor's lifetime count is exact: nothing lost with the keys, nothing read twice.
    await expectExactState(bed, readings, testConfig());
    // No old alert event published again: the live topic holds the reference's events, each once.
    const reference = [...referenceEvents(readings, testConfig()).values()].flat();
    expect(reference.length).toBeGreaterThan(0);
    const live = await readAlertEvents(bed.alertTopic);
    const key = (e: AlertEvent) => `${e.id}:${e.state}:${e.ts}`;
    expect(live.map(key).sort()).toEqual(reference.map(key).sort());
    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_checkpoints_total\{result="owner_gone"\} [1-9]\d*$/m);
    expect(metrics).not.toMatch(/^streamfence_checkpoints_total\{result="fenced"\} [1-9]/m);
    expect(metrics).toMatch(/^streamfence_state_rebuilds_total\{cause="keys_lost_running"\} [1-9]\d*$/m);
    // The loss was logged at error level, and never taken for a take-over (which drops the state).
    expect(mon.logs.some((l) => /"level":"error".*partition state gone from Redis/.test(l))).toBe(true);
    expect(mon.logs.some((l) => /now owned by another monitor/.test(l))).toBe(false);
  });
});
