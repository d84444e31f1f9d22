/**
 * The live monitor's Prometheus metrics (`run`), and the engine metrics and process metrics every
 * command that serves /metrics shares: the demo registers the same engine metrics (same names,
 * labels and types) and the board the same process metrics. Board metrics are in board-metrics.ts.
 * Each call builds its own Registry (tests can run several side by side). No metric ever carries a
 * per-sensor label: thousands of sensors would explode the series. The README's metrics table
 * lists every name with its type, checked by test/unit/metrics-table.test.ts.
 */
import { Counter, Gauge, Histogram, Registry, collectDefaultMetrics } from 'prom-client';
import type { ProcessOutcome } from '../../libs/engine/engine.js';

/**
 * Node's process metrics (prom-client's default collectors) under their standard names
 * (`process_*`, `nodejs_*`, no prefix), the same in every command.
 */
export function collectProcessMetrics(registry: Registry): void {
  collectDefaultMetrics({ register: registry });
}

/** `streamfence_backoff_total`, the same in every long-running command (`run`, `board`). */
export function createBackoffCounter(registry: Registry): Counter<'dependency' | 'cause'> {
  return new Counter({
    name: 'streamfence_backoff_total',
    help: 'Retries after a Kafka or Redis call failed, by dependency and cause (one per logged retry line).',
    labelNames: ['dependency', 'cause'],
    registers: [registry],
  });
}

/** What an Engine's readings and alerts are counted as, wherever the engine runs (run, demo). */
export interface EngineMetrics {
  /** outcome = accepted | rejected */
  readings: Counter<'outcome'>;
  /** reason = one of the reading reject reasons (REJECT_REASONS) */
  rejected: Counter<'reason'>;
  /** quality = good | uncertain | bad: accepted readings by quality (only good ones are judged) */
  readingQuality: Counter<'quality'>;
  /** state = raised | updated | cleared, severity = warning | critical */
  alerts: Counter<'state' | 'severity'>;
  activeAlerts: Gauge;
  sensorsTracked: Gauge;
}

/** The monitor's metrics: the engine metrics plus checkpoints, lag, partitions and limits. */
export interface Metrics extends EngineMetrics {
  registry: Registry;
  checkpointDuration: Histogram;
  /** processing wall time minus the reading's event time */
  eventDelay: Histogram;
  /** messages between the last processed offset and the partition's high watermark */
  partitionLag: Gauge<'partition'>;
  /** wall-clock seconds since the last message of each assigned input partition (since assignment if none) */
  inputIdle: Gauge<'partition'>;
  /**
   * dependency = kafka | redis, cause = one of OUTAGE_CAUSES (connection, timeout, auth, tls, acl,
   * other): one per retry, as logged
   */
  backoff: Counter<'dependency' | 'cause'>;
  checkpoints: Counter<'result'>;
  /**
   * partition states found lost and rebuilt, by cause: keys_lost_running (lost under a running monitor,
   * memory state rewritten)
   */
  stateRebuilds: Counter<'cause'>;
  /** readings re-read from the input topic to rebuild baselines (keys_lost, warm_start); never judged aloud */
  rebuildReadings: Counter;
  /** input partitions re-reading history right now (judging resumes when it reaches 0) */
  rebuildingPartitions: Gauge;
  /** per partition: seconds of the wanted history the last rebuild could not find (retention) */
  rebuildHistoryMissing: Gauge<'partition'>;
  /** seconds the input topic's retention.ms falls short of the history a rebuild needs (0 = enough) */
  retentionShortfall: Gauge;
  assignedPartitions: Gauge;
  /** the sensor limit (--max-sensors) */
  sensorLimit: Gauge;
  /** sensors held / the limit: 1 means new sensors are being rejected */
  sensorLimitUsed: Gauge;
  /** sensors evicted after a window without readings */
  sensorsEvicted: Counter;
  /** 1 while /readyz answers 200 (joined the group, Redis answers, not stopping), else 0 */
  ready: Gauge;
}

/** The engine metrics, registered on `registry`. */
export function createEngineMetrics(registry: Registry): EngineMetrics {
  const registers = [registry];
  return {
    readings: new Counter({
      name: 'streamfence_readings_total',
      help: 'Readings taken off the input, by outcome (accepted by the engine, or rejected).',
      labelNames: ['outcome'],
      registers,
    }),
    rejected: new Counter({
      name: 'streamfence_rejected_total',
      help: 'Rejected readings by reason (malformed, out of range, late, ...).',
      labelNames: ['reason'],
      registers,
    }),
    readingQuality: new Counter({
      name: 'streamfence_reading_quality_total',
      help: 'Accepted readings by quality (good, uncertain, bad); only good readings are judged and learned.',
      labelNames: ['quality'],
      registers,
    }),
    alerts: new Counter({
      name: 'streamfence_alerts_total',
      help: 'Alert events emitted, by lifecycle state and severity.',
      labelNames: ['state', 'severity'],
      registers,
    }),
    activeAlerts: new Gauge({
      name: 'streamfence_active_alerts',
      help: 'Sensors with a raised (not yet cleared) alert.',
      registers,
    }),
    sensorsTracked: new Gauge({
      name: 'streamfence_sensors_tracked',
      help: 'Sensors whose state is held in memory.',
      registers,
    }),
  };
}

/**
 * Count one `Engine.process` outcome as the monitor counts it: the reading by outcome, a refusal
 * by reason, every alert event by state and severity. For engines run outside the monitor (the
 * monitor counts per batch).
 */
export function countOutcome(metrics: EngineMetrics, outcome: ProcessOutcome): void {
  if (!outcome.accepted) {
    metrics.readings.inc({ outcome: 'rejected' });
    metrics.rejected.inc({ reason: outcome.reason });
    return;
  }
  metrics.readings.inc({ outcome: 'accepted' });
  metrics.readingQuality.inc({ quality: outcome.quality });
  for (const event of outcome.events) metrics.alerts.inc({ state: event.state, severity: event.severity });
}

/** The live monitor's registry; `defaultMetrics: false` leaves out the process metrics (benches). */
export function createMetrics(opts: { defaultMetrics?: boolean } = {}): Metrics {
  const registry = new Registry();
  if (opts.defaultMetrics !== false) collectProcessMetrics(registry);
  const registers = [registry];
  // Spread in this order: the registry lists the metrics in the order they were made.
  return {
    registry,
    ...createEngineMetrics(registry),
    ...partitionMetrics(registers),
    backoff: createBackoffCounter(registry),
    ...checkpointMetrics(registers),
    ...capacityMetrics(registers),
  };
}

/** Per input partition: checkpoint time, how far behind the readings are, idle time and lag. */
function partitionMetrics(registers: Registry[]) {
  return {
    checkpointDuration: new Histogram({
      name: 'streamfence_checkpoint_duration_seconds',
      help: 'Time to write one partition checkpoint (dirty sensor states plus offset) to Redis.',
      buckets: [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
      registers,
    }),
    eventDelay: new Histogram({
      name: 'streamfence_event_delay_seconds',
      help: 'Processing time minus reading event time (how far behind real time the readings are judged).',
      buckets: [0.01, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 300, 900, 3600, 86400],
      registers,
    }),
    inputIdle: new Gauge({
      name: 'streamfence_input_idle_seconds',
      help: 'Wall-clock seconds since the last message of each assigned input partition (since it was assigned, if none): a whole partition gone silent.',
      labelNames: ['partition'],
      registers,
    }),
    partitionLag: new Gauge({
      name: 'streamfence_partition_lag',
      help: 'Messages behind the high watermark, per input partition.',
      labelNames: ['partition'],
      registers,
    }),
  };
}

/** Checkpoint results, state rebuilds and the history they need. */
function checkpointMetrics(registers: Registry[]) {
  return {
    checkpoints: new Counter({
      name: 'streamfence_checkpoints_total',
      help: 'Partition checkpoints, by result (written; fenced: the partition now belongs to another monitor; owner_gone: Redis lost the partition keys; rolled_back: Redis went back to an older checkpoint; both rewrite the state in full).',
      labelNames: ['result'],
      registers,
    }),
    stateRebuilds: new Counter({
      name: 'streamfence_state_rebuilds_total',
      help: 'Partition states found lost and rebuilt, by cause (keys_lost_running: Redis lost the keys under a running monitor; checkpoint_rolled_back: Redis went back to an older checkpoint; the memory state is written in full again; keys_lost: gone while no monitor held them, baselines rebuilt from the input topic; warm_start: a first deployment learning from the history).',
      labelNames: ['cause'],
      registers,
    }),
    rebuildReadings: new Counter({
      name: 'streamfence_state_rebuild_readings_total',
      help: 'Readings re-read from the input topic to rebuild baselines (state loss or warm start); they publish no alert event.',
      registers,
    }),
    rebuildingPartitions: new Gauge({
      name: 'streamfence_partitions_rebuilding',
      help: 'Input partitions re-reading history to rebuild their baselines; judging them resumes when done.',
      registers,
    }),
    rebuildHistoryMissing: new Gauge({
      name: 'streamfence_state_rebuild_missing_seconds',
      help: 'Per input partition: seconds of the history the last rebuild wanted that Kafka no longer held (retention shorter than window + one bucket).',
      labelNames: ['partition'],
      registers,
    }),
    retentionShortfall: new Gauge({
      name: 'streamfence_input_retention_shortfall_seconds',
      help: "Seconds by which the input topic's retention.ms is shorter than the history a state rebuild needs (0 when long enough or not readable).",
      registers,
    }),
  };
}

/** What this monitor holds: partitions, sensors against the limit, evictions, readiness. */
function capacityMetrics(registers: Registry[]) {
  return {
    assignedPartitions: new Gauge({
      name: 'streamfence_assigned_partitions',
      help: 'Input partitions this monitor currently owns.',
      registers,
    }),
    sensorLimit: new Gauge({
      name: 'streamfence_sensor_limit',
      help: 'Most sensors this process holds state for (--max-sensors); readings of new sensors beyond it are rejected.',
      registers,
    }),
    sensorLimitUsed: new Gauge({
      name: 'streamfence_sensor_limit_used_ratio',
      help: 'Sensors held divided by the sensor limit (1 = new sensors are rejected with reason sensor_limit).',
      registers,
    }),
    sensorsEvicted: new Counter({
      name: 'streamfence_sensors_evicted_total',
      help: 'Sensors evicted from memory and Redis after more than their window without a reading.',
      registers,
    }),
    ready: new Gauge({
      name: 'streamfence_ready',
      help: '1 while the monitor is ready (joined its consumer group and Redis answers), else 0.',
      registers,
    }),
  };
}
