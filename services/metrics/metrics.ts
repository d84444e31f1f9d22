/**
 * Every Prometheus metric streamfence exposes, defined once so the live monitor and the demo serve
 * the same names. Each call builds its own Registry (tests and the demo can run several side by
 * side). No metric ever carries a per-sensor label: thousands of sensors would explode the series.
 */
import { Counter, Gauge, Histogram, Registry, collectDefaultMetrics } from 'prom-client';

export interface Metrics {
  registry: Registry;
  /** outcome = accepted | rejected */
  readings: Counter<'outcome'>;
  /** reason = one of the reading reject reasons (REJECT_REASONS) */
  rejected: Counter<'reason'>;
  /** state = raised | updated | cleared, severity = warning | critical */
  alerts: Counter<'state' | 'severity'>;
  activeAlerts: Gauge;
  sensorsTracked: Gauge;
  checkpointDuration: Histogram;
  /** processing wall time minus the reading's event time */
  eventDelay: Histogram;
  /** messages between the last processed offset and the partition's high watermark */
  partitionLag: Gauge<'partition'>;
  /** dependency = kafka | redis: retries after a failed call to that dependency */
  backoff: Counter<'dependency'>;
  checkpoints: Counter<'result'>;
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

export function createMetrics(opts: { defaultMetrics?: boolean } = {}): Metrics {
  const registry = new Registry();
  if (opts.defaultMetrics !== false) collectDefaultMetrics({ register: registry });
  const r = [registry];
  return {
    registry,
    readings: new Counter({
      name: 'streamfence_readings_total',
      help: 'Readings taken off the input, by outcome (accepted by the engine, or rejected).',
      labelNames: ['outcome'],
      registers: r,
    }),
    rejected: new Counter({
      name: 'streamfence_rejected_total',
      help: 'Rejected readings by reason (malformed, out of range, late, ...).',
      labelNames: ['reason'],
      registers: r,
    }),
    alerts: new Counter({
      name: 'streamfence_alerts_total',
      help: 'Alert events emitted, by lifecycle state and severity.',
      labelNames: ['state', 'severity'],
      registers: r,
    }),
    activeAlerts: new Gauge({
      name: 'streamfence_active_alerts',
      help: 'Sensors with a raised (not yet cleared) alert.',
      registers: r,
    }),
    sensorsTracked: new Gauge({
      name: 'streamfence_sensors_tracked',
      help: 'Sensors whose state is held in memory.',
      registers: r,
    }),
    checkpointDuration: new Histogram({
      name: 'streamfence_checkpoint_duration_seconds',
      help: 'Time to write one partition checkpoint (dirty sensor states plus offset) to Redis.',
      buckets: [0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
      registers: r,
    }),
    eventDelay: new Histogram({
      name: 'streamfence_event_delay_seconds',
      help: 'Processing time minus reading event time (how far behind real time the readings are judged).',
      buckets: [0.01, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 300, 900, 3600, 86400],
      registers: r,
    }),
    partitionLag: new Gauge({
      name: 'streamfence_partition_lag',
      help: 'Messages behind the high watermark, per input partition.',
      labelNames: ['partition'],
      registers: r,
    }),
    backoff: new Counter({
      name: 'streamfence_backoff_total',
      help: 'Retries after a dependency failed or timed out, by dependency.',
      labelNames: ['dependency'],
      registers: r,
    }),
    checkpoints: new Counter({
      name: 'streamfence_checkpoints_total',
      help: 'Partition checkpoints, by result (written; fenced: the partition now belongs to another monitor; owner_gone: Redis lost the partition keys, state rewritten in full).',
      labelNames: ['result'],
      registers: r,
    }),
    assignedPartitions: new Gauge({
      name: 'streamfence_assigned_partitions',
      help: 'Input partitions this monitor currently owns.',
      registers: r,
    }),
    sensorLimit: new Gauge({
      name: 'streamfence_sensor_limit',
      help: 'Most sensors this process holds state for (--max-sensors); readings of new sensors beyond it are rejected.',
      registers: r,
    }),
    sensorLimitUsed: new Gauge({
      name: 'streamfence_sensor_limit_used_ratio',
      help: 'Sensors held divided by the sensor limit (1 = new sensors are rejected with reason sensor_limit).',
      registers: r,
    }),
    sensorsEvicted: new Counter({
      name: 'streamfence_sensors_evicted_total',
      help: 'Sensors evicted from memory and Redis after more than their window without a reading.',
      registers: r,
    }),
    ready: new Gauge({
      name: 'streamfence_ready',
      help: '1 while the monitor is ready (joined its consumer group and Redis answers), else 0.',
      registers: r,
    }),
  };
}
