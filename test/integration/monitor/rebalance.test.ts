/**
 * Rebalance: two monitors share one group; one is stopped (SIGTERM) mid-stream and the other takes
 * over its partitions from their checkpoints. State stays exact and no alert event goes missing.
 */
import { describe, expect, it } from 'vitest';
import { kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  expectNoLostAlerts,
  generateReadings,
  produceReadings,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

describe('streamfence run: rebalance', () => {
  const bed = useMonitorBed();
  const { topic, alertTopic, group, prefix, redis } = bed;

  it('hands partitions over with exact state when one of two monitors stops', async () => {
    const readings = generateReadings(30, 1000, 23);
    const config = testConfig();
    const configFile = writeTestConfig();
    await bed.createTopics();

    const kafka = kafkaClient();
    const slices = 10;
    const per = Math.ceil(readings.length / slices);
    await produceReadings(kafka, topic, readings.slice(0, per));
    const a = bed.spawn(configFile);
    await a.waitForLog(/"msg":"checkpoint"/, 45_000);
    const b = bed.spawn(configFile);
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
    await expectExactState(bed, readings, config);
    // B took over every partition after A left.
    const lastAssign = b.logs.filter((l) => /partitions assigned/.test(l)).at(-1)!;
    expect((JSON.parse(lastAssign) as { partitions: number[] }).partitions).toEqual([0, 1, 2, 3, 4, 5]);

    await expectNoLostAlerts(alertTopic, readings, config);
    b.child.kill('SIGTERM');
    expect(await b.exited).toBe(0);
  });
});
