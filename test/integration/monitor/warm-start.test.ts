/**
 * `run --warm-start`: a first deployment onto a topic holding a day of history learns the
 * baselines from window + one bucket of it (publishing nothing) and judges the first new reading
 * against the full baseline, exactly as a replay of the history and that reading does.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseConfigText } from '../../../libs/config/config.js';
import type { Reading } from '../../../libs/engine/reading.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { kafkaClient } from '../../harness/services.js';
import {
  readAlertEvents,
  referenceEvents,
  seeded,
  useMonitorBed,
  waitCheckpointedToEnd,
  produceStamped,
} from './helpers.js';

/** 12 h window in 1 h buckets: a rebuild re-reads 13 h of the day. */
const CONFIG_TEXT = `
defaults:
  window: "12h"
  buckets: 12
  minSamples: 30
  clearAfter: 3
  flatlineAfter: 0
`;

const MINUTE = 60_000;
const SENSORS = 10;

describe('streamfence run --warm-start', () => {
  const bed = useMonitorBed();
  const { topic, group, prefix, redis } = bed;

  it('judges the first new reading against the full baseline, as a replay does', async () => {
    await bed.createTopics([2, 1, 1]);
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-warm-'));
    const configFile = path.join(dir, 'engine.yaml');
    writeFileSync(configFile, CONFIG_TEXT);
    const config = parseConfigText(CONFIG_TEXT, 'warm-start test config');

    // A day of invented readings, one a minute per sensor, ending two minutes ago.
    const rnd = seeded(5);
    const ids = Array.from({ length: SENSORS }, (_, i) => `still-${i % 3}/column/temp-${i}`);
    const end = Math.floor(Date.now() / MINUTE) * MINUTE - 2 * MINUTE;
    const history: Reading[] = [];
    for (let k = 24 * 60; k > 0; k--)
      ids.forEach((sensor, i) => {
        const noise = (rnd() + rnd() + rnd() - 1.5) * 2;
        history.push({
          sensor,
          ts: end - k * MINUTE + i,
          value: Math.round((80 + i * 5 + noise) * 1000) / 1000,
        });
      });
    await produceStamped(kafkaClient(), topic, history);

    const mon = bed.spawn(configFile, { extra: ['--start-from', 'now', '--warm-start'] });
    await mon.waitForLog(/"msg":"consuming"/);
    // The new readings: the first sensor far above its spread, the others ordinary.
    const fresh: Reading[] = ids.map((sensor, i) => ({
      sensor,
      ts: end + i,
      value: 80 + i * 5 + (i === 0 ? 40 : 0.5),
    }));
    await produceStamped(kafkaClient(), topic, fresh);
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // Nothing of the history was published; what was is the replay's, baseline and all.
    const reference = [...referenceEvents([...history, ...fresh], config).values()]
      .flat()
      .filter((e) => Date.parse(e.ts) >= end);
    const live = await readAlertEvents(bed.alertTopic);
    expect(reference.map((e) => `${e.sensor}:${e.state}`)).toEqual([`${ids[0]}:raised`]);
    // Every field but the id: ids count the sensor's lifetime readings, which a warm start
    // (having read 13 h, not the whole topic) does not know.
    const withoutId = ({ id: _id, ...rest }: AlertEvent) => rest;
    expect(live.map(withoutId)).toEqual(reference.map(withoutId));
    // A full baseline: 11 closed one-hour buckets of one reading a minute (the open one excluded).
    expect(live[0].baseline.count).toBeGreaterThanOrEqual(11 * 60);

    // Re-read 13 h (window + one bucket) of the 24, not all of it, and counted as a warm start.
    const rebuilt = mon.logs
      .filter((l) => /baselines rebuilt from/.test(l))
      .map((l) => (JSON.parse(l) as { readings: number }).readings);
    expect(rebuilt).toHaveLength(2);
    const total = rebuilt.reduce((a, b) => a + b, 0);
    expect(total).toBeGreaterThanOrEqual(SENSORS * (13 * 60 - 1));
    expect(total).toBeLessThanOrEqual(SENSORS * (13 * 60 + 1));
    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_state_rebuilds_total\{cause="warm_start"\} 2$/m);
  });
});
