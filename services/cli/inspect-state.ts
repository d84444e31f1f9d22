/**
 * Reading the monitor's checkpoints back out of Redis for `streamfence inspect` and for tests:
 * every partition state hash under a prefix (optionally one group and topic), decoded with the
 * engine so the baseline printed is the one the monitor judges with. On a Redis Cluster each
 * primary holds its own slots' keys and SCAN walks one node only, so every primary is scanned.
 */
import { isClusterClient, type RedisClient } from '../connect/index.js';
import { Engine } from '../../libs/engine/engine.js';
import { fencesOf } from '../../libs/engine/judge.js';
import { defaultConfig, validateConfig, type EngineConfig } from '../../libs/config/config.js';
import type { SensorState } from '../../libs/engine/sensor-state.js';
import { configKey, parseStateKey, stateKeyPattern } from '../redis/keys.js';

export interface StoredSensor {
  group: string;
  topic: string;
  partition: number;
  state: SensorState;
  engine: Engine;
}

const iso = (ts: number): string => new Date(ts).toISOString();

/** The engine config a group's monitor stored, or null when none was stored. */
export async function storedConfig(
  redis: RedisClient,
  prefix: string,
  group: string,
  topic: string,
): Promise<EngineConfig | null> {
  const raw = await redis.get(configKey(prefix, group, topic));
  if (raw === null) return null;
  return validateConfig(JSON.parse(raw), `config stored in Redis for ${group}/${topic}`);
}

/** Every stored sensor (or only `only`), decoded. `config` overrides the stored config. */
export async function* storedSensors(
  redis: RedisClient,
  prefix: string,
  opts: { group?: string; topic?: string; only?: Set<string>; config?: EngineConfig } = {},
): AsyncGenerator<StoredSensor> {
  const engines = new Map<string, Engine>();
  const engineFor = async (group: string, topic: string): Promise<Engine> => {
    const gt = `${group}\u0000${topic}`;
    let engine = engines.get(gt);
    if (engine === undefined) {
      const cfg = opts.config ?? (await storedConfig(redis, prefix, group, topic)) ?? defaultConfig();
      engine = new Engine(cfg);
      engines.set(gt, engine);
    }
    return engine;
  };
  for await (const key of stateKeys(redis, stateKeyPattern(prefix, opts.group, opts.topic))) {
    const where = parseStateKey(key, prefix);
    if (where === null) continue;
    const engine = await engineFor(where.group, where.topic);
    const fields = opts.only ? [...opts.only] : null;
    const pairs: [string, Buffer | null][] = [];
    if (fields) {
      const vals = await redis.hmgetBuffer(key, ...fields);
      fields.forEach((f, i) => pairs.push([f, vals[i]]));
    } else {
      const all = await redis.hgetallBuffer(key);
      for (const [f, v] of Object.entries(all)) pairs.push([f, v]);
    }
    pairs.sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0));
    for (const [, bytes] of pairs) {
      if (bytes === null) continue;
      const state = engine.restore(bytes);
      engine.forget(state.sensor);
      yield { ...where, state, engine };
    }
  }
}

/**
 * Every key matching the pattern, on one server or on every primary of a cluster (each SCAN
 * batch sorted, as before: the order within a node follows the batches).
 */
async function* stateKeys(redis: RedisClient, pattern: string): AsyncGenerator<string> {
  const servers = isClusterClient(redis) ? redis.nodes('master') : [redis];
  for (const server of servers) {
    let cursor = '0';
    do {
      const [next, keys] = await server.scan(cursor, 'MATCH', pattern, 'COUNT', 200);
      cursor = next;
      yield* keys.sort();
    } while (cursor !== '0');
  }
}

/** The JSON line `inspect` prints for one sensor. */
export function describeSensor(s: StoredSensor): Record<string, unknown> {
  const st = s.state;
  const b = st.window.baseline();
  const f = b === null ? null : fencesOf(b, st.settings);
  const a = st.life.active;
  return {
    sensor: st.sensor,
    seen: st.seen,
    baseline:
      b === null
        ? null
        : {
            q1: b.q1,
            median: b.median,
            q3: b.q3,
            iqr: b.iqr,
            fences: {
              lower: f!.lower,
              upper: f!.upper,
              lowerOuter: f!.lowerOuter,
              upperOuter: f!.upperOuter,
            },
            mean: b.mean,
            stdDev: b.stdDev,
            count: b.count,
            from: iso(b.from),
            to: iso(b.to),
          },
    activeAlert:
      a === null
        ? null
        : {
            id: a.id,
            severity: a.severity,
            reasons: [...a.reasons],
            since: iso(a.raisedTs),
            flaggedReadings: a.flaggedReadings,
          },
    newestReading: Number.isFinite(st.window.newestTs) && st.seen > 0 ? iso(st.window.newestTs) : null,
    partition: s.partition,
    group: s.group,
    topic: s.topic,
  };
}
