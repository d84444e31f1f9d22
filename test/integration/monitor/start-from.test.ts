/**
 * A first deployment onto a topic that already holds history: by default (`--start-from now`) the
 * monitor judges only readings produced after it started, and publishes nothing for the history.
 */
import { describe, expect, it } from 'vitest';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { kafkaClient } from '../../harness/services.js';
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

describe('streamfence run --start-from now (the default)', () => {
  const bed = useMonitorBed();
  const { topic, group, prefix, redis } = bed;

  it('leaves the history before its start alone and judges what comes after', async () => {
    await bed.createTopics([2, 1, 1]);
    const readings = generateReadings(4, 500, 23);
    const cut = Math.floor(readings.length * 0.6);
    const history = readings.slice(0, cut);
    const fresh = readings.slice(cut);
    await produceReadings(kafkaClient(), topic, history);

    const mon = bed.spawn(writeTestConfig(), { extra: ['--start-from', 'now'] });
    await mon.waitForLog(/"msg":"consuming"/);
    await produceReadings(kafkaClient(), topic, fresh);
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // The state holds exactly the readings produced after the start ...
    await expectExactState(bed, fresh, testConfig());
    // ... and the alert events are those of judging them alone (the history was never read).
    const reference = [...referenceEvents(fresh, testConfig()).values()].flat();
    expect(reference.length).toBeGreaterThan(0);
    const key = (e: AlertEvent) => `${e.id}:${e.state}:${e.ts}`;
    const live = await readAlertEvents(bed.alertTopic);
    expect(live.map(key).sort()).toEqual(reference.map(key).sort());
    expect(mon.logs.some((l) => /starting at the end of the topic/.test(l))).toBe(true);
  });
});
