/**
 * Invented plant scenarios for the simulator. Sites, equipment names and figures are made up for
 * demonstrations and tests; they describe no real plant.
 *
 * A scenario is a template of one "unit" (a packaging line, a substation) that repeats as more
 * sensors are asked for: line-1, line-2, ... Each machine has a shared load factor, so sensors on
 * the same machine move together (motor current and bearing temperature follow the same load).
 */
import type { Direction } from '../config/settings.js';
import type { FaultKind } from './faults.js';

/** One sensor kind of a machine: unit, level, spread and how it follows the machine's load. */
export interface SensorTemplate {
  name: string;
  unit: string;
  description: string;
  /** Level around which the sensor reads (the median for log-normal sensors). */
  base: number;
  /** White measurement noise, standard deviation (for log-normal sensors: of the log). */
  noise: number;
  /** Amplitude of the daily cycle (ambient temperature, demand). */
  daily: number;
  /** Response to the machine's load factor (which has standard deviation 1). */
  loadGain: number;
  /** First-order lag on the load factor, minutes (0 = follows at once): thermal inertia. */
  loadLagMin: number;
  decimals: number;
  /** Log-normal sensors are one-sided (vibration, particle counts): never below zero, long upper tail. */
  shape: 'normal' | 'lognormal';
  /** Which side is abnormal; faults on one-sided sensors push only that way. */
  direction: Direction;
  /** Physical limits for the suggested config (null: none). */
  min: number | null;
  max: number | null;
}

/** One machine of a unit and its sensors. */
export interface MachineTemplate {
  name: string;
  description: string;
  /** Time constant of the load factor (an Ornstein-Uhlenbeck process), minutes. */
  loadTauMin: number;
  sensors: SensorTemplate[];
}

/** An invented plant: a repeating unit of machines. */
export interface ScenarioDef {
  title: string;
  description: string;
  /** Name of the repeating unit: "line" gives line-1, line-2, ... */
  unitName: string;
  /** Units in the default set. */
  defaultUnits: number;
  /** Hour of day (UTC) when the daily cycle peaks (the cosine cycle; unused with `dailyCurve`). */
  dailyPeakHour: number;
  /**
   * A daily cycle of another shape: 24 values from -1 to 1, one per local hour (at hh:00; linear
   * in between), in `timeZone`. Without it the cycle is a cosine peaking at `dailyPeakHour` UTC.
   */
  dailyCurve?: readonly number[];
  /** IANA time zone of the plant's local time, which `dailyCurve` follows (default UTC). */
  timeZone?: string;
  /**
   * Fault sizes in spreads within one hour of the day (noise and load only) instead of over the
   * whole day: with a strong daily cycle, an upset is big against the hour, not against the day.
   */
  faultsAgainstHour?: boolean;
  /** Kinds planned beyond the common ones (timeshift on sensors with a strong daily cycle). */
  extraFaultKinds?: readonly FaultKind[];
  /** No faults before this much data: the engine needs a warm baseline first. */
  warmupMs: number;
  machines: MachineTemplate[];
  /** Settings the suggested config uses for every sensor. */
  defaults: Record<string, unknown>;
}

type SensorSketch = Partial<SensorTemplate> &
  Pick<SensorTemplate, 'name' | 'unit' | 'description' | 'base' | 'noise'>;
const sensor = (s: SensorSketch): SensorTemplate => ({
  daily: 0,
  loadGain: 0,
  loadLagMin: 0,
  decimals: 2,
  shape: 'normal',
  direction: 'both',
  min: null,
  max: null,
  ...s,
});

const HOUR = 3_600_000;

/** Detection settings that suit 1-minute readings (flatlineAfter and minSamples count readings). */
const MINUTE_DEFAULTS = {
  window: '6h',
  buckets: 12,
  minSamples: 100,
  fenceK: 3,
  outerK: 6,
  zLimit: 5,
  zCritical: 8,
  trigger: 'either',
  raiseAfter: 1,
  raiseWindow: 1,
  clearAfter: 3,
  flatlineAfter: 10,
};

const BREWERY: ScenarioDef = {
  title: 'Saltmarsh Quay brewery (invented): packaging lines',
  description:
    'Each packaging line has a flash pasteuriser, a can filler, a glycol chiller and an air compressor. ' +
    'Motor current and bearing temperature share the filler load; chiller readings follow the afternoon warmth.',
  unitName: 'line',
  defaultUnits: 2,
  dailyPeakHour: 15,
  warmupMs: 6 * HOUR,
  defaults: MINUTE_DEFAULTS,
  machines: [
    {
      name: 'pasteuriser',
      description: 'flash pasteuriser',
      loadTauMin: 40,
      sensors: [
        sensor({
          name: 'outlet-temp',
          unit: 'degC',
          description: 'product temperature at the pasteuriser outlet',
          base: 72,
          noise: 0.15,
          daily: 0.1,
          loadGain: 0.1,
          min: 0,
          max: 100,
        }),
        sensor({
          name: 'holding-temp',
          unit: 'degC',
          description: 'temperature in the holding tube',
          base: 71.4,
          noise: 0.12,
          daily: 0.1,
          loadGain: 0.08,
          loadLagMin: 5,
          min: 0,
          max: 100,
        }),
        sensor({
          name: 'product-flow',
          unit: 'm3/h',
          description: 'product flow through the pasteuriser',
          base: 30,
          noise: 0.4,
          loadGain: 0.9,
          decimals: 2,
          min: 0,
        }),
      ],
    },
    {
      name: 'filler',
      description: 'rotary can filler',
      loadTauMin: 30,
      sensors: [
        sensor({
          name: 'bowl-pressure',
          unit: 'bar',
          description: 'counter-pressure in the filler bowl',
          base: 3.2,
          noise: 0.03,
          loadGain: 0.01,
          decimals: 3,
          min: 0,
          max: 6,
        }),
        sensor({
          name: 'motor-current',
          unit: 'A',
          description: 'main drive motor current',
          base: 42,
          noise: 0.6,
          loadGain: 2.0,
          min: 0,
        }),
        sensor({
          name: 'bearing-temp',
          unit: 'degC',
          description: 'main drive bearing temperature',
          base: 48,
          noise: 0.25,
          daily: 0.5,
          loadGain: 1.2,
          loadLagMin: 20,
          min: -20,
          max: 120,
        }),
        sensor({
          name: 'vibration',
          unit: 'mm/s',
          description: 'drive vibration velocity (RMS)',
          base: 2.4,
          noise: 0.08,
          loadGain: 0.04,
          shape: 'lognormal',
          direction: 'high',
          min: 0,
        }),
      ],
    },
    {
      name: 'chiller',
      description: 'glycol chiller',
      loadTauMin: 60,
      sensors: [
        sensor({
          name: 'glycol-supply-temp',
          unit: 'degC',
          description: 'glycol supply temperature',
          base: -4,
          noise: 0.08,
          daily: 0.15,
          loadGain: 0.06,
          loadLagMin: 10,
          min: -20,
          max: 15,
        }),
        sensor({
          name: 'compressor-current',
          unit: 'A',
          description: 'refrigeration compressor current',
          base: 85,
          noise: 1.0,
          daily: 2,
          loadGain: 2.5,
          min: 0,
        }),
        sensor({
          name: 'suction-pressure',
          unit: 'bar',
          description: 'compressor suction pressure',
          base: 2.1,
          noise: 0.03,
          loadGain: 0.03,
          decimals: 3,
          min: 0,
        }),
      ],
    },
    {
      name: 'air',
      description: 'instrument air compressor',
      loadTauMin: 20,
      sensors: [
        sensor({
          name: 'discharge-pressure',
          unit: 'bar',
          description: 'air receiver pressure',
          base: 7,
          noise: 0.04,
          loadGain: 0.03,
          decimals: 3,
          min: 0,
          max: 10,
        }),
        sensor({
          name: 'dew-point',
          unit: 'degC',
          description: 'pressure dew point after the dryer (high is bad)',
          base: 3,
          noise: 0.2,
          daily: 0.3,
          direction: 'high',
        }),
      ],
    },
  ],
};

const HEATING: ScenarioDef = {
  title: 'Larchfield district heating (invented): substations',
  description:
    'Each substation passes heat from the primary network to a housing block through a plate exchanger. ' +
    'Heat demand follows the day and drives flow, pump current and return temperatures together.',
  unitName: 'substation',
  defaultUnits: 3,
  dailyPeakHour: 7,
  warmupMs: 6 * HOUR,
  defaults: MINUTE_DEFAULTS,
  machines: [
    {
      name: 'primary',
      description: 'primary side of the plate exchanger',
      loadTauMin: 90,
      sensors: [
        sensor({
          name: 'supply-temp',
          unit: 'degC',
          description: 'primary supply temperature',
          base: 92,
          noise: 0.3,
          daily: 1.0,
          loadGain: 0.3,
          min: 0,
          max: 130,
        }),
        sensor({
          name: 'return-temp',
          unit: 'degC',
          description: 'primary return temperature',
          base: 52,
          noise: 0.3,
          daily: -0.8,
          loadGain: 0.8,
          loadLagMin: 15,
          min: 0,
          max: 130,
        }),
        sensor({
          name: 'flow',
          unit: 'm3/h',
          description: 'primary flow',
          base: 11,
          noise: 0.15,
          daily: 0.6,
          loadGain: 0.5,
          min: 0,
        }),
        sensor({
          name: 'diff-pressure',
          unit: 'bar',
          description: 'differential pressure across the substation',
          base: 1.1,
          noise: 0.02,
          loadGain: 0.02,
          decimals: 3,
          min: 0,
        }),
      ],
    },
    {
      name: 'secondary',
      description: 'secondary (building) circuit',
      loadTauMin: 60,
      sensors: [
        sensor({
          name: 'supply-temp',
          unit: 'degC',
          description: 'secondary supply temperature',
          base: 65,
          noise: 0.2,
          daily: 0.4,
          loadGain: 0.15,
          min: 0,
          max: 100,
        }),
        sensor({
          name: 'return-temp',
          unit: 'degC',
          description: 'secondary return temperature',
          base: 41,
          noise: 0.25,
          daily: -0.6,
          loadGain: 0.5,
          loadLagMin: 15,
          min: 0,
          max: 100,
        }),
        sensor({
          name: 'pump-current',
          unit: 'A',
          description: 'circulation pump current',
          base: 5.8,
          noise: 0.08,
          daily: 0.2,
          loadGain: 0.25,
          min: 0,
        }),
        sensor({
          name: 'pump-bearing-temp',
          unit: 'degC',
          description: 'circulation pump bearing temperature',
          base: 38,
          noise: 0.2,
          daily: 0.3,
          loadGain: 0.6,
          loadLagMin: 25,
          min: -20,
          max: 110,
        }),
      ],
    },
  ],
};

/**
 * Drinking-water demand by local hour (-1 lowest, 1 highest): a night minimum around 03:00, a
 * morning peak, a midday plateau and an evening peak. Invented, of the usual shape.
 */
const DEMAND_CURVE: readonly number[] = [
  -0.7, -0.85, -0.95, -1, -0.95, -0.6, 0.1, 0.8, 1, 0.8, 0.5, 0.4, 0.45, 0.4, 0.3, 0.25, 0.3, 0.5, 0.75, 0.85,
  0.7, 0.4, 0, -0.4,
];

/**
 * Detection settings for a signal with a strong daily cycle at 1-minute readings: a 24 h window
 * (a shorter one chases the morning rise and flags it every day) and a daily profile in the
 * plant's time zone.
 */
const DAILY_DEFAULTS = {
  ...MINUTE_DEFAULTS,
  window: '24h',
  buckets: 12,
  profile: 'daily',
  timeZone: 'Europe/Berlin',
  profileDays: 7,
};

const WATER: ScenarioDef = {
  title: 'Brackenford water supply (invented): supply zones',
  description:
    'Each supply zone takes treated water through a metered inlet, a booster pump station and a quality ' +
    'panel. Demand follows the day strongly (night minimum, morning and evening peaks, local time ' +
    'Europe/Berlin); flow, pump current and pressure follow it. Plants time-of-day faults: the level ' +
    'of another hour (the daytime flow at night).',
  unitName: 'zone',
  defaultUnits: 2,
  dailyPeakHour: 8,
  dailyCurve: DEMAND_CURVE,
  timeZone: 'Europe/Berlin',
  faultsAgainstHour: true,
  extraFaultKinds: ['timeshift'],
  // The daily profile judges a local hour from its third day of history (PROFILE_WARM_DAYS).
  warmupMs: 4 * 24 * HOUR,
  defaults: DAILY_DEFAULTS,
  machines: [
    {
      name: 'inlet',
      description: 'metered zone inlet',
      loadTauMin: 120,
      sensors: [
        sensor({
          name: 'flow',
          unit: 'm3/h',
          description: 'zone inlet flow',
          base: 180,
          noise: 3,
          daily: 90,
          loadGain: 6,
          decimals: 1,
          min: 0,
        }),
        sensor({
          name: 'pressure',
          unit: 'bar',
          description: 'inlet pressure (falls as demand rises)',
          base: 4.2,
          noise: 0.03,
          daily: -0.5,
          loadGain: 0.04,
          decimals: 3,
          min: 0,
          max: 10,
        }),
      ],
    },
    {
      name: 'booster',
      description: 'booster pump station',
      loadTauMin: 60,
      sensors: [
        sensor({
          name: 'pump-current',
          unit: 'A',
          description: 'duty pump motor current',
          base: 55,
          noise: 0.6,
          daily: 18,
          loadGain: 1.5,
          min: 0,
        }),
        sensor({
          name: 'motor-temp',
          unit: 'degC',
          description: 'duty pump motor winding temperature',
          base: 58,
          noise: 0.3,
          daily: 6,
          loadGain: 0.8,
          loadLagMin: 30,
          min: -20,
          max: 140,
        }),
        sensor({
          name: 'vibration',
          unit: 'mm/s',
          description: 'duty pump vibration velocity (RMS)',
          base: 1.8,
          noise: 0.06,
          loadGain: 0.03,
          shape: 'lognormal',
          direction: 'high',
          min: 0,
        }),
      ],
    },
    {
      name: 'quality',
      description: 'water quality panel',
      loadTauMin: 240,
      sensors: [
        sensor({
          name: 'chlorine',
          unit: 'mg/l',
          description: 'free chlorine residual',
          base: 0.45,
          noise: 0.015,
          daily: 0.03,
          loadGain: 0.01,
          decimals: 3,
          min: 0,
        }),
        sensor({
          name: 'turbidity',
          unit: 'NTU',
          description: 'turbidity (high is bad)',
          base: 0.12,
          noise: 0.08,
          shape: 'lognormal',
          direction: 'high',
          decimals: 3,
          min: 0,
        }),
      ],
    },
  ],
};

/** Every scenario, by name. */
export const SCENARIO_DEFS: Record<string, ScenarioDef> = {
  'harbour-brewery': BREWERY,
  'district-heat': HEATING,
  'water-supply': WATER,
};

/** The scenario used when none is named. */
export const DEFAULT_SCENARIO = 'harbour-brewery';

/** How many sensors one unit of the scenario has. */
export function sensorsPerUnit(def: ScenarioDef): number {
  return def.machines.reduce((n, m) => n + m.sensors.length, 0);
}

/**
 * Typical spread of a sensor's normal readings (noise, load and daily cycle together); fault
 * sizes are multiples of it so a fault means the same thing on a thermometer and an ammeter.
 * `withinHour` leaves the daily cycle out: the spread at one time of day.
 */
export function typicalSpread(template: SensorTemplate, withinHour = false): number {
  const lagShrink = template.loadLagMin > 0 ? 0.6 : 1;
  const load = template.loadGain * lagShrink;
  const daily = withinHour ? 0 : (template.daily * template.daily) / 2;
  const spread = Math.sqrt(template.noise * template.noise + load * load + daily);
  return template.shape === 'lognormal' ? template.base * spread : spread;
}

/**
 * A sensor whose daily cycle is strong enough for a time-of-day fault to show: its daily
 * amplitude is at least 3 spreads of one hour (a margin chosen here, so the shifted level stands
 * out of the hour's normal readings) and it is two-sided (a one-sided sensor's faults only push its bad way).
 */
export function hasStrongDailyCycle(template: SensorTemplate): boolean {
  return template.direction === 'both' && Math.abs(template.daily) >= 3 * typicalSpread(template, true);
}
