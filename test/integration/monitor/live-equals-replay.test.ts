/**
 * The live monitor gives exactly the alert events an in-process Engine gives for the same readings
 * (per sensor: same ids, states, severities, in order); it serves its metrics; `inspect` prints the
 * stored state; SIGTERM stops it within 10 s with every reading checkpointed.
 */
import { spawnSync } from 'node:child_process';
import { beforeAll, describe, expect, it } from 'vitest';
import { kafkaClient, redisUrl } from '../../harness/services.js';
import {
  CLI,
  countBySensor,
  eventsBySensor,
  expectExactState,
  generateReadings,
  produceReadings,
  readAlertEvents,
  referenceEvents,
  summary,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
  type MonitorProc,
} from './helpers.js';

describe('streamfence run: live equals replay', () => {
  const bed = useMonitorBed();
  const { topic, alertTopic, group, prefix, redis } = bed;
  const readings = generateReadings(24, 500);
  const config = testConfig();
  let mon: MonitorProc;

  beforeAll(async () => {
    await bed.createTopics();
    await produceReadings(kafkaClient(), topic, readings);
    mon = bed.spawn(writeTestConfig());
    await waitCheckpointedToEnd(redis, prefix, group, topic);
  });

  it('publishes per sensor exactly the events of an in-process engine', async () => {
    const reference = referenceEvents(readings, config);
    const expectedTotal = [...reference.values()].reduce((n, l) => n + l.length, 0);
    expect(expectedTotal).toBeGreaterThan(20); // the data set really raises and clears alerts
    expect([...reference.values()].flat().some((e) => e.state === 'cleared')).toBe(true);
    const live = eventsBySensor(await readAlertEvents(alertTopic));
    expect([...live.keys()].sort()).toEqual([...reference.keys()].sort());
    for (const [sensor, events] of reference)
      expect(summary(live.get(sensor)), sensor).toEqual(summary(events));
    // Whole payloads match too (baseline figures, message, notice).
    const one = reference.values().next().value!;
    expect(live.get(one[0].sensor)![0]).toEqual(one[0]);
  });

  it('checkpoints every sensor with its exact lifetime count', async () => {
    await expectExactState(bed, readings, config);
  });

  it('serves /metrics, /healthz and /readyz', async () => {
    const port = await mon.metricsPort();
    const text = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    const value = (re: RegExp) => Number(re.exec(text)?.[1] ?? NaN);
    expect(value(/^streamfence_readings_total\{outcome="accepted"\} (\S+)$/m)).toBe(readings.length);
    const alertSum = [...text.matchAll(/^streamfence_alerts_total\{[^}]*\} (\S+)$/gm)].reduce(
      (n, m) => n + Number(m[1]),
      0,
    );
    expect(alertSum).toBe([...referenceEvents(readings, config).values()].flat().length);
    for (const name of [
      'streamfence_rejected_total',
      'streamfence_active_alerts',
      'streamfence_sensors_tracked',
      'streamfence_checkpoint_duration_seconds_bucket',
      'streamfence_event_delay_seconds_bucket',
      'streamfence_partition_lag',
      'streamfence_backoff_total',
      'process_cpu_seconds_total',
    ]) {
      expect(text, name).toContain(name);
    }
    expect(value(/^streamfence_sensors_tracked (\S+)$/m)).toBe(24);
    for (const m of text.matchAll(/^streamfence_partition_lag\{partition="\d+"\} (\S+)$/gm))
      expect(Number(m[1])).toBe(0);
    expect(value(/^streamfence_checkpoint_duration_seconds_count (\S+)$/m)).toBeGreaterThan(0);
    expect(text).not.toMatch(/sensor="/); // never a per-sensor label
    expect((await fetch(`http://127.0.0.1:${port}/healthz`)).status).toBe(200);
    const ready = await fetch(`http://127.0.0.1:${port}/readyz`);
    expect(ready.status).toBe(200);
    expect(await ready.json()).toMatchObject({ ready: true, joined: true, redis: true });
  });

  it('inspect prints one JSON line per stored sensor', () => {
    const r = spawnSync(
      process.execPath,
      [CLI, 'inspect', '--redis', redisUrl(), '--state-prefix', prefix, '--group', group],
      {
        encoding: 'utf8',
      },
    );
    expect(r.status, r.stderr).toBe(0);
    const lines = r.stdout
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as Record<string, unknown>);
    expect(lines).toHaveLength(24);
    const counts = countBySensor(readings);
    for (const l of lines) {
      expect(l.seen).toBe(counts.get(l.sensor as string));
      expect(l.baseline).toMatchObject({
        count: expect.any(Number),
        q1: expect.any(Number),
        iqr: expect.any(Number),
      });
      expect(typeof l.partition).toBe('number');
      expect(l.newestReading).toMatch(/^2026-03-14T/);
    }
    const one = spawnSync(
      process.execPath,
      [CLI, 'inspect', 'kiln-1.temp-05', 'no-such-sensor', '--redis', redisUrl(), '--state-prefix', prefix],
      {
        encoding: 'utf8',
      },
    );
    expect(one.status).toBe(2);
    expect(one.stdout.trim().split('\n')).toHaveLength(1);
    expect(one.stderr).toMatch(/no stored state for "no-such-sensor".*\[NOT_FOUND\]/);
  });

  it('stops on SIGTERM within 10 s, exit 0, state checkpointed', async () => {
    const t0 = Date.now();
    mon.child.kill('SIGTERM');
    const code = await mon.exited;
    expect(code).toBe(0);
    expect(Date.now() - t0).toBeLessThan(10_000);
    expect(mon.logs.some((l) => /stopped: state checkpointed/.test(l))).toBe(true);
    // The banner carries the notice and no log line carries a password or a full URL.
    expect(mon.logs[0]).toContain('Advisory only');
  });
});
