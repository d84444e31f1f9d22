/**
 * Crash safety: the monitor is SIGKILLed three times while readings stream in, and restarted each
 * time. Afterwards every sensor's stored lifetime count equals what was produced for it (nothing
 * counted twice, nothing skipped) and every alert event of the reference is on the alert topic
 * (duplicates with the same id are allowed, losses are not).
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

describe('streamfence run: crash safety', () => {
  const bed = useMonitorBed();
  const { topic, alertTopic, group, prefix, redis, monitors } = bed;

  it('keeps exact state and loses no alert across three SIGKILLs', async () => {
    const readings = generateReadings(30, 1200, 11);
    const config = testConfig();
    const configFile = writeTestConfig();
    await bed.createTopics();

    // Readings keep arriving in slices while the monitor is killed and restarted: each monitor finds
    // a backlog when it starts and more arrives while it runs, so every kill lands mid-stream.
    const kafka = kafkaClient();
    const slices = 8;
    const per = Math.ceil(readings.length / slices);
    const slice = (i: number) => produceReadings(kafka, topic, readings.slice(i * per, (i + 1) * per));

    let killsWithProgress = 0;
    for (let k = 0; k < 3; k++) {
      await slice(2 * k);
      const m = bed.spawn(configFile);
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

    const last = bed.spawn(configFile);
    await waitCheckpointedToEnd(redis, prefix, group, topic, 90_000);

    await expectExactState(bed, readings, config);
    // Duplicates with the same id are allowed, losses and invented events are not.
    const expected = await expectNoLostAlerts(alertTopic, readings, config, { onlyReferenceEvents: true });
    expect(expected).toBeGreaterThan(30);

    last.child.kill('SIGTERM');
    expect(await last.exited).toBe(0);
  });
});
