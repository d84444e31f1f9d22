/**
 * The demo counts its simulated plant as `run` counts the live monitor: readings by outcome and
 * alert events by state and severity, equal to the engine's own counters.
 */
import { describe, expect, it } from 'vitest';
import { BoardHub } from '../../../services/board/hub.js';
import { DemoFeed } from '../../../services/board/demo-feed.js';
import { createDemoMetrics } from '../../../services/metrics/board-metrics.js';
import { DEFAULT_SCENARIO } from '../../../libs/sim/scenarios.js';

describe('demo metrics', () => {
  it('count every judged reading and alert event under the engine metric names', async () => {
    const wall = Date.parse('2026-03-01T00:00:00Z');
    const hub = new BoardHub({ mode: 'demo', clock: { wall: () => wall, plant: () => wall } });
    const metrics = createDemoMetrics(hub);
    const feed = new DemoFeed(
      hub,
      { scenario: DEFAULT_SCENARIO, seed: 7, speed: 60, prerollMs: 8 * 3_600_000, wallStart: wall },
      metrics.engine,
    );
    const judged = feed.advanceTo(wall);
    const counters = feed.engine.counters;
    expect(counters.alerts.raised).toBeGreaterThan(0);

    const value = async (name: string, labels: Record<string, string> = {}) => {
      const metric = (await metrics.registry.getMetricsAsJSON()).find((m) => m.name === name);
      const values = (metric?.values ?? []) as { labels: Record<string, string>; value: number }[];
      return values
        .filter((v) => Object.entries(labels).every(([key, want]) => v.labels[key] === want))
        .reduce((sum, v) => sum + v.value, 0);
    };
    expect(await value('streamfence_readings_total', { outcome: 'accepted' })).toBe(judged);
    expect(await value('streamfence_readings_total', { outcome: 'rejected' })).toBe(0);
    for (const state of ['raised', 'updated', 'cleared'] as const)
      expect(await value('streamfence_alerts_total', { state })).toBe(counters.alerts[state]);
    expect(await value('streamfence_active_alerts')).toBe(feed.engine.activeAlertCount());
    expect(await value('streamfence_sensors_tracked')).toBe(feed.engine.sensorCount);
    expect(await value('streamfence_board_alert_events_total')).toBe(
      counters.alerts.raised + counters.alerts.updated + counters.alerts.cleared,
    );
  });
});
