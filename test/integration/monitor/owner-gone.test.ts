/**
 * Redis loses a running monitor's keys (here: deleted under it). The next checkpoint finds the
 * owner record gone, not taken by another monitor: the monitor keeps its exact in-memory state,
 * takes ownership back and writes the state in full, instead of dropping it and re-reading the log.
 */
import { describe, expect, it } from 'vitest';
import { deleteKeysByPrefix, kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  generateReadings,
  produceReadings,
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
    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_checkpoints_total\{result="owner_gone"\} [1-9]\d*$/m);
    expect(metrics).not.toMatch(/^streamfence_checkpoints_total\{result="fenced"\} [1-9]/m);
  });
});
