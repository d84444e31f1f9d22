/**
 * The demo's plant: the simulated plant run through the real Engine, feeding the board hub. History
 * before "now" is pre-rolled at once so baselines are warm and past alerts are on the board as
 * history; after that the plant clock runs `speed` times faster than the wall clock.
 */
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { PlantSimulator, suggestedConfig, type SimReading } from '../../libs/sim/plant.js';
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
    let n = 0;
    while (this.pending !== null && this.pending.ts <= until && n < budget) {
      const r = this.pending;
      const out = this.engine.process(r);
      this.hub.addReading(r.sensor, {
        ts: r.ts,
        value: r.value,
        flagged: out.accepted && out.verdict.flagged,
      });
      for (const ev of out.events) this.hub.applyEvent(ev);
      n++;
      this.pending = this.sim.next();
    }
    this.readings += n;
    return n;
  }
}
