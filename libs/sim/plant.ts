/**
 * The plant simulator: a seeded, deterministic stream of sensor readings from an invented plant,
 * with injected and labelled faults. Readings are generated lazily in event-time order (all
 * sensors interleaved), so memory does not grow with the duration; only the fault labels are
 * planned up front.
 */
import { formatDuration } from '../config/duration.js';
import { StreamfenceError } from '../errors/index.js';
import { LocalClock } from '../engine/local-time.js';
import { COMMON_FAULT_KINDS, planFaults, type FaultKind, type PlannedFault } from './faults.js';
import { Prng, subSeed } from './prng.js';
import {
  DEFAULT_SCENARIO,
  SCENARIO_DEFS,
  hasStrongDailyCycle,
  sensorsPerUnit,
  typicalSpread,
  type MachineTemplate,
  type ScenarioDef,
  type SensorTemplate,
} from './scenarios.js';

export type { FaultKind } from './faults.js';
export { FAULT_KINDS } from './faults.js';
export { DEFAULT_SCENARIO } from './scenarios.js';

/** What to simulate: seed, time span, reading interval, scenario and which faults. */
export interface SimOptions {
  seed: number;
  /** Epoch ms of the first reading slot. */
  start: number;
  durationMs: number;
  /** Per-sensor reading interval. */
  intervalMs: number;
  /** How many sensors (default: the scenario's set). */
  sensors?: number;
  /** Inject faults (default true). */
  faults?: boolean;
  /** Scenario name (default 'harbour-brewery'). */
  scenario?: string;
}

/** One simulated reading. */
export interface SimReading {
  sensor: string;
  ts: number;
  value: number;
}

/** A fault as ground truth: it affects readings of `sensor` with start <= ts <= end (epoch ms). */
export interface FaultLabel {
  sensor: string;
  start: number;
  end: number;
  kind: FaultKind;
}

/** One simulated sensor as the sensor table lists it. */
export interface SensorInfo {
  id: string;
  unit: string;
  description: string;
  machine: string;
}

/** The scenarios by name, with title and description (for help texts). */
export const SCENARIOS: Record<string, { title: string; description: string }> = Object.fromEntries(
  Object.entries(SCENARIO_DEFS).map(([k, d]) => [k, { title: d.title, description: d.description }]),
);

/** Upper bounds that keep the up-front fault plan and the sensor table small. */
export const SIM_LIMITS = { maxSensors: 5000, maxDurationMs: 400 * 86_400_000, minIntervalMs: 100 } as const;

const DAY = 86_400_000;
const HOUR = 3_600_000;

/**
 * The scenario's daily cycle at an instant, from -1 to 1: its curve in local time when it has
 * one, else a cosine peaking at `dailyPeakHour` UTC. The zone offset is looked up once per UTC
 * hour (offsets change on whole hours in the zones the scenarios use).
 */
class DailyCycle {
  private readonly clock: LocalClock | null;
  private offsetHour = Number.NaN;
  private offset = 0;

  constructor(private readonly def: ScenarioDef) {
    this.clock = def.dailyCurve === undefined ? null : new LocalClock(def.timeZone ?? 'UTC');
  }

  at(ts: number): number {
    const curve = this.def.dailyCurve;
    if (curve === undefined) return Math.cos((2 * Math.PI * (ts - this.def.dailyPeakHour * HOUR)) / DAY);
    const hour = Math.floor(ts / HOUR);
    if (hour !== this.offsetHour) {
      this.offsetHour = hour;
      this.offset = this.clock!.offsetOf(hour * HOUR);
    }
    const local = (((ts + this.offset) % DAY) + DAY) % DAY;
    const position = local / HOUR;
    const from = Math.floor(position);
    const share = position - from;
    return curve[from] * (1 - share) + curve[(from + 1) % 24] * share;
  }
}

/** Shared load factor of one machine (Ornstein-Uhlenbeck, mean 0, sd 1). */
interface MachineRun {
  rng: Prng;
  load: number;
  /** Per-slot autocorrelation exp(-interval/tau). */
  keep: number;
}

interface SensorRun {
  info: SensorInfo;
  t: SensorTemplate;
  machine: MachineRun;
  rng: Prng;
  /** Offset of this sensor's readings inside each slot, so sensors interleave in time order. */
  offsetMs: number;
  lagged: number;
  lagGain: number;
  spread: number;
  scale: number;
  faults: PlannedFault[];
  faultPos: number;
  /** Last reading emitted (the value a stuck sensor repeats). */
  last: number;
}

function checkOptions(opts: SimOptions): ScenarioDef {
  const fail = (msg: string): never => {
    throw new StreamfenceError('ARGS_INVALID', msg);
  };
  const name = opts.scenario ?? DEFAULT_SCENARIO;
  const def = SCENARIO_DEFS[name];
  if (def === undefined)
    fail(`unknown scenario "${name}"; choose one of ${Object.keys(SCENARIO_DEFS).join(', ')}`);
  if (!Number.isInteger(opts.seed)) fail(`seed must be a whole number, got ${opts.seed}`);
  if (!Number.isFinite(opts.start) || opts.start < 0) fail('start must be an epoch-ms time after 1970');
  if (
    !Number.isFinite(opts.durationMs) ||
    opts.durationMs <= 0 ||
    opts.durationMs > SIM_LIMITS.maxDurationMs
  ) {
    fail('duration must be more than 0 and at most 400 days');
  }
  if (!Number.isFinite(opts.intervalMs) || opts.intervalMs < SIM_LIMITS.minIntervalMs) {
    fail(`interval must be at least ${SIM_LIMITS.minIntervalMs} ms`);
  }
  if (
    opts.sensors !== undefined &&
    (!Number.isInteger(opts.sensors) || opts.sensors < 1 || opts.sensors > SIM_LIMITS.maxSensors)
  ) {
    fail(`sensors must be a whole number from 1 to ${SIM_LIMITS.maxSensors}`);
  }
  return def!;
}

/** The seeded plant: `next()` yields readings in time order, the same for the same options. */
export class PlantSimulator {
  /** The scenario's name. */
  readonly scenario: string;
  private readonly def: ScenarioDef;
  private readonly runs: SensorRun[];
  private readonly machines: MachineRun[];
  private readonly slots: number;
  private slot = 0;
  private idx = 0;
  private readonly faultLabels: FaultLabel[];
  private readonly cycle: DailyCycle;

  constructor(private readonly opts: SimOptions) {
    this.def = checkOptions(opts);
    this.cycle = new DailyCycle(this.def);
    this.scenario = opts.scenario ?? DEFAULT_SCENARIO;
    const per = sensorsPerUnit(this.def);
    const count = opts.sensors ?? per * this.def.defaultUnits;
    this.slots = Math.ceil(opts.durationMs / opts.intervalMs);
    this.runs = [];
    this.machines = [];
    const faultsOn = opts.faults ?? true;
    for (let unit = 1; this.runs.length < count; unit++) {
      for (const machineTemplate of this.def.machines) {
        if (this.runs.length >= count) break;
        const machine = this.newMachine(
          `${this.def.unitName}-${unit}/${machineTemplate.name}`,
          machineTemplate,
        );
        for (const template of machineTemplate.sensors) {
          if (this.runs.length >= count) break;
          this.runs.push(
            this.newSensor(
              `${this.def.unitName}-${unit}/${machineTemplate.name}/${template.name}`,
              template,
              machine,
              faultsOn,
            ),
          );
        }
      }
    }
    // Offsets spread the sensors over the slot in table order, keeping the stream time-ordered.
    this.runs.forEach((r, i) => (r.offsetMs = Math.floor((i * opts.intervalMs) / this.runs.length)));
    for (const run of this.runs)
      for (const fault of run.faults)
        if (fault.kind === 'timeshift')
          fault.shiftMs = this.farthestHour(this.tsOf(fault.startSlot, run), this.tsOf(fault.endSlot, run));
    this.faultLabels = this.runs
      .flatMap((r) =>
        r.faults.map((f) => ({
          sensor: r.info.id,
          start: this.tsOf(f.startSlot, r),
          end: this.tsOf(f.endSlot, r),
          kind: f.kind,
        })),
      )
      .sort((a, b) => a.start - b.start || (a.sensor < b.sensor ? -1 : a.sensor > b.sensor ? 1 : 0));
  }

  private newMachine(id: string, template: MachineTemplate): MachineRun {
    const rng = new Prng(subSeed(this.opts.seed, `load:${id}`));
    const run = {
      rng,
      load: rng.normal(),
      keep: Math.exp(-this.opts.intervalMs / (template.loadTauMin * 60_000)),
    };
    this.machines.push(run);
    return run;
  }

  private newSensor(id: string, template: SensorTemplate, machine: MachineRun, faultsOn: boolean): SensorRun {
    const rng = new Prng(subSeed(this.opts.seed, `noise:${id}`));
    const spread = typicalSpread(template, this.def.faultsAgainstHour === true);
    const extra = hasStrongDailyCycle(template) ? (this.def.extraFaultKinds ?? []) : [];
    const faults = faultsOn
      ? planFaults(new Prng(subSeed(this.opts.seed, `faults:${id}`)), {
          slots: this.slots,
          intervalMs: this.opts.intervalMs,
          warmupMs: this.def.warmupMs,
          oneSided: template.direction === 'both' ? null : template.direction,
          kinds: extra.length === 0 ? COMMON_FAULT_KINDS : [...COMMON_FAULT_KINDS, ...extra],
        })
      : [];
    return {
      info: {
        id,
        unit: template.unit,
        description: template.description,
        machine: id.slice(0, id.lastIndexOf('/')),
      },
      t: template,
      machine,
      rng,
      offsetMs: 0,
      lagged: machine.load,
      lagGain:
        template.loadLagMin > 0 ? 1 - Math.exp(-this.opts.intervalMs / (template.loadLagMin * 60_000)) : 1,
      spread,
      scale: 10 ** template.decimals,
      faults,
      faultPos: 0,
      last: template.base,
    };
  }

  /**
   * The shift (whole hours, 3 to 21) whose level differs most from the normal level over the
   * fault's span: the time of day the fault reads, so it is as far from normal as the cycle allows.
   */
  private farthestHour(from: number, to: number): number {
    let best = 0;
    let bestGap = -1;
    for (let hours = 3; hours <= 21; hours++) {
      let gap = 0;
      let samples = 0;
      for (let ts = from; ts <= to; ts += 10 * 60_000, samples++)
        gap += Math.abs(this.cycle.at(ts + hours * HOUR) - this.cycle.at(ts));
      if (gap / samples > bestGap) {
        bestGap = gap / samples;
        best = hours;
      }
    }
    return best * HOUR;
  }

  private tsOf(slot: number, run: SensorRun): number {
    return this.opts.start + slot * this.opts.intervalMs + run.offsetMs;
  }

  /** The simulated sensors and what they measure. */
  sensors(): SensorInfo[] {
    return this.runs.map((r) => ({ ...r.info }));
  }

  /** Ground truth of every injected fault, ordered by start time. */
  labels(): FaultLabel[] {
    return this.faultLabels.map((l) => ({ ...l }));
  }

  /** The next reading in event-time order, or null when the duration is used up. */
  next(): SimReading | null {
    const end = this.opts.start + this.opts.durationMs;
    for (;;) {
      if (this.slot >= this.slots) return null;
      if (this.idx === 0) this.advanceLoads();
      const run = this.runs[this.idx];
      const slot = this.slot;
      if (++this.idx === this.runs.length) {
        this.idx = 0;
        this.slot++;
      }
      const ts = this.tsOf(slot, run);
      const value = this.valueOf(run, slot, ts);
      if (value === null || ts >= end) continue;
      return { sensor: run.info.id, ts, value };
    }
  }

  /** The readings in time order (the simulator is consumed by iterating). */
  [Symbol.iterator](): Iterator<SimReading> {
    return {
      next: (): IteratorResult<SimReading> => {
        const reading = this.next();
        return reading === null ? { done: true, value: undefined } : { done: false, value: reading };
      },
    };
  }

  private advanceLoads(): void {
    for (const machine of this.machines)
      machine.load =
        machine.load * machine.keep + Math.sqrt(1 - machine.keep * machine.keep) * machine.rng.normal();
  }

  /** The sensor's reading for this slot, or null during a dropout. */
  private valueOf(run: SensorRun, slot: number, ts: number): number | null {
    const template = run.t;
    run.lagged += (run.machine.load - run.lagged) * run.lagGain;
    // Draw both normals every slot so a fault never shifts the random stream of later readings.
    const noise = run.rng.normal();
    const extra = run.rng.normal();
    while (run.faultPos < run.faults.length && run.faults[run.faultPos].endSlot < slot) run.faultPos++;
    const planned = run.faults[run.faultPos];
    const fault = planned !== undefined && planned.startSlot <= slot ? planned : undefined;
    // A time-of-day fault reads the cycle of another hour; load and noise stay the sensor's own.
    const cycleAt = fault?.kind === 'timeshift' ? ts + fault.shiftMs! : ts;
    const structure = template.daily * this.cycle.at(cycleAt) + template.loadGain * run.lagged;
    let value =
      template.shape === 'lognormal'
        ? template.base * Math.exp(template.noise * noise + structure / template.base)
        : template.base + structure + template.noise * noise;

    if (fault !== undefined) {
      const push = fault.sign * fault.size * run.spread;
      switch (fault.kind) {
        case 'spike':
        case 'step':
          value += push;
          break;
        case 'drift':
          value += (push * (slot - fault.startSlot + 1)) / (fault.endSlot - fault.startSlot + 1);
          break;
        case 'noise':
          value +=
            fault.sign > 0 && template.direction === 'high'
              ? Math.abs(extra) * fault.size * run.spread
              : extra * fault.size * run.spread;
          break;
        case 'stuck':
          return run.last;
        case 'dropout':
          return null;
        case 'timeshift':
          break;
      }
    }
    if (template.shape === 'lognormal' && value < 0) value = 0;
    const rounded = Math.round(value * run.scale) / run.scale;
    run.last = rounded;
    return rounded;
  }
}

/**
 * A config object (for libs/config validateConfig) that suits the scenario at 1-minute readings:
 * a 6 h window so a short data set warms up, a flatline rule for stuck values, and per-sensor
 * entries for one-sided sensors and physical limits. `staleAfter` follows the reading interval:
 * 2.5 intervals (two missed readings and a half), at least 5 minutes, so a simulated dropout
 * (at least 30 minutes and 3 readings long) is silent long enough to be caught inside it.
 */
export function suggestedConfig(scenario: string, intervalMs = 60_000): unknown {
  const def = SCENARIO_DEFS[scenario];
  if (def === undefined) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `unknown scenario "${scenario}"; choose one of ${Object.keys(SCENARIO_DEFS).join(', ')}`,
    );
  }
  const sensors: Record<string, unknown>[] = [];
  for (const machine of def.machines) {
    for (const template of machine.sensors) {
      const entry: Record<string, unknown> = { match: `${def.unitName}-*/${machine.name}/${template.name}` };
      if (template.direction !== 'both') entry.direction = template.direction;
      if (template.min !== null) entry.min = template.min;
      if (template.max !== null) entry.max = template.max;
      if (Object.keys(entry).length > 1) sensors.push(entry);
    }
  }
  const staleAfter = formatDuration(Math.max(Math.ceil((2.5 * intervalMs) / 1000) * 1000, 5 * 60_000));
  return { defaults: { ...def.defaults, staleAfter }, sensors };
}
