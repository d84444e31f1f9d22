/**
 * The demo's plant: the simulated plant run through the real Engine, feeding the board hub. History
 * before "now" is pre-rolled at once so baselines are warm and past alerts are on the board as
 * history; after that the plant clock runs `speed` times faster than the wall clock.
 */
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { PlantSimulator, suggestedConfig, type SimReading } from '../../libs/sim/plant.js';
import { countOutcome, type EngineMetrics } from '../metrics/metrics.js';
import type { BoardHub } from './hub.js';

export interface DemoFeedOptions {
  scenario: string;
  seed: number;
  speed: number;
  /** Plant history simulated instantly before going live. */
  prerollMs: number;
  /** Wall-clock epoch ms at which the plant clock equals "end of pre-roll". */
  wallStart: number;
  intervalMs?: number;
  /** Total simulated span; the demo stops feeding after it (90 days = 36 wall hours at speed 60). */
  durationMs?: number;
}

export class DemoFeed {
  readonly engine: Engine;
  private readonly sim: PlantSimulator;
  private pending: SimReading | null;
  readonly plantStart: number;
  readonly liveFrom: number;
  readings = 0;

  constructor(
    readonly hub: BoardHub,
    readonly opts: DemoFeedOptions,
    /** Counted as `run` counts its engine (same metric names and labels); none in tests. */
    private readonly metrics: EngineMetrics | null = null,
  ) {
    this.engine = new Engine(validateConfig(suggestedConfig(opts.scenario), `scenario ${opts.scenario}`));
    this.liveFrom = opts.wallStart;
    this.plantStart = opts.wallStart - opts.prerollMs;
    this.sim = new PlantSimulator({
      seed: opts.seed,
      start: this.plantStart,
      durationMs: opts.durationMs ?? 90 * 86_400_000,
      intervalMs: opts.intervalMs ?? 60_000,
      scenario: opts.scenario,
    });
    this.pending = this.sim.next();
  }

  /** Plant time that corresponds to a wall-clock time. */
  plantTimeAt(wall: number): number {
    return this.liveFrom + Math.max(0, wall - this.opts.wallStart) * this.opts.speed;
  }

  get sensorCount(): number {
    return this.sim.sensors().length;
  }

  get finished(): boolean {
    return this.pending === null;
  }

  /** Judge every simulated reading up to plant time `until` (at most `budget` of them this call). */
  advanceTo(until: number, budget = 50_000): number {
    let judged = 0;
    while (this.pending !== null && this.pending.ts <= until && judged < budget) {
      const reading = this.pending;
      const outcome = this.engine.process(reading);
      if (this.metrics) countOutcome(this.metrics, outcome);
      this.hub.addReading(reading.sensor, {
        ts: reading.ts,
        value: reading.value,
        flagged: outcome.accepted && outcome.verdict.flagged,
      });
      for (const event of outcome.events) this.hub.applyEvent(event);
      judged++;
      this.pending = this.sim.next();
    }
    this.readings += judged;
    if (this.metrics) {
      this.metrics.activeAlerts.set(this.engine.activeAlertCount());
      this.metrics.sensorsTracked.set(this.engine.sensorCount);
    }
    return judged;
  }
}
