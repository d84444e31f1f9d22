/**
 * A producer that puts a counter into the sensor id: one million distinct ids through a replay with
 * a limit of 10,000 sensors. Memory stays within the limit's budget and every reading beyond it is
 * rejected with its reason, none dropped.
 */
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { defaultConfig } from '../../../libs/config/config.js';
import { HEAP_BYTES_PER_SENSOR } from '../../../libs/engine/sensor-budget.js';
import type { InputRecord } from '../../../services/replay/input.js';
import { runReplay } from '../../../services/replay/replay.js';

const IDS = 1_000_000;
const LIMIT = 10_000;
const T0 = Date.parse('2026-05-01T00:00:00.000Z');
const dir = mkdtempSync(join(tmpdir(), 'sf-limit-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function* runawayIds(): AsyncIterable<InputRecord[]> {
  for (let start = 0; start < IDS; start += 10_000) {
    const batch: InputRecord[] = [];
    for (let i = start; i < start + 10_000; i++) {
      const reading = { sensor: `line-1/meter-${i}`, ts: T0 + i, value: 20 + (i % 7) };
      batch.push({ line: i + 1, raw: JSON.stringify(reading), result: { ok: true, reading } });
    }
    yield batch;
  }
}

const held = () => {
  const m = process.memoryUsage();
  return m.heapUsed + m.external;
};

describe('replay with a sensor limit', () => {
  it('keeps one million distinct ids within the limit and rejects the rest as sensor_limit', async () => {
    const before = held();
    let during = 0;
    let sensorsAtEnd = 0;
    const summary = await runReplay({
      source: runawayIds(),
      config: defaultConfig(),
      outDir: dir,
      inputInfo: { path: 'generated' },
      maxSensors: LIMIT,
      observers: [
        {
          onEnd: (engine) => {
            during = held() - before;
            sensorsAtEnd = engine.sensorCount;
          },
        },
      ],
    });
    expect(sensorsAtEnd).toBe(LIMIT);
    expect(summary.sensors).toBe(LIMIT);
    expect(summary.readings).toBe(LIMIT);
    expect(summary.rejected.byReason).toEqual({ sensor_limit: IDS - LIMIT });
    expect(summary.sensorLimit).toEqual({ max: LIMIT, evicted: 0 });
    // Every rejected reading is kept with its reason (one line each in rejected.ndjson).
    expect(statSync(join(dir, 'rejected.ndjson')).size).toBeGreaterThan((IDS - LIMIT) * 50);
    // Within the limit's budget (plus 64 MB of garbage not yet collected); without the limit the
    // million sensors would need about 0.9 KB each, 900 MB (npm run bench -- sensor-memory).
    expect(during).toBeLessThan(LIMIT * HEAP_BYTES_PER_SENSOR + 64 * 2 ** 20);
  });
});
